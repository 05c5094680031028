"""``render dry``: the command object driven through click's test runner.

Source of the numbers: the WAV full scale of 1 m/s is this tool's own convention; the
rest are exit codes and message text (no physical check values here).
"""

from __future__ import annotations

import os

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from render.cli.dry import dry_command

PHRASE = """\
title = "two plucks"
seconds = 1.0
[[note]]
time = 0
string = 6
fret = 0
[[note]]
time = 0.5
pitch = "A3"
"""


@pytest.fixture()
def phrase(tmp_path):
    path = tmp_path / "two.toml"
    path.write_text(PHRASE)
    return path


def run(*args):
    return CliRunner().invoke(dry_command, [str(a) for a in args])


def test_writes_a_float_wav_and_a_spectrogram(phrase, tmp_path):
    out = tmp_path / "two.wav"
    result = run(phrase, "--out", out, "--position", "40mm", "--aperture", "20mm", "--sample-rate", 44100)
    assert result.exit_code == 0, result.output
    assert "wrote" in result.output and "peak" in result.output
    info = sf.info(out)
    assert (info.samplerate, info.channels, info.subtype, info.frames) == (44100, 1, "FLOAT", 44100)
    png = tmp_path / "two-spectrogram.png"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    v, _ = sf.read(out)
    assert np.all(np.isfinite(v)) and np.abs(v).max() > 0.01  # m/s, full scale 1 m/s


def test_refuses_to_overwrite_without_the_flag(phrase, tmp_path):
    out = tmp_path / "x.wav"
    assert run(phrase, "--out", out, "--no-spectrogram").exit_code == 0
    before = out.read_bytes()
    result = run(phrase, "--out", out, "--no-spectrogram", "--seed", 5)
    assert result.exit_code == 1
    assert result.output.strip().splitlines() == [f"Error: {out}: exists; pass --overwrite to replace it or choose another name"]
    assert out.read_bytes() == before
    again = run(phrase, "--out", out, "--no-spectrogram", "--seed", 5, "--overwrite")
    assert again.exit_code == 0 and out.read_bytes() != before


def test_an_existing_spectrogram_also_blocks(phrase, tmp_path):
    (tmp_path / "y-spectrogram.png").write_bytes(b"old")
    result = run(phrase, "--out", tmp_path / "y.wav")
    assert result.exit_code == 1 and "y-spectrogram.png: exists" in result.output
    assert not (tmp_path / "y.wav").exists()


def test_output_is_byte_identical_for_identical_inputs(phrase, tmp_path):
    a, b = tmp_path / "a.wav", tmp_path / "b.wav"
    assert run(phrase, "--out", a, "--seed", 2).exit_code == 0
    assert run(phrase, "--out", b, "--seed", 2).exit_code == 0
    assert a.read_bytes() == b.read_bytes()
    assert (tmp_path / "a-spectrogram.png").read_bytes() == (tmp_path / "b-spectrogram.png").read_bytes()


