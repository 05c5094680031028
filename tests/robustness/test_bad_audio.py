"""Bad recorded dry signals through ``render clips --dry FILE``: refused with one
clear line and exit 1, or — for odd but valid files — rendered correctly.
Nothing is written for a refused file."""

from __future__ import annotations

import struct

import numpy as np
import pytest
import soundfile as sf

from render.dry.recorded import MAX_SECONDS, load_recorded
from render.errors import InputError
from render.io.audio import AudioInfo, audio_info
from render.io.wav import float_wav_bytes

from .conftest import DARK, PHRASE, REF, assert_refused, check_outputs, run

FS = 48000


def sine(seconds, rate, *, hz=220.0, level=0.1, channels=1):
    t = np.arange(int(round(seconds * rate))) / rate
    x = level * np.sin(2 * np.pi * hz * t)
    return np.tile(x, (channels, 1)) if channels > 1 else x


def wav(path, x, rate=FS):
    path.write_bytes(float_wav_bytes(x, rate))
    return path


def with_samples(path, samples, rate=FS):
    """A float WAV whose payload is ``samples`` exactly (NaN and Inf included, which the writer refuses)."""
    samples = np.asarray(samples, dtype="<f4")
    head = float_wav_bytes(np.zeros(samples.size), rate)[: -samples.nbytes]
    path.write_bytes(head + samples.tobytes())
    return path


def nothing_written(out):
    """No file at all, not even a temporary one (an empty folder may be left: `render clips` makes it before it reads the dry signal)."""
    assert not out.exists() or list(out.iterdir()) == [], sorted(p.name for p in out.iterdir())


def clips(dry, out, *extra):
    return run("clips", REF, "--dry", dry, "--out", out, "--no-plots", *extra)


def _good(tmp_path):
    return wav(tmp_path / "good.wav", sine(0.25, FS)).read_bytes()


def _fmt_at(data: bytes) -> int:
    return data.index(b"fmt ") + 8  # start of the fmt chunk's body


