"""``render blind`` and ``render score`` as library runs: what they return, write and refuse.

Sources of the check values: EBU R 128 (target −23 LUFS, −1 dBTP ceiling), measured with the
ITU-R BS.1770-4 meter (pyloudnorm's, as render.analysis.loudness is bitwise); the binomial
distribution for the score (P(X ≥ 2 | n = 2, p = ½) = 1/4); IEEE 754 single precision for the
float32 WAV samples (a WAV clip is the rendered volts times the gain, rounded once to float32).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

from render.analysis.loudness import integrated_loudness, true_peak_dbtp
from render.clip import render_clip
from render.design import load_designs, parse_design
from render.dry import load_dry
from render.errors import InputError
from render.io.toml import loads
from render.listening.answers import AnswerLog
from render.listening.build import slot_design
from render.listening.dither import tpdf_dither
from render.listening.layout import load_plan
from render.runs.blind import BlindSettings, build_blind_session
from render.runs.score import score_blind_session

ROOT = Path(__file__).resolve().parents[2]
A = ROOT / "models" / "studio-reference.toml"
B = ROOT / "models" / "ember-dark.toml"
DRY = ROOT / "dry_signals" / "last_chord_2s.wav"  # a 2 s recording: fast
FS = 16000  # Hz: small and fast, well inside 8000 to 384000


def test_a_session_from_loaded_designs(tmp_path):
    designs, rig = load_designs([A, B])
    settings = BlindSettings(trials=3, seed=11, seconds="1.5s", sample_rate=FS)
    session = build_blind_session(designs, DRY, out=tmp_path / "s", rig=rig, settings=settings)
    assert session.paths.root == tmp_path / "s" and session.names == ("studio-reference", "ember-dark")
    assert (session.method, session.trials, session.seed, session.sample_rate, session.seconds) == ("abx", 3, 11, FS, 1.5)
    key = json.loads(session.paths.key.read_text())
    assert key["seed"] == 11 and key["render"]["function"] == "render.clip.render_clip"
    assert key["loudness"] == session.loudness.record() and key["render"]["clipped_fraction"] == list(session.clipped_fraction)
    match = session.loudness
    assert (match.target_lufs, match.ceiling_dbtp) == (-23.0, -1.0)  # EBU R 128
    for i, design in enumerate(designs):
        # the clip is MODEL's one-design render (render_clip) times the matching gain, plus that slot's
        # own dither (render.listening.dither), rounded once to float32
        dry = load_dry(DRY, sample_rate=FS, positions=(design.coil_a.position, design.coil_b.position), apertures=(design.coil_a.aperture, design.coil_b.aperture), seconds=1.5)
        volts = render_clip(design, dry.velocity, sample_rate=FS).volts
        assert integrated_loudness(volts, sample_rate=FS) == pytest.approx(match.measured_lufs[i], abs=1e-9)  # ITU-R BS.1770-4
        assert true_peak_dbtp(volts) == pytest.approx(match.true_peak_dbtp[i], abs=1e-9)  # ITU-R BS.1770-4 Annex 2
        trial = key["trials"][0]
        slot = next(s for s in trial["clips"] if slot_design(trial, s) == i)
        clip, rate = sf.read(session.paths.public / trial["clips"][slot], dtype="float32")
        assert rate == FS and clip.shape == (int(1.5 * FS),)
        dither = tpdf_dither(volts.size, seed=11, trial=0, slot=slot)
        np.testing.assert_array_equal(clip, (volts * 10.0 ** (match.gains_db[i] / 20.0) + dither).astype(np.float32))
        # matched: -23 LUFS less the recorded lowering (EBU R 128), re-measured on the written clip
        assert integrated_loudness(clip.astype(float), sample_rate=FS) == pytest.approx(-23.0 - match.lowered_db, abs=0.01)


@pytest.mark.parametrize(
    "fields, message",
    [
        ({"trials": 0}, "--trials=0: must be from 1 to 500; 16 is usual"),
        ({"trials": 2.5}, "--trials=2.5: must be from 1 to 500; 16 is usual"),
        ({"method": "ranking"}, "--method=ranking: expected one of abx, preference"),
        ({"target_lufs": float("nan")}, "--target-lufs=nan: must be from -60 to -5 LUFS; -23 is EBU R 128"),
        ({"true_peak_dbtp": 1}, "--true-peak-dbtp=1: must be from -30 to 0 dBTP; -1 is usual"),
        ({"sample_rate": 1000}, "--sample-rate=1000: must be from 8000 to 384000 Hz (a whole number); 48000 is usual"),
        ({"seed": 2**63}, f"--seed={2**63}: must be from 0 to 2**63-1"),
        ({"seconds": "2 min"}, '--seconds=2 min: cannot read \'2 min\' as a time; write it like "0.2s" or "20ms"'),
        ({"seconds": 0.25}, "--seconds=0.25: must be from 0.5 s to 120 s"),
        ({"strength": 0.06}, "--strength=60mm: must be above 0 and at most 50 mm"),
    ],
)
def test_bad_settings_are_refused_with_one_line(fields, message):
    # the command line's words (render blind prints these); from Python the same line names the argument
    from render.errors import ArgumentError

    with pytest.raises(ArgumentError) as caught:
        BlindSettings(**fields)
    assert caught.value.for_option() == message
    (name, _), (value, why) = list(fields.items())[0], message.split("=", 1)[1].split(": ", 1)
    assert str(caught.value) == f"{name}={value}: {why}"


def test_settings_are_kept_as_plain_numbers():
    s = BlindSettings(trials=np.int64(4), seed=np.int64(3), seconds="1500ms", sample_rate=np.int32(22050), target_lufs=-20)
    assert (s.trials, s.seed, s.seconds, s.sample_rate, s.target_lufs) == (4, 3, 1.5, 22050, -20.0)  # 1500 ms = 1.5 s (SI prefix)
    assert all(type(v) in (int, float) for v in (s.trials, s.seed, s.seconds, s.sample_rate, s.target_lufs))


def test_a_design_without_its_file_or_a_changed_file_is_refused_before_any_work(tmp_path):
    (design_a,), _ = load_designs([A])
    in_memory = parse_design(loads(B.read_text()), name="ember-dark")
    with pytest.raises(InputError, match="^<design>: cannot read it again to keep it in the session"):
        build_blind_session([design_a, in_memory], DRY, out=tmp_path / "s", settings=BlindSettings(trials=2, sample_rate=FS))
    edited = tmp_path / "edited.toml"
    edited.write_text(B.read_text())
    designs, _ = load_designs([A, edited])
    edited.write_text(B.read_text().replace('name = "ember-dark"', 'name = "ember-darker"'))
    with pytest.raises(InputError, match=f"^{edited}: changed since it was read; run again$"):
        build_blind_session(designs, DRY, out=tmp_path / "s", settings=BlindSettings(trials=2, sample_rate=FS))
    with pytest.raises(InputError, match="^1 designs: a blind session compares exactly two"):
        build_blind_session(designs[:1], DRY, out=tmp_path / "s")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["edited.toml"]


def test_score_run_draws_once_then_keeps_the_plot(make_session):
    paths = make_session(method="abx", trials=2, seed=5)
    key = json.loads(paths.key.read_text())
    with AnswerLog(paths, load_plan(paths)) as log:
        for t in key["trials"]:
            log.record({"trial": t["index"], "answer": t["x"]})
    first = score_blind_session(paths.root)
    assert first.session_id == key["session"] and first.kept_plot is None
    assert first.plot == paths.results / "response-difference.png" and first.plot.stat().st_size > 10000
    assert first.result["abx"]["correct"] == 2
    assert first.result["abx"]["p_value"] == pytest.approx(0.25, rel=1e-12)  # P(X >= 2 | n = 2, p = 1/2) = 1/4 (binomial distribution)
    again = score_blind_session(paths.root)
    assert again.plot is None and again.kept_plot == first.plot and again.result == first.result
    assert score_blind_session(paths.root, plot=False).kept_plot is None


PHRASE = ROOT / "dry_signals" / "default.toml"


def test_a_phrase_plucked_harder_is_louder_by_the_scale_exactly(tmp_path):
    """--strength scales every pluck of the phrase by one factor; the string's motion is linear in the initial
    displacement (Fletcher & Rossing, The Physics of Musical Instruments, 2nd ed. 1998, §2.7) and these designs
    are linear below their clip onset (no construction), so with no hum doubling the strength raises the BS.1770-4
    integrated loudness by 20·log10 2 = 6.02 dB (its gates are relative or far below: ITU-R BS.1770-4 eq. 2)."""
    designs, rig = load_designs([A, B])
    measured = []
    for k, strength in enumerate((0.2e-3, 0.4e-3)):
        settings = BlindSettings(trials=1, seed=1, seconds=2, sample_rate=FS, hum=False, strength=strength)
        session = build_blind_session(designs, PHRASE, out=tmp_path / f"s{k}", rig=rig, settings=settings)
        assert max(session.clipped_fraction) == 0.0
        key = json.loads(session.paths.key.read_text())
        assert key["dry"]["strength_m"] == strength and key["dry"]["description"]["strongest_pluck_m"] == pytest.approx(strength, rel=1e-12)
        measured.append(session.loudness.measured_lufs)
    for low, high in zip(*measured):
        assert high - low == pytest.approx(20 * np.log10(2), abs=0.01)


def test_strength_with_a_recording_is_refused_before_a_folder_is_made(tmp_path):
    designs, rig = load_designs([A, B])
    settings = BlindSettings(trials=1, seed=1, sample_rate=FS, strength=2e-3)
    with pytest.raises(InputError, match="goes with a phrase file, not the recording"):
        build_blind_session(designs, DRY, out=tmp_path / "s", rig=rig, settings=settings)
    assert not (tmp_path / "s").exists()


def test_blind_strength_on_the_command_line(tmp_path):
    """`render blind --strength`: read in mm as render clips reads it; a bare number or a recording refused in one line."""
    from click.testing import CliRunner

    from render.cli import main

    out = tmp_path / "s"
    res = CliRunner().invoke(main, ["blind", str(A), str(B), "--strength", "0.3mm", "--seconds", "1", "--trials", "1", "--seed", "2", "--no-hum", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert json.loads((out / "private" / "key.json").read_text())["dry"]["strength_m"] == pytest.approx(0.3e-3, rel=1e-12)
    res = CliRunner().invoke(main, ["blind", str(A), str(B), "--strength", "3", "--out", str(tmp_path / "t")])
    assert res.exit_code == 1 and res.output.strip().splitlines() == ["Error: --strength=3: a pluck strength needs its unit; did you mean 3mm? (bare, it would be 3 m = 3000 mm)"]
    res = CliRunner().invoke(main, ["blind", str(A), str(B), "--dry", str(DRY), "--strength", "2mm", "--out", str(tmp_path / "u")])
    assert res.exit_code == 1 and "--strength=2mm: goes with a phrase file, not the recording" in res.output
    assert not (tmp_path / "t").exists() and not (tmp_path / "u").exists()


@pytest.mark.parametrize("bad", [-1e-3, 0.0, float("nan"), True, 0.06])
def test_load_dry_refuses_a_strength_that_is_no_pluck(bad):
    # a negative strength would flip every pluck, zero would be silence: refused in one line naming it
    from render.errors import ArgumentError

    with pytest.raises(ArgumentError, match=r"^strength=.*: must be above 0 and at most 0\.05 m \(50 mm\)"):
        load_dry(PHRASE, sample_rate=FS, positions=(0.1, 0.15), apertures=0.01, strength=bad)
