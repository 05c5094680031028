"""``render blind`` end to end (the real renderer, small inputs) and its refusals.

Sources of the check values: EBU R 128 (target −23 LUFS, −1 dBTP ceiling), ITU-R BS.1770-4
(the loudness meter, pyloudnorm), the binomial distribution for the shortest useful session.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from render.analysis.loudness import integrated_loudness, true_peak_dbtp
from render.cli.blind import blind_command

ROOT = Path(__file__).resolve().parents[2]
A = ROOT / "models" / "studio-reference.toml"
B = ROOT / "models" / "ember-dark.toml"
DRY = ROOT / "dry_signals" / "last_chord_2s.wav"  # a 2 s recording: fast

PHRASE = """\
title = "one pluck"
seconds = 1.0
[[note]]
time = 0
string = 5
fret = 0
"""


def run(*args):
    return CliRunner().invoke(blind_command, [str(a) for a in args])


def test_a_two_trial_session_from_a_short_recording(tmp_path):
    out = tmp_path / "s"
    result = run(A, B, "--dry", DRY, "--trials", 2, "--seed", 4, "--out", out)
    assert result.exit_code == 0, result.output
    lines = result.output.splitlines()
    assert lines[0] == f"wrote {out}: abx, 2 trials, clips of 2.00 s at 48000 Hz"
    assert lines[-1].startswith(f"next: render listen {out}")
    assert "cannot reach p < 0.05; use at least 5" in result.output
    key = json.loads((out / "private" / "key.json").read_text())
    assert [d["name"] for d in key["designs"]] == ["studio-reference", "ember-dark"]
    assert key["designs"][0]["toml"] == A.read_text() and len(key["designs"][0]["sha256"]) == 64
    assert key["seed"] == 4 and key["dry"]["path"] == str(DRY) and len(key["dry"]["sha256"]) == 64
    assert key["loudness"]["target_lufs"] == -23.0 and key["loudness"]["ceiling_dbtp"] == -1.0
    clips = sorted((out / "public").glob("*.wav"))
    assert len(clips) == 6 and len({c.stat().st_size for c in clips}) == 1
    levels = set()
    for c in clips:
        x, sr = sf.read(c, dtype="float64")
        assert sr == 48000 and x.shape == (96000,) and np.all(np.isfinite(x))
        lufs = integrated_loudness(x, sample_rate=sr)
        # EBU R 128 target (or lower by the recorded amount when the true-peak ceiling bit), BS.1770-4 meter
        assert lufs == pytest.approx(-23.0 - key["loudness"]["lowered_db"], abs=0.01)
        assert true_peak_dbtp(x) <= -1.0 + 1e-3  # the ceiling, re-measured (float32 rounding allowed)
        levels.add(round(lufs, 2))
    assert len(levels) == 1


def test_a_session_lowered_under_the_ceiling_keeps_every_clip_under_it_by_an_independent_meter(tmp_path):
    # Brought to -12 LUFS the demo designs pass -1 dBTP (EBU R 128's ceiling) and are both lowered; every clip as
    # written, re-measured with interpolators independent of render's own 4x meter, peaks at or under -1 dBTP
    from .test_build import independent_true_peak_dbtp

    out = tmp_path / "s"
    result = run(A, B, "--dry", DRY, "--trials", 2, "--seed", 4, "--target-lufs", -12, "--out", out)
    assert result.exit_code == 0, result.output
    key = json.loads((out / "private" / "key.json").read_text())
    assert key["loudness"]["lowered_db"] > 0 and key["loudness"]["true_peak_aim_dbtp"] == -1.7
    assert "to keep the true peak under -1 dBTP (at most -1.7 as measured, a margin for what the meter misses between samples)" in result.output
    peaks = [independent_true_peak_dbtp(sf.read(c, dtype="float64")[0], 48000) for c in (out / "public").glob("*.wav")]
    assert len(peaks) == 6 and max(peaks) <= -1.0, max(peaks)


def test_a_preference_session_from_a_phrase(tmp_path):
    phrase = tmp_path / "one.toml"
    phrase.write_text(PHRASE)
    out = tmp_path / "p"
    result = run(A, A, "--dry", phrase, "--method", "preference", "--trials", 3, "--seconds", "1s", "--out", out, "--sample-rate", 44100, "--no-hum")
    assert result.exit_code == 0, result.output
    key = json.loads((out / "private" / "key.json").read_text())
    assert [d["name"] for d in key["designs"]] == ["studio-reference (MODEL_A)", "studio-reference (MODEL_B)"]
    assert key["method"] == "preference" and key["render"]["hum"] is False and isinstance(key["seed"], int)
    assert len(list((out / "public").glob("*.wav"))) == 6
    assert sf.info(next((out / "public").glob("*.wav"))).frames == 44100


@pytest.mark.parametrize(
    "args, message",
    [
        (["--trials", "0"], "Error: --trials=0: must be from 1 to 500; 16 is usual"),
        (["--target-lufs", "3"], "Error: --target-lufs=3: must be from -60 to -5 LUFS; -23 is EBU R 128"),
        (["--true-peak-dbtp", "2"], "Error: --true-peak-dbtp=2: must be from -30 to 0 dBTP; -1 is usual"),
        (["--seconds", "0.1"], "Error: --seconds=0.1: must be from 0.5 s to 120 s"),
        (["--sample-rate", "1000"], "Error: --sample-rate=1000: must be from 8000 to 384000 Hz (a whole number); 48000 is usual"),
        (["--seed", "-1"], "Error: --seed=-1: must be from 0 to 2**63-1"),
    ],
)
def test_bad_options_are_refused_with_one_line(tmp_path, args, message):
    out = tmp_path / "s"
    result = run(A, B, "--dry", DRY, "--out", out, *args)
    assert result.exit_code == 1
    assert result.output.strip() == message
    assert list(tmp_path.iterdir()) == []


def test_bad_files_are_refused_and_nothing_is_written(tmp_path):
    out = tmp_path / "s"
    result = run(A, B, "--dry", tmp_path / "missing.wav", "--out", out)
    assert result.exit_code == 1 and result.output.strip() == f"Error: --dry={tmp_path / 'missing.wav'}: no such file; pass a phrase (.toml) or a recording"
    bad = tmp_path / "bad.toml"
    bad.write_text("[coil_a]\ninductance = 'lots'\n")
    result = run(A, bad, "--dry", DRY, "--out", out)
    assert result.exit_code == 1 and result.output.startswith(f"Error: {bad}") and len(result.output.strip().splitlines()) == 1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml"]


def test_an_existing_session_is_kept_without_overwrite(tmp_path):
    out = tmp_path / "s"
    assert run(A, B, "--dry", DRY, "--trials", 2, "--out", out).exit_code == 0
    before = (out / "private" / "key.json").read_bytes()
    result = run(A, B, "--dry", DRY, "--trials", 2, "--out", out)
    assert result.exit_code == 1
    assert result.output.strip() == f"Error: --out={out}: exists; pass --overwrite to replace that session or choose another folder"
    assert (out / "private" / "key.json").read_bytes() == before
    assert run(A, B, "--dry", DRY, "--trials", 3, "--out", out, "--overwrite").exit_code == 0
    assert json.loads((out / "private" / "key.json").read_text())["trials"][2]["index"] == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s"]  # no temporary folder left behind


def test_blind_then_score_with_a_rig(tmp_path):
    from render.cli.score import score_command
    from render.listening.answers import AnswerLog
    from render.listening.layout import load_plan, session_paths

    rig = tmp_path / "short-cable.toml"
    rig.write_text('[rig]\ncable_length = "1m"\n')
    out = tmp_path / "s"
    result = run(A, B, "--dry", DRY, "--rig", rig, "--trials", 2, "--method", "preference", "--out", out)
    assert result.exit_code == 0, result.output
    key = json.loads((out / "private" / "key.json").read_text())
    assert key["rig"]["toml"] == rig.read_text()
    paths = session_paths(out)
    with AnswerLog(paths, load_plan(paths)) as log:
        log.record({"trial": 0, "answer": "A"})
        log.record({"trial": 1, "answer": "none", "comment": "close"})
    scored = CliRunner().invoke(score_command, [str(out)])
    assert scored.exit_code == 0, scored.output
    assert "no preference: 1" in scored.output and "close" in scored.output
    assert (out / "results" / "response-difference.png").stat().st_size > 10000
