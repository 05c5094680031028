"""Recorded dry signals in, float WAVs out."""

from __future__ import annotations

import os
import struct

import numpy as np
import pytest
import soundfile as sf

from render.dry import load_dry
from render.dry.recorded import load_recorded
from render.errors import InputError
from render.io.atomic import atomic_path
from render.io.wav import float_wav_bytes, write_float_wav

FS = 48000


def sine(f, seconds, fs, amp=0.5):
    t = np.arange(int(seconds * fs)) / fs
    return amp * np.sin(2 * np.pi * f * t)


def test_mono_feeds_both_coils(tmp_path):
    path = tmp_path / "take.wav"
    sf.write(path, sine(440, 0.5, FS), FS, subtype="FLOAT")
    v, warnings = load_recorded(path, sample_rate=FS)
    assert v.shape == (2, FS // 2) and v.dtype == np.float64
    assert np.array_equal(v[0], v[1])
    assert warnings == []


def test_two_channels_feed_coil_a_and_coil_b(tmp_path):
    path = tmp_path / "pair.flac"
    a, b = sine(200, 0.25, FS, 0.3), sine(300, 0.25, FS, 0.2)
    sf.write(path, np.column_stack([a, b]), FS, subtype="PCM_24")
    v, _ = load_recorded(path, sample_rate=FS, velocity_scale=2.0)
    assert np.allclose(v[0], 2 * a, atol=1e-5) and np.allclose(v[1], 2 * b, atol=1e-5)


def test_resampled_to_the_requested_rate(tmp_path):
    path = tmp_path / "cd.wav"
    sf.write(path, sine(1000, 1.0, 44100), 44100, subtype="PCM_16")
    v, _ = load_recorded(path, sample_rate=FS)
    assert abs(v.shape[1] - FS) <= 1
    spec = np.abs(np.fft.rfft(v[0] * np.hanning(v.shape[1])))
    freqs = np.fft.rfftfreq(v.shape[1], 1 / FS)
    assert freqs[np.argmax(spec)] == pytest.approx(1000, abs=1.5)
    assert np.max(np.abs(v[0, 2000:-2000])) == pytest.approx(0.5, rel=0.01)


def test_clipping_is_warned_not_refused(tmp_path):
    path = tmp_path / "hot.wav"
    x = np.clip(sine(100, 0.5, FS, 1.5), -1, 1)
    sf.write(path, x, FS, subtype="PCM_16")
    v, warnings = load_recorded(path, sample_rate=FS)
    assert len(warnings) == 1
    assert "equal samples at full scale (|x| >= 0.999)" in warnings[0] and "probably clipped" in warnings[0]
    assert v.shape == (2, x.size)


@pytest.mark.parametrize("fmt, subtype", [("WAV", "PCM_U8"), ("AIFF", "PCM_S8"), ("WAV", "ULAW"), ("WAV", "ALAW"), ("WAV", "PCM_16")])
def test_clipping_is_found_at_the_top_an_encoding_holds(tmp_path, fmt, subtype):
    # an 8-bit file tops out at +127/128 and G.711 at 8031/8192 (mu-law) or 4032/4096 (A-law) of full scale,
    # below CLIP_LEVEL: the largest code of the file's encoding counts as full scale. The top is what
    # libsndfile (the reference reader) gives back for a written 1.0; 0.1 s of 1.5 × a 100 Hz sine clipped
    # at ±1 has 20 half periods, each with one flat top (closed form)
    from render.io.audio import audio_info

    path = tmp_path / f"hot.{fmt.lower()}"
    sf.write(path, np.array([1.0, -1.0]), FS, format=fmt, subtype=subtype)
    top = float(sf.read(path)[0][0])
    assert audio_info(path).top == (top if top < 0.999 else 1.0)
    sf.write(path, np.clip(sine(100, 0.1, FS, 1.5), -1, 1), FS, format=fmt, subtype=subtype)
    _, warnings = load_recorded(path, sample_rate=FS)
    assert len(warnings) == 1 and "20 flat run(s) of 4+ equal samples at full scale" in warnings[0], warnings
    assert f"(|x| >= {min(0.999, top):.4g})" in warnings[0]


def test_loud_float_file_without_flat_tops_is_not_clipped(tmp_path):
    # A float file may pass 1.0 (1 m/s) without clipping; so may an unclipped full-scale sine.
    path = tmp_path / "loud.wav"
    sf.write(path, np.column_stack([sine(100, 0.5, FS, 3.0), sine(100, 0.5, FS, 1.0)]), FS, subtype="FLOAT")
    v, warnings = load_recorded(path, sample_rate=FS)
    assert warnings == [] and np.abs(v[0]).max() == pytest.approx(3.0, rel=1e-3)


def test_shipped_wav_loads_cleanly():
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "dry_signals" / "last_chord_2s.wav"
    assert path.stat().st_size < 1_000_000
    v, warnings = load_recorded(path, sample_rate=FS)
    assert warnings == [] and v.shape == (2, 2 * FS)


def refused(path, pattern, **kw):
    with pytest.raises(InputError, match=pattern) as info:
        load_recorded(path, sample_rate=FS, **kw)
    assert "\n" not in str(info.value)
    return str(info.value)


def test_nan_is_refused(tmp_path):
    path = tmp_path / "nan.wav"
    x = sine(100, 0.1, FS)
    x[123] = np.nan
    sf.write(path, x, FS, subtype="FLOAT")
    refused(path, r"nan.wav: sample 123 \(channel 1, 0.0026 s\) = nan: every sample must be finite")


def test_infinity_is_refused(tmp_path):
    path = tmp_path / "inf.wav"
    x = np.zeros((100, 2))
    x[7, 1] = np.inf
    sf.write(path, x, FS, subtype="DOUBLE")
    refused(path, r"sample 7 \(channel 2, .*\) = inf: every sample must be finite")


def test_empty_file_is_refused(tmp_path):
    path = tmp_path / "empty.wav"
    sf.write(path, np.zeros((0, 1)), FS, subtype="FLOAT")
    refused(path, r"empty.wav: frames=0: the file holds no audio")


def test_three_channels_are_refused(tmp_path):
    path = tmp_path / "three.wav"
    sf.write(path, np.zeros((100, 3)), FS, subtype="FLOAT")
    refused(path, r"three.wav: channels=3: at most 2 \(mono feeds both coils, two channels feed coil_a and coil_b\)")


def test_a_text_file_named_wav_is_refused(tmp_path):
    path = tmp_path / "notes.wav"
    path.write_text("this is not audio\n")
    refused(path, r"notes.wav: cannot be read as audio \(.+\); convert it to WAV or FLAC")


def test_missing_file_and_bad_scale(tmp_path):
    refused(tmp_path / "nope.wav", r"nope.wav: no such file")
    path = tmp_path / "ok.wav"
    sf.write(path, sine(100, 0.1, FS), FS)
    refused(path, r"velocity_scale=0: must be above 0", velocity_scale=0)
    v, _ = load_recorded(path, sample_rate=FS, velocity_scale=np.float32(2.0))  # a numpy scalar is a number
    assert np.max(np.abs(v)) == pytest.approx(2 * np.max(np.abs(sine(100, 0.1, FS))), rel=1e-6)


def test_dry_velocity_dispatches_on_the_file(tmp_path):
    wav = tmp_path / "v.wav"
    sf.write(wav, sine(100, 0.2, FS), FS, subtype="FLOAT")
    rec = load_dry(wav, sample_rate=FS, positions=(0.04, 0.06), apertures=0.0, seconds=0.3)
    assert rec.velocity.shape == (2, int(0.3 * FS)) and rec.description["kind"] == "recorded"
    toml = tmp_path / "p.toml"
    toml.write_text('seconds = 0.5\n[[note]]\ntime = 0\npitch = "A2"\n')
    syn = load_dry(toml, sample_rate=FS, positions=(0.04, 0.06), apertures=0.0)
    assert syn.velocity.shape == (2, FS // 2) and syn.description["kind"] == "phrase"
    assert not np.array_equal(syn.velocity[0], syn.velocity[1])
    # a recording needs no sensing points (it is the string's velocity already); a phrase does, and says so
    bare = load_dry(wav, sample_rate=FS, seconds=0.3)
    np.testing.assert_array_equal(bare.velocity, rec.velocity)
    with pytest.raises(InputError, match=r"positions=None: .*sensing points"):  # synthesize's own refusal
        load_dry(toml, sample_rate=FS)


# --- writing ----------------------------------------------------------------


def test_float_wav_round_trips_and_has_no_extra_chunks(tmp_path):
    x = np.vstack([sine(440, 0.1, FS, 1.7), sine(220, 0.1, FS, 0.25)])
    path = write_float_wav(tmp_path / "out.wav", x, FS)
    info = sf.info(path)
    assert (info.samplerate, info.channels, info.subtype, info.format) == (FS, 2, "FLOAT", "WAV")
    back, fs = sf.read(path, dtype="float64", always_2d=True)
    assert fs == FS and np.array_equal(back.T, x.astype(np.float32).astype(np.float64))
    blob = path.read_bytes()
    # RIFF WAVE layout (Microsoft/IBM Multimedia Programming Interface and Data
    # Specifications 1.0, 1991; from memory): RIFF, fmt (tag 3 = IEEE float), fact, data.
    assert blob[:4] == b"RIFF" and blob[8:12] == b"WAVE"
    assert struct.unpack("<I", blob[4:8])[0] == len(blob) - 8
    assert blob[12:16] == b"fmt " and struct.unpack("<H", blob[20:22])[0] == 3
    chunks = []
    pos = 12
    while pos < len(blob):
        cid, size = blob[pos : pos + 4], struct.unpack("<I", blob[pos + 4 : pos + 8])[0]
        chunks.append(cid)
        pos += 8 + size + (size % 2)
    assert chunks == [b"fmt ", b"fact", b"data"]


def test_identical_inputs_give_identical_bytes(tmp_path):
    x = sine(330, 0.05, FS)
    a = write_float_wav(tmp_path / "a.wav", x, FS).read_bytes()
    b = write_float_wav(tmp_path / "b.wav", x, FS).read_bytes()
    assert a == b == float_wav_bytes(x, FS)


def test_writer_refuses_to_overwrite_and_leaves_nothing_behind(tmp_path):
    target = tmp_path / "keep.wav"
    target.write_bytes(b"precious")
    with pytest.raises(InputError, match=r"keep.wav: exists; pass --overwrite"):
        write_float_wav(target, np.zeros(10), FS)
    assert target.read_bytes() == b"precious"
    with pytest.raises(ValueError, match="NaN"):
        write_float_wav(target, np.array([0.0, np.nan]), FS, overwrite=True)
    assert target.read_bytes() == b"precious"

    with pytest.raises(InputError, match="could not be written"):
        with atomic_path(target, overwrite=True) as tmp:
            tmp.write_bytes(b"half")
            raise OSError(28, "No space left on device")
    assert target.read_bytes() == b"precious"
    assert sorted(os.listdir(tmp_path)) == ["keep.wav"]
    write_float_wav(target, np.zeros(10), FS, overwrite=True)
    assert sf.info(target).frames == 10