def test_bad_inputs_exit_1_with_one_line_and_write_nothing(phrase, tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text('[[note]]\ntime = 0\nstring = 6\nfret = 0\nstrenght = "1mm"\n')
    cases = [
        ((bad,), "bad.toml: [[note]] #1: unknown key 'strenght'; did you mean 'strength'?"),
        ((tmp_path / "none.toml",), "none.toml: no such file"),
        ((phrase, "--position", "700mm"), "--position=700mm: must be shorter than the scale length 648 mm: 700 mm from the bridge saddle lies beyond the nut"),
        ((phrase, "--position", "4 furlongs"), "--position=4 furlongs: cannot read"),
        ((phrase, "--aperture", "-3mm"), "--aperture=-3mm: must be >= 0"),
        ((phrase, "--aperture", "5m"), "--aperture=5m: a sensing window must be narrower than half the scale length (324 mm)"),  # the phrase's 648 mm scale
        ((phrase, "--sample-rate", 100), "--sample-rate=100: must be from 8000 to 384000 Hz"),
        ((phrase, "--seconds", "-1s"), "--seconds=-1s: must be at least 0.05 s (a pluck's first periods) and at most 600 s"),
        ((phrase, "--seconds", "1us"), "--seconds=1e-06s: must be at least 0.05 s"),
    ]
    for args, text in cases:
        out = tmp_path / "z.wav"
        result = run(*args, "--out", out)
        assert result.exit_code == 1, (args, result.output)
        lines = result.output.strip().splitlines()
        assert len(lines) == 1 and text in lines[0], (args, result.output)
        assert not out.exists() and not (tmp_path / "z-spectrogram.png").exists()
    leftovers = [n for n in os.listdir(tmp_path) if n.endswith(".part")]
    assert leftovers == []


def test_usage_errors_exit_1(phrase):
    from render.cli import main

    def usage(*args):
        return CliRunner().invoke(main, ["dry", *map(str, args)]).exit_code

    assert usage(phrase) == 1  # --out is required
    assert usage(phrase, "--out", "o.wav", "--seed", "many") == 1


def test_seconds_option_sets_the_length(phrase, tmp_path):
    out = tmp_path / "short.wav"
    assert run(phrase, "--out", out, "--seconds", "250ms", "--no-spectrogram").exit_code == 0
    assert sf.info(out).frames == 12000
    assert not (tmp_path / "short-spectrogram.png").exists()


@pytest.mark.parametrize("name", ["velocity.flac", "velocity"])
def test_a_wav_goes_under_a_wav_name(phrase, tmp_path, name):
    # the file is WAV whatever it is called: a name that says otherwise is refused before any work
    result = run(phrase, "--out", tmp_path / name)
    assert result.exit_code == 1 and "this file is written as a WAV; give a name ending in .wav" in result.output
    assert list(tmp_path.iterdir()) == [phrase]


def test_a_note_that_ends_before_the_sensing_point_is_named(tmp_path):
    # string 1 at fret 26 vibrates over 648 mm · 2^(-26/12) = 144 mm (equal temperament): a point at 150 mm
    # sees no motion (sin(nπx/L) taken as 0 past the fret), so the preview is silent and says why
    path = tmp_path / "high.toml"
    path.write_text("seconds = 1.0\n[[note]]\ntime = 0\nstring = 1\nfret = 26\n")
    result = CliRunner().invoke(dry_command, [str(path), "--out", str(tmp_path / "high.wav")])
    assert result.exit_code == 0, result.output
    assert "peak 0 m/s" in result.stdout
    assert f"vibrating length {648 * 2 ** (-26 / 12):.0f} mm ends before the sensing point at 150 mm" in result.stderr


def test_phrase_lengths_get_the_design_files_slip_hints(tmp_path):
    # a plain number is in metres (SI): 648 is 648 m, "648m" 648 metres; both are refused with the likely fix
    for value, fix in (("648", 'plain numbers are in metres: for 648 mm write "648mm"'), ('"648m"', 'did you mean "648mm"?')):
        path = tmp_path / "long.toml"
        path.write_text(f"seconds = 1.0\n[instrument]\nscale_length = {value}\n[[note]]\ntime = 0\nstring = 1\nfret = 0\n")
        result = run(path, "--out", tmp_path / "long.wav", "--overwrite")
        assert result.exit_code == 1 and fix in result.output, result.output


def test_a_phrase_too_long_names_its_last_note_not_a_missing_key(tmp_path):
    path = tmp_path / "late.toml"
    path.write_text("[[note]]\ntime = 599\nstring = 1\nfret = 0\n")
    result = run(path, "--out", tmp_path / "late.wav")
    assert result.exit_code == 1
    assert "with no seconds given the phrase would last 601 s (its last note starts at 599 s" in result.output and "give seconds = 600 or less" in result.output


def test_a_recording_given_as_the_phrase_is_named_as_audio(tmp_path):
    wav = tmp_path / "take.wav"
    sf.write(wav, np.zeros(4800, np.float32), 48000, subtype="FLOAT")
    result = run(wav, "--out", tmp_path / "out.wav")
    assert result.exit_code == 1 and "is audio, not a TOML text file" in result.output and "render clips --dry" in result.output


def test_a_silent_preview_says_so(tmp_path):
    # string 1 at fret 24 vibrates over 648 mm / 4 = 162 mm (equal temperament): a point at 170 mm sees no motion,
    # so every sample is 0; the printout and the spectrogram's title say "silent" instead of drawing round-off
    path = tmp_path / "high.toml"
    path.write_text('[[note]]\ntime = 0\nstring = 1\nfret = 24\npluck_at = "60mm"\n')
    result = CliRunner().invoke(dry_command, [str(path), "--position", "170mm", "--out", str(tmp_path / "high.wav")])
    assert result.exit_code == 0, result.output
    assert result.stdout.rstrip().endswith("peak 0 m/s (full scale 1 m/s); silent: no note sounds at this sensing point")
    loud = CliRunner().invoke(dry_command, [str(path), "--position", "40mm", "--out", str(tmp_path / "loud.wav")])
    assert loud.exit_code == 0 and "; silent:" not in loud.stdout


def test_a_note_above_nyquist_is_warned_like_an_unheard_one(tmp_path):
    # C5 + 36 frets = C8, 4186 Hz (ISO 16, equal temperament): past 8 kHz's Nyquist limit of 4000 Hz
    path = tmp_path / "ny.toml"
    path.write_text('[instrument]\ntuning = ["E2", "A2", "D3", "G3", "B3", "C5"]\n[[note]]\ntime = 0\nstring = 1\nfret = 36\npluck_at = "30mm"\n')
    result = CliRunner().invoke(dry_command, [str(path), "--position", "30mm", "--sample-rate", "8000", "--out", str(tmp_path / "ny.wav")])
    assert result.exit_code == 0, result.output
    assert "warning: string 1, fret 36 at 0 s: its pitch 4186 Hz reaches the Nyquist limit of the 8000 Hz sample rate, 4000 Hz, so it is not heard" in result.stderr
    assert "no steel string reaches this pitch" in result.stderr  # C5 on 648 mm: 2 · 523.25 · 0.648 = 678 m/s, past 596 m/s


@pytest.mark.parametrize(
    "typed, said",
    [
        ("700mm", "--position=700mm: must be shorter than the scale length 648 mm: 700 mm from the bridge saddle lies beyond the nut"),
        ("40", '--position=40: must be shorter than the scale length 648 mm; plain numbers are in metres: for 40 mm write "40mm"'),
        ("700", "--position=700: must be shorter than the scale length 648 mm: 700000 mm (a plain number is in metres) from the bridge saddle lies beyond the nut"),
    ],
)
def test_a_position_past_the_nut_gets_the_hint_for_what_was_typed(phrase, tmp_path, typed, said):
    result = run(phrase, "--position", typed, "--out", tmp_path / "p.wav")
    assert result.exit_code == 1 and result.output.strip().splitlines() == [f"Error: {said}"]
