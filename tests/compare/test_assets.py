"""A clip's assets on the comparison page, each against an outside reference.

- The 16-bit copy is read back by libsndfile (soundfile), which decodes PCM as
  code / 32768 as Web Audio does; its error is at most the rounding and the
  ±1 LSB triangular dither (1.5 LSB).
- The true peak of a sine at a quarter of the sample rate whose samples fall
  45° off its crests: the samples are A/√2 (3.01 dB below the crest) while the
  4x-oversampled peak reaches A, the inter-sample case of ITU-R BS.1770-4,
  Annex 2 (the oversampling filter's ripple keeps it within 0.1 dB, from memory
  of that annex's tolerance).
- The spectrum of white noise: a one-sided power density of 2σ²/fs
  (Parseval's theorem; Welch 1967), within 0.5 dB over the bands.
- The spectrogram's columns span the clip exactly: a tone in its middle third
  lights the middle third of the columns (where the tone is, by construction).
- The PNG is decoded by Pillow to the same pixels.
- The note cache gives the uncached synthesis to the bit, and an edit of one
  note synthesises only that note and the one before it on its string.
"""

from __future__ import annotations

import io
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import soundfile as sf

from render.compare.assets import PCM_FULL_SCALE, decoded, page_copy, pcm16_wav, png_rgb, shade, spectrogram_levels, spectrum_curve

ROOT = Path(__file__).resolve().parents[2]
FS = 48000


def test_the_copy_reads_back_within_its_dither():
    rng = np.random.default_rng(5)
    x = 0.8 * np.sin(2 * np.pi * 441 * np.arange(FS) / FS) * np.exp(-np.arange(FS) / 20000) + 0.01 * rng.standard_normal(FS)
    copy = page_copy(x, sample_rate=FS)
    y, fs = sf.read(io.BytesIO(copy.wav), dtype="float64")
    assert fs == FS and y.shape == x.shape
    assert np.array_equal(y, decoded(copy.wav))  # the page's reading is libsndfile's
    lsb = copy.volts_per_unit / PCM_FULL_SCALE
    assert np.max(np.abs(y * copy.volts_per_unit - x)) <= 1.5 * lsb  # rounding plus ±1 LSB of TPDF dither
    assert np.max(np.abs(y)) < 1.0  # the clip's own peak sits below full scale
    assert copy.wav == page_copy(x, sample_rate=FS).wav  # the same clip, the same bytes


def test_a_long_clip_is_cut_and_says_so():
    x = np.zeros(3 * FS)
    x[::100] = 0.1
    copy = page_copy(x, sample_rate=FS, max_seconds=1.0)
    assert copy.capped and copy.seconds == 1.0 and copy.full_seconds == 3.0
    assert sf.info(io.BytesIO(copy.wav)).frames == FS
    whole = page_copy(x[:FS], sample_rate=FS, max_seconds=1.0)
    assert not whole.capped