BAD = {
    # name: (how to make it from a good file's bytes, expected fragment)
    "header-cut.wav": (lambda b: b[:30], "cannot be read as audio ("),
    "data-cut.wav": (lambda b: b[: len(b) // 2], "cut short: its header declares 48000 bytes of audio but the file holds"),
    "fmt-broken.wav": (lambda b: b[:20] + b"\xff\xff" + b[22:], "cannot be read as audio (Error in WAV/W64/RF64 file. Malformed 'fmt ' chunk.)"),
    "rate-1hz.wav": (lambda b: b[: _fmt_at(b) + 4] + struct.pack("<I", 1) + b[_fmt_at(b) + 8 :], "samplerate=1 in its header: expected 1000 to 768000 Hz; the header is probably damaged"),
    "rate-10mhz.wav": (lambda b: b[: _fmt_at(b) + 4] + struct.pack("<I", 10_000_000) + b[_fmt_at(b) + 8 :], "samplerate=10000000 in its header"),
    "not-riff.wav": (lambda b: b"RIFX" + b[4:], "cannot be read as audio ("),
    "empty.wav": (lambda b: b"", "is empty (0 bytes); record or export it again"),
}


@pytest.mark.parametrize("name", sorted(BAD))
def test_damaged_files_are_refused(tmp_path, name):
    make, fragment = BAD[name]
    path = tmp_path / name
    path.write_bytes(make(_good(tmp_path)))
    out = tmp_path / "out"
    line = assert_refused(clips(path, out, "--seconds", 0.2), fragment)
    assert line.startswith(f"Error: {path}: ")
    nothing_written(out)


def damaged_flac(path, how: str, seconds: float = 1.0):
    """A FLAC whose header reads but whose audio stops decoding: cut to half its bytes, or 2000 bytes zeroed in the middle."""
    x = 0.3 * np.random.default_rng(0).standard_normal(int(seconds * FS))
    sf.write(path, x, FS, format="FLAC", subtype="PCM_16")
    b = bytearray(path.read_bytes())
    m = len(b) // 2
    b = b[:m] if how == "cut" else b[:m] + bytes(2000) + b[m + 2000 :]
    path.write_bytes(bytes(b))
    return path


@pytest.mark.parametrize("how", ["cut", "zeroed"])
@pytest.mark.parametrize("streamed", [False, True])
def test_a_damaged_flac_is_refused_in_one_line(tmp_path, monkeypatch, how, streamed):
    # project rule, no outside source (one-line errors): libsndfile's failure past the header, read whole or
    # block by block (a short file takes the streamed path here by lowering the switch), and through the
    # worker processes of a two-design run
    import render.runs.clips as run_clips

    path = damaged_flac(tmp_path / "take.flac", how)
    assert sf.info(path).frames == FS  # the header still reads
    if streamed:
        monkeypatch.setattr(run_clips, "LONG_SECONDS", 0.5)
    out = tmp_path / "out"
    extra = ("--jobs", 2) if streamed else ()
    res = run("clips", REF, DARK, "--dry", path, "--out", out, "--no-plots", *extra)
    line = assert_refused(res, "damaged: its header reads but its audio does not decode (")
    assert line.startswith(f"Error: {path}: ") and line.endswith("; copy or export the file again from the original")
    nothing_written(out)


def test_text_named_wav_is_refused_with_a_hint(tmp_path):
    path = tmp_path / "take1.wav"
    path.write_text('title = "my riff"\n[[note]]\ntime = 0\nstring = 6\nfret = 0\n', encoding="utf-8")
    assert_refused(clips(path, tmp_path / "out", "--seconds", 0.2), "convert it to WAV or FLAC; it holds text, not audio, and reads like a phrase: a phrase file's name ends in .toml")
    nothing_written(tmp_path / "out")
    notes = tmp_path / "notes.wav"  # text that is no phrase: no word of phrases
    notes.write_text("a take from Tuesday\n", encoding="utf-8")
    assert_refused(run("unvoice", notes, REF, "--out", tmp_path / "v.wav"), f"Error: DI={notes}: cannot be read as audio (")
    res = run("unvoice", notes, REF, "--out", tmp_path / "v.wav")
    assert res.stderr.strip().endswith("convert it to WAV or FLAC; it holds text, not audio"), res.stderr


def test_a_design_and_a_phrase_given_in_each_others_place_are_named(tmp_path):
    phrase = PHRASE
    line = assert_refused(run("check", phrase), "this looks like a phrase file (it has a [[note]] table), not a design")
    assert line.endswith("give it as the dry signal (--dry; render.load_phrase from Python), and as the design a file with [coil_a] and [coil_b] tables")
    line = assert_refused(run("dry", REF, "--out", tmp_path / "d.wav"), "this looks like a design file (it has a [coil_a] table), not a phrase")
    assert not (tmp_path / "d.wav").exists()


@pytest.mark.parametrize("value, shown", [(np.nan, "nan"), (np.inf, "inf"), (-np.inf, "-inf")])
def test_nan_and_inf_samples_are_refused_with_their_place(tmp_path, value, shown):
    x = sine(0.25, FS).astype(np.float32)
    x[4800] = value  # 0.1 s in
    path = with_samples(tmp_path / "bad.wav", x)
    assert_refused(clips(path, tmp_path / "out", "--seconds", 0.2), f"sample 4800 (channel 1, 0.1000 s) = {shown}: every sample must be finite")
    nothing_written(tmp_path / "out")


def test_zero_samples_are_refused(tmp_path):
    path = wav(tmp_path / "none.wav", np.zeros(0))
    assert sf.info(path).frames == 0  # a valid header that holds no audio
    assert_refused(clips(path, tmp_path / "out", "--seconds", 0.2), "frames=0: the file holds no audio")


def test_eight_channels_are_refused(tmp_path):
    path = wav(tmp_path / "octo.wav", sine(0.25, FS, channels=8))
    assert_refused(clips(path, tmp_path / "out", "--seconds", 0.2), "channels=8: at most 2 (mono feeds both coils, two channels feed coil_a and coil_b); mix down or split the file")


def test_384_khz_is_resampled_and_renders_like_48_khz(tmp_path):
    hi = wav(tmp_path / "hi.wav", sine(0.3, 384000, hz=1000.0), 384000)
    lo = wav(tmp_path / "lo.wav", sine(0.3, FS, hz=1000.0), FS)
    for path, out in ((hi, tmp_path / "o-hi"), (lo, tmp_path / "o-lo")):
        res = clips(path, out, "--seconds", 0.25, "--volts-full-scale", 1)
        assert res.exit_code == 0, res.output
        assert check_outputs(out, frames=12000) == ["index-clips.js", "index.html", "studio-reference.json", "studio-reference.wav", "summary.md"]
    a, _ = sf.read(tmp_path / "o-hi" / "studio-reference.wav")
    b, _ = sf.read(tmp_path / "o-lo" / "studio-reference.wav")
    # away from the two ends, the resampled recording renders as the native one does: within
    # 0.1 % of the peak (soxr's very-high-quality band is far flatter; common practice, no source)
    mid = slice(2400, 9600)
    assert np.max(np.abs(a[mid] - b[mid])) < 1e-3 * np.max(np.abs(b[mid]))


def test_a_long_recording_is_streamed_in_bounded_memory(tmp_path):
    """121 s at 8 kHz: past the point where clips render block by block."""
    path = tmp_path / "long.wav"
    sf.write(path, sine(121.0, 8000).astype(np.float32), 8000, subtype="FLOAT")
    out = tmp_path / "out"
    res = clips(path, out)
    assert res.exit_code == 0, res.output
    assert "rendered block by block" in res.output
    check_outputs(out, frames=121 * FS)


def test_a_recording_too_long_to_read_at_once(tmp_path):
    """Longer than MAX_SECONDS: read whole it is refused; with a length only that much is read."""
    path = tmp_path / "very-long.wav"
    sf.write(path, sine(MAX_SECONDS + 1, 1000, hz=50.0).astype(np.float32), 1000, subtype="FLOAT")
    with pytest.raises(InputError, match=r"very-long.wav: 601.0 s long: at most 600 s of a recording is read at once; cut out the part you want to hear$"):
        load_recorded(path, sample_rate=FS)
    v, _ = load_recorded(path, sample_rate=FS, seconds=0.5)
    assert v.shape[0] == 2 and 0.5 * FS <= v.shape[1] <= 0.7 * FS and np.isfinite(v).all()
    assert audio_info(path) == AudioInfo(channels=1, sample_rate=1000, frames=601000)
    # through the command: either rendered to length, or refused with the same one line
    out = tmp_path / "out"
    res = clips(path, out, "--seconds", 0.5)
    if res.exit_code == 0:
        check_outputs(out, frames=FS // 2)
    else:
        assert_refused(res, "at most 600 s of a recording is read at once")


def test_implausible_velocities_are_rendered_with_a_warning(tmp_path):
    path = wav(tmp_path / "loud.wav", sine(0.25, FS, level=1e30))
    res = clips(path, tmp_path / "out", "--seconds", 0.2)
    assert res.exit_code == 0, res.output
    assert "peak string velocity 1e+30 m/s (sample × velocity_scale=1) is far beyond a plucked string's few m/s" in res.stderr
    check_outputs(tmp_path / "out", frames=int(0.2 * FS))


def test_the_design_marks_a_phrase_looks_for_are_tables_every_design_has():
    from render.design.schema import REQUIRED_TABLES
    from render.dry.phrase import DESIGN_MARKS

    assert set(DESIGN_MARKS) <= set(REQUIRED_TABLES)
