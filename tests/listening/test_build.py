"""Building a session: loudness matching, the true-peak ceiling, the folder and what it hides."""

from __future__ import annotations

import json
import math
import os
import re

import numpy as np
import pytest
import soundfile as sf

from render.analysis.loudness import integrated_loudness, true_peak_dbtp
from render.errors import InputError
from render.listening import build as build_mod
from render.listening.build import check_session_folder, draw_trials, slot_design
from render.listening.layout import load_key, load_plan, session_paths
from render.listening.loudness import match_loudness

SR = 48000


def tone(freq, amp, seconds=1.0, sr=SR, phase=0.0):
    t = np.arange(int(sr * seconds)) / sr
    return amp * np.sin(2 * np.pi * freq * t + phase)


# -- true peak ------------------------------------------------------------------


def test_true_peak_finds_the_peak_between_samples():
    # A sine at fs/4 sampled 45 degrees off its crest: every sample is at amplitude·cos(45°),
    # 3.01 dB under the waveform's true peak (20·log10(1/√2), trigonometry); ITU-R BS.1770-4
    # Annex 2 is written for exactly this inter-sample peak.
    x = tone(SR / 4, 0.5, phase=math.pi / 4)
    ramp = np.sin(np.linspace(0, np.pi / 2, SR // 100)) ** 2  # 10 ms fades: no ringing from a hard start or stop
    x[: ramp.size] *= ramp
    x[-ramp.size :] *= ramp[::-1]
    sample_peak_db = 20 * math.log10(np.max(np.abs(x)))
    assert sample_peak_db == pytest.approx(20 * math.log10(0.5 / math.sqrt(2)), abs=1e-9)
    assert true_peak_dbtp(x) == pytest.approx(20 * math.log10(0.5), abs=0.05)  # 4x oversampling, within 0.05 dB (common practice, no source)
    assert true_peak_dbtp(np.zeros(100)) == -math.inf


# -- loudness matching ------------------------------------------------------------


def test_both_are_brought_to_the_target_loudness():
    quiet, loud = tone(440, 0.01, 2.0), tone(2500, 0.3, 2.0)
    out, m = match_loudness([quiet, loud], sample_rate=SR, target_lufs=-23.0, ceiling_dbtp=-1.0)
    for y in out:
        # EBU R 128's target, measured again with pyloudnorm's BS.1770-4 meter
        assert integrated_loudness(y, sample_rate=SR) == pytest.approx(-23.0, abs=1e-6)
    assert m.lowered_db == 0.0 and m.final_lufs == pytest.approx((-23.0, -23.0), abs=1e-6)
    # a gain of g dB moves the loudness by g LU (BS.1770-4 is a mean-square measure)
    assert m.gains_db[0] == pytest.approx(-23.0 - m.measured_lufs[0], abs=1e-12)


def test_the_ceiling_lowers_both_by_the_same_amount():
    # a spiky signal: quiet overall, with one full-scale click; bringing it to -14 LUFS would pass -1 dBTP
    spiky = tone(200, 0.02, 2.0)
    spiky[SR // 2] = 1.0
    smooth = tone(300, 0.1, 2.0)
    out, m = match_loudness([spiky, smooth], sample_rate=SR, target_lufs=-14.0, ceiling_dbtp=-1.0)
    assert m.lowered_db > 0
    # held at the aim, the margin under the ceiling (render.analysis.loudness.TRUE_PEAK_MARGIN_DB, 0.7 dB)
    assert max(true_peak_dbtp(y) for y in out) == pytest.approx(-1.7, abs=1e-6) and m.aim_dbtp == -1.7
    assert m.record()["true_peak_aim_dbtp"] == -1.7 and m.record()["ceiling_dbtp"] == -1.0
    # still matched to each other, both lowered by the recorded amount
    a, b = (integrated_loudness(y, sample_rate=SR) for y in out)
    assert a == pytest.approx(b, abs=1e-6) and a == pytest.approx(-14.0 - m.lowered_db, abs=1e-6)
    assert m.record()["lowered_db"] == m.lowered_db


def independent_true_peak_dbtp(x, sample_rate):
    """The peak of ``x`` interpolated two ways that share nothing with render's meter (resample_poly at 4x): scipy's
    resample_poly at 16x, and a 255-tap Kaiser (beta 10) windowed-sinc interpolator at 8x designed with firwin;
    the higher of the two, in dBTP. Over-sampling 16x can miss at most 0.042 dB (cos(π/32), closed form)."""
    from scipy.signal import firwin, resample_poly, upfirdn

    x = np.asarray(x, float)
    h = 8 * firwin(255, 1 / 8, window=("kaiser", 10.0))
    sixteen = np.max(np.abs(resample_poly(x, 16, 1)))
    eight = np.max(np.abs(upfirdn(h, x, 8)))
    return 20 * math.log10(max(sixteen, eight, np.max(np.abs(x))))


def test_every_written_clip_keeps_its_true_peak_under_the_ceiling_by_an_independent_meter(make_session, tmp_path):
    # The worst case for a 4x meter (BS.1770-4 Annex 2's over-sampling error): tones near half the sample rate whose
    # crests fall midway between the meter's points (19.2 kHz at 48 kHz: 10 points a cycle, read cos(π/10), 0.44 dB
    # low; closed form). Brought to -12 LUFS both must be lowered; every clip as written (dither and float32 included)
    # must then peak at or under -1 dBTP by interpolators independent of the meter.
    from render.listening.build import build_session

    from .conftest import MODELS, design_record

    n = np.arange(SR // 50)
    fade = np.sin(0.5 * np.pi * np.arange(SR // 200) / (SR // 200)) ** 2
    burst = 0.9 * np.cos(2 * np.pi * 19200 * n / SR + np.pi / 10)  # 20 ms with 5 ms fades, in the middle of a bed
    burst[: fade.size] *= fade
    burst[-fade.size :] *= fade[::-1]
    worst = tone(200, 0.1, 2.0)
    worst[SR : SR + n.size] += burst
    other = tone(997, 0.1, 2.0)
    signals, m = match_loudness([worst, other], sample_rate=SR, target_lufs=-12.0, ceiling_dbtp=-1.0)
    assert m.lowered_db > 0  # the ceiling binds
    before = independent_true_peak_dbtp(signals[0], SR)
    assert before > true_peak_dbtp(signals[0]) + 0.3  # the meter misses this much here, so the margin is needed
    paths = build_session(tmp_path / "s", signals, sample_rate=SR, method="abx", trials=3, seed=2, designs=[design_record(p) for p in MODELS], record={"rig": None, "loudness": m.record()})
    peaks = [independent_true_peak_dbtp(sf.read(c, dtype="float64")[0], SR) for c in sorted(paths.public.glob("*.wav"))]
    assert len(peaks) == 9 and max(peaks) <= -1.0, max(peaks)


def test_silent_short_or_broken_renders_are_refused():
    with pytest.raises(
        InputError, match=r"^quiet: no loudness: the render is silent \(under BS\.1770-4's -70 LUFS gate\): no string signal reaches the output; `render check` the design \(coils that cancel"
    ):
        match_loudness([np.zeros(SR), tone(440, 0.1)], sample_rate=SR, names=["quiet", "ok"])
    with pytest.raises(InputError, match=r"shorter than one 400 ms block"):
        match_loudness([tone(440, 0.1, 0.2), tone(440, 0.1, 0.2)], sample_rate=SR)
    bad = tone(440, 0.1)
    bad[5] = np.nan
    with pytest.raises(InputError, match=r"^b: the render holds NaN"):
        match_loudness([tone(440, 0.1), bad], sample_rate=SR, names=["a", "b"])


# -- the draws --------------------------------------------------------------------


def test_draws_come_from_the_seed_alone():
    assert draw_trials("abx", 16, 3) == draw_trials("abx", 16, 3)
    assert draw_trials("abx", 16, 3) != draw_trials("abx", 16, 4)
    rng = np.random.default_rng(3)  # the documented recipe, redone by hand
    a, x = rng.integers(0, 2, 16), rng.integers(0, 2, 16)
    assert [t["a"] for t in draw_trials("abx", 16, 3)] == a.tolist()
    assert [t["x"] for t in draw_trials("abx", 16, 3)] == [("A", "B")[i] for i in x]
    assert all(t["x"] is None for t in draw_trials("preference", 4, 3))
    trial = {"a": 1, "x": "B"}
    assert [slot_design(trial, s) for s in "ABX"] == [1, 0, 0]


def test_draws_are_not_lopsided():
    # 4000 independent fair draws: each side within 4 standard deviations (sqrt(4000)/2 ≈ 31.6) of 2000 (binomial distribution)
    t = draw_trials("abx", 500, 1) + draw_trials("abx", 500, 2) + draw_trials("abx", 500, 3) + draw_trials("abx", 500, 4)
    assert abs(sum(x["a"] for x in t) - 1000) < 4 * math.sqrt(2000) / 2
    assert abs(sum(x["x"] == "A" for x in t) - 1000) < 4 * math.sqrt(2000) / 2


# -- the folder -------------------------------------------------------------------


def test_the_folder_holds_identical_looking_clips_and_a_key_kept_apart(make_session):
    paths = make_session(method="abx", trials=5, seed=123456789)
    plan, key = load_plan(paths), None
    key = load_key(paths, plan)
    public = sorted(p.name for p in paths.public.iterdir())
    clips = [n for n in public if n != "plan.json"]
    assert len(clips) == 15 and set(public) == set(clips) | {"plan.json"}
    assert all(re.fullmatch(r"[0-9a-f]{32}\.wav", n) for n in clips)
    sizes = {(paths.public / n).stat().st_size for n in clips}
    mtimes = {(paths.public / n).stat().st_mtime for n in clips}
    assert len(sizes) == 1 and len(mtimes) == 1
    heads = {(paths.public / n).read_bytes()[:56] for n in clips}
    assert len(heads) == 1  # RIFF/fmt/fact/data headers: byte-identical; only the audio differs
    for n in clips[:2]:
        info = sf.info(paths.public / n)
        assert (info.format, info.subtype, info.channels, info.samplerate, info.frames) == ("WAV", "FLOAT", 1, 16000, 16000)
    # each clip is the file the key names, and holds the design the key says (to within the dither)
    import hashlib

    audio = {n: sf.read(paths.public / n, dtype="float64")[0] for n in clips}
    for t in key["trials"]:
        for slot, name in t["clips"].items():
            assert hashlib.sha256((paths.public / name).read_bytes()).hexdigest() == key["clip_sha256"][name]
            same = t["clips"]["A"] if slot_design(t, slot) == t["a"] else t["clips"]["B"]
            other = t["clips"]["B"] if same == t["clips"]["A"] else t["clips"]["A"]
            assert np.max(np.abs(audio[name] - audio[same])) < 3 * 2.0**-23
            assert np.max(np.abs(audio[name] - audio[other])) > 0.01
    # the plan says nothing about which is which
    text = paths.plan.read_text()
    for secret in [d["name"] for d in key["designs"]] + key["render_sha256"] + list(key["clip_sha256"].values()) + [str(key["seed"])]:
        assert secret not in text
    assert all(set(t) == {"index", "clips"} for t in plan["trials"])
    assert '"a"' not in text and '"x"' not in text
    assert oct(paths.private.stat().st_mode & 0o777) == "0o700"


def test_names_do_not_follow_from_the_seed(make_session):
    one, two = make_session(seed=99, trials=3), make_session(seed=99, trials=3)
    k1, k2 = (json.loads(p.key.read_text()) for p in (one, two))
    assert [(t["a"], t["x"]) for t in k1["trials"]] == [(t["a"], t["x"]) for t in k2["trials"]]
    n1 = {n for t in k1["trials"] for n in t["clips"].values()}
    n2 = {n for t in k2["trials"] for n in t["clips"].values()}
    assert n1.isdisjoint(n2) and k1["session"] != k2["session"]


def test_an_existing_folder_is_refused_unless_it_is_a_session_and_overwrite_is_given(make_session, tmp_path):
    paths = make_session(trials=2)
    before = paths.key.read_bytes()
    with pytest.raises(InputError, match=r"^out=.*: exists; pass overwrite=True to replace that session or choose another folder$"):
        make_session(trials=2, out=paths.root)
    assert paths.key.read_bytes() == before
    other = tmp_path / "notes"
    other.mkdir()
    (other / "mine.txt").write_text("keep me")
    with pytest.raises(InputError, match=r"neither empty nor a listening session"):
        check_session_folder(other, overwrite=True)
    check_session_folder(tmp_path / "no" / "where", overwrite=False)  # missing parents are made, as for render clips
    with pytest.raises(InputError, match=r"is a file, not a folder"):
        check_session_folder(tmp_path / "notes" / "mine.txt" / "session", overwrite=False)
    from render.listening.build import build_session

    key = json.loads(paths.key.read_text())
    again = build_session(paths.root, [np.ones(8000) * 0.1, np.ones(8000) * 0.2], sample_rate=16000, method="preference", trials=3, seed=1, designs=key["designs"], record={}, overwrite=True)
    assert load_plan(again)["method"] == "preference" and not list(tmp_path.glob(".old-*"))


def test_an_interrupted_build_leaves_nothing(make_session, tmp_path, monkeypatch):
    real = build_mod._write_new_file
    calls = {"n": 0}

    def failing(path, data):
        calls["n"] += 1
        if calls["n"] == 4:
            raise OSError(28, "No space left on device")
        real(path, data)

    monkeypatch.setattr(build_mod, "_write_new_file", failing)
    out = tmp_path / "s"
    with pytest.raises(InputError, match=r"^out=.*: could not write the session \(No space left on device\); check free space and permissions$"):
        make_session(trials=3, out=out)
    assert not out.exists() and os.listdir(tmp_path) == []


def test_a_damaged_session_is_refused(make_session, tmp_path):
    paths = make_session(trials=2)
    plan = json.loads(paths.plan.read_text())
    plan["trials"][1]["clips"]["A"] = "../private/key.json"
    paths.plan.write_text(json.dumps(plan))
    with pytest.raises(InputError, match=r"trials\[1\] is malformed"):
        load_plan(session_paths(paths.root))
    with pytest.raises(InputError, match=r"not a listening session"):
        session_paths(tmp_path)


def test_a_session_in_missing_folders_makes_them_and_a_failed_build_removes_them(make_session, tmp_path, monkeypatch):
    # the project's rule for run folders: missing parents are made; a build that fails leaves nothing behind
    paths = make_session(trials=2, out=tmp_path / "new" / "deeper" / "session")
    assert paths.key.is_file()
    import render.listening.build as build

    def full(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(build, "_write_new_file", full)
    with pytest.raises(InputError, match="could not write the session"):
        make_session(trials=2, out=tmp_path / "other" / "deeper" / "session")
    assert not (tmp_path / "other").exists()