def test_silence_copies_as_silence():
    copy = page_copy(np.zeros(FS // 2), sample_rate=FS)
    assert copy.true_peak_db is None and not np.any(decoded(copy.wav))


def test_the_true_peak_finds_the_crest_between_samples():
    a = 0.5  # V
    n = np.arange(FS)
    x = a * np.sin(2 * np.pi * n / 4 + np.pi / 4)  # fs/4, samples 45 degrees off the crests
    assert math.isclose(np.max(np.abs(x)), a / math.sqrt(2), rel_tol=1e-9)
    ramp = np.hanning(2001)[:1000]
    x[:1000] *= ramp  # tapered ends: an abrupt start would ring past the crest (Gibbs), which is not the point here
    x[-1000:] *= ramp[::-1]
    copy = page_copy(x, sample_rate=FS)
    # BS.1770-4 Annex 2: the oversampled peak reaches the crest A, 3.01 dB above the samples
    assert abs(copy.true_peak_db - 20 * math.log10(a)) < 0.1


def test_the_spectrum_of_white_noise_is_flat_at_its_density():
    sigma = 0.1
    x = sigma * np.random.default_rng(8).standard_normal(8 * FS)
    f, db = spectrum_curve(x, sample_rate=FS)
    assert f[0] > 19 and f[-1] < 20001 and np.all(np.diff(f) > 0)
    expected = 10 * math.log10(2 * sigma**2 / FS)  # one-sided density of white noise (Parseval)
    wide = f > 200  # bands holding several Welch bins: the average is steady there
    assert abs(np.mean(db[wide]) - expected) < 0.5
    assert np.max(np.abs(db[wide] - expected)) < 2.0


def test_the_strip_columns_span_the_clip():
    n = 3 * FS
    x = np.zeros(n)
    mid = slice(n // 3, 2 * n // 3)
    x[mid] = np.sin(2 * np.pi * 1000 * np.arange(n // 3) / FS)
    levels = spectrogram_levels(x, sample_rate=FS, columns=90, rows=72)
    assert levels.shape == (72, 90)
    row = int(np.argmin(np.abs(np.geomspace(40, 20000, 72) - 1000)))
    lit = levels[row] > levels[row].max() - 20
    # columns centred inside the tone's third, with half a 2048-sample frame (1.07 columns) of blur at each edge
    assert np.all(lit[32:58]) and not np.any(lit[:28]) and not np.any(lit[62:])


def test_the_png_decodes_to_its_pixels():
    from PIL import Image

    levels = np.linspace(-100, 0, 40 * 30).reshape(30, 40)
    pixels = shade(levels, top_db=0.0)
    png = png_rgb(pixels)
    with Image.open(io.BytesIO(png)) as im:
        assert im.mode == "RGB" and im.size == (40, 30)
        assert np.array_equal(np.asarray(im), pixels)
    assert pixels[0, -1].tolist() != pixels[-1, 0].tolist()  # loud (top right) and quiet (bottom left) differ
    assert png == png_rgb(pixels)


def test_the_wav_header_is_read_by_libsndfile():
    codes = np.array([0, 1, -1, 32767, -32768], dtype=np.int16)
    data, fs = sf.read(io.BytesIO(pcm16_wav(codes, sample_rate=44100)), dtype="int16")
    assert fs == 44100 and np.array_equal(data, codes)
    info = sf.info(io.BytesIO(pcm16_wav(codes, sample_rate=44100)))
    assert info.subtype == "PCM_16" and info.channels == 1


def test_the_note_cache_gives_the_same_bits_and_redoes_only_an_edited_note():
    from render.dry import load_phrase, synthesize
    from render.dry.cached import NoteCache

    phrase = load_phrase(ROOT / "dry_signals" / "chug_riff.toml")
    kw = dict(positions=(0.038, 0.056), apertures=(0.008, 0.008), sample_rate=16000, seed=3)
    cache = NoteCache()
    first = cache.synthesize(phrase, **kw)
    plain = synthesize(phrase, **kw)
    assert np.array_equal(first.velocity, plain.velocity) and first.description == plain.description
    n = len(phrase.notes)
    assert cache.computed == n
    cache.prune()
    # lift the last note on its string by one fret: that note alone is synthesised again
    last = max(range(n), key=lambda i: phrase.notes[i].time)
    note = phrase.notes[last]
    edited = replace(phrase, notes=tuple(replace(x, frequency=x.frequency * 2 ** (1 / 12)) if i == last else x for i, x in enumerate(phrase.notes)))
    again = cache.synthesize(edited, **kw)
    assert np.array_equal(again.velocity, synthesize(edited, **kw).velocity)
    assert cache.computed == 1 and cache.reused == n - 1, (cache.computed, note)
    # a shorter length changes every term's span
    cache.prune()
    short = cache.synthesize(edited, **{**kw, "seconds": 1.0})
    assert np.array_equal(short.velocity, synthesize(edited, **{**kw, "seconds": 1.0}).velocity)
