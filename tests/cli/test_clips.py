"""`render clips`: files, records, determinism, parallel runs, refusals."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from render.analysis.loudness import integrated_loudness
from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
ODD = ROOT / "models" / "odd-pair.toml"
DRY = ROOT / "dry_signals" / "default.toml"
KEYS = {"design", "sample_rate", "volts_full_scale", "seconds", "dry", "rig", "seed", "software_version", "measurements"}
MEASURES = {"resonance_hz", "resonance_db", "q", "bias_v", "headroom_up_v", "headroom_down_v", "peak_v", "loudness_lufs"}


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def clips(out, *extra, models=(REF, ODD)):
    return run("clips", *models, "--dry", DRY, "--seconds", 1.0, "--out", out, *extra)


def test_clips_writes_every_file_with_the_recorded_keys(tmp_path):
    out = tmp_path / "run"
    res = clips(out, "--passive")
    assert res.exit_code == 0, res.output
    assert "low volume" in res.output
    for stem in ("studio-reference", "odd-pair"):
        for suffix in (".wav", "-passive.wav", ".json", "-response.png", "-spectrum.png", "-spectrogram.png"):
            assert (out / f"{stem}{suffix}").exists(), suffix
        rec = json.loads((out / f"{stem}.json").read_text())
        assert KEYS <= set(rec) and MEASURES <= set(rec["measurements"])
        info = sf.info(out / f"{stem}.wav")
        assert (info.samplerate, info.subtype, info.frames) == (48000, "FLOAT", 48000)
    a = json.loads((out / "studio-reference.json").read_text())
    b = json.loads((out / "odd-pair.json").read_text())
    assert a["volts_full_scale"] == b["volts_full_scale"]  # one scale for the whole run
    # the sample is volts / volts_full_scale
    x, _ = sf.read(out / "studio-reference.wav")
    assert np.max(np.abs(x)) * a["volts_full_scale"] == pytest.approx(a["measurements"]["peak_v"], rel=1e-6)
    assert (out / "summary.md").exists() and (out / "responses.png").exists()
    assert "| odd-pair |" in (out / "summary.md").read_text()


def test_renders_are_byte_identical_and_parallel_equals_serial(tmp_path):
    assert clips(tmp_path / "a").exit_code == 0
    assert clips(tmp_path / "b", "--jobs", "2").exit_code == 0
    names = sorted(p.name for p in (tmp_path / "a").iterdir())
    assert names == sorted(p.name for p in (tmp_path / "b").iterdir()) and len(names) == 15  # with .run-files, the list of what the run wrote
    for name in names:  # audio, records, summary and every plot (drawn in other processes, on kept figures)
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes(), name


def test_hum_is_audible_in_a_mismatched_design_and_can_be_left_out(tmp_path):
    assert clips(tmp_path / "h", "--seconds", 2.0, models=(ODD,)).exit_code == 0
    assert clips(tmp_path / "n", "--seconds", 2.0, "--no-hum", models=(ODD,)).exit_code == 0
    h, fs = sf.read(tmp_path / "h" / "odd-pair.wav")
    n, _ = sf.read(tmp_path / "n" / "odd-pair.wav")
    diff = h - n  # only the hum differs
    spec = np.abs(np.fft.rfft(diff[fs // 2 :] * np.hanning(diff.size - fs // 2)))
    f = np.fft.rfftfreq(diff.size - fs // 2, 1 / fs)
    assert abs(f[np.argmax(spec)] - 50) <= 2 or abs(f[np.argmax(spec)] - 250) <= 2
    assert np.sqrt(np.mean(diff**2)) > 1e-7


def test_a_quiet_clips_loudness_is_its_wav_as_written(tmp_path):
    # BS.1770-4 eq. 5 gates blocks under −70 LKFS absolutely, so the WAV's loudness is not the 1 V figure
    # shifted by its full scale when a quiet clip's blocks cross the gate. Reference: pyloudnorm's meter
    # ("DeMan": BS.1770-4's analog prototypes) on the WAV read back.
    import pyloudnorm

    res = run("clips", REF, "--dry", DRY, "--strength", "0.1mm", "--no-hum", "--volts-full-scale", 10, "--no-plots", "--out", tmp_path / "q")
    assert res.exit_code == 0, res.output
    m = json.loads((tmp_path / "q" / "studio-reference.json").read_text())["measurements"]
    x, fs = sf.read(tmp_path / "q" / "studio-reference.wav")
    wav = pyloudnorm.Meter(fs, filter_class="DeMan").integrated_loudness(x)
    assert m["loudness_lufs"] == pytest.approx(wav, abs=1e-6)
    assert abs(m["loudness_lufs_1v_full_scale"] - 20 - wav) > 0.05  # the shifted figure is off here (0.08 LU when written)


def test_loudness_meter_self_check():
    # ITU-R BS.1770-4: a 997 Hz full-scale sine in one channel reads -3.01 LKFS
    fs = 48000
    t = np.arange(10 * fs) / fs
    x = np.sin(2 * np.pi * 997 * t)
    assert integrated_loudness(x, sample_rate=fs) == pytest.approx(-3.01, abs=0.01)


def test_refusals_touch_nothing(tmp_path):
    out = tmp_path / "taken"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    res = clips(out)
    assert res.exit_code == 1 and "folder exists and is not empty; pass --overwrite" in res.output
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]
    res = run("clips", REF, "--dry", tmp_path / "missing.toml", "--out", tmp_path / "x")
    assert res.exit_code == 1 and "no such file" in res.output and not (tmp_path / "x").exists()
    bad = tmp_path / "bad.toml"
    bad.write_text(REF.read_text().replace('battery = "9V"', 'battery = "9F"'))
    res = run("clips", bad, "--dry", DRY, "--out", tmp_path / "y")
    assert res.exit_code == 1 and "unit 'F' does not fit a voltage" in res.output and not (tmp_path / "y").exists()
    tiny = tmp_path / "tiny.toml"  # a phrase shorter than one sample: refused as it is read, before any folder
    tiny.write_text("seconds = 1e-6\n[[note]]\ntime = 0\nstring = 1\nfret = 0\n")
    res = run("clips", REF, "--dry", tiny, "--out", tmp_path / "z")
    assert res.exit_code == 1 and res.output.strip().splitlines() == [
        f"Error: {tiny}: seconds=1e-06: must be >= 0.05 s and <= 600 s; a phrase shorter than 0.05 s holds no more than a pluck's first periods: give seconds = 0.05 or more"
    ]
    assert not (tmp_path / "z").exists()


def test_a_design_failing_in_a_worker_is_one_line_and_leaves_no_process(tmp_path, monkeypatch):
    import multiprocessing

    import render.runs.clips as clips_module
    from render.errors import InputError

    real = clips_module.render_design

    def fails_for_odd(design, *args, **kwargs):
        if design.name == "odd-pair":
            raise InputError(f"{design.source}: the render of {design.name} is not finite (made to fail by this test)")
        return real(design, *args, **kwargs)

    monkeypatch.setattr(clips_module, "render_design", fails_for_odd)  # forked workers inherit it
    res = CliRunner().invoke(main, ["clips", str(REF), str(ODD), "--dry", str(DRY), "--seconds", "0.5", "--out", str(tmp_path / "f"), "--jobs", "2"])
    assert res.exit_code == 1
    assert "odd-pair is not finite (made to fail by this test)" in res.output and "Traceback" not in res.output
    assert multiprocessing.active_children() == []  # the workers and the side process are stopped and reaped
    folder = tmp_path / "f"  # gone if nothing was written before the failure, else marked incomplete
    assert not folder.exists() or not [p.name for p in folder.iterdir() if p.name.startswith(".tmp-")]


def test_parallel_equals_serial_on_the_whole_default_phrase(tmp_path):
    # at full length the synthesis's matrix products are large enough for a multi-threaded BLAS to
    # split them (and so to sum in another order): every process sums with one BLAS thread, so
    # --jobs 1 and --jobs 2 still write the same bytes (README "Speed and memory"). Run as commands
    # of their own: the test process's BLAS may already be held to one thread.
    import subprocess
    import sys

    for folder, jobs in (("a", "1"), ("b", "2")):
        args = ["clips", str(REF), str(ODD), "--dry", str(DRY), "--no-plots", "--jobs", jobs, "--out", str(tmp_path / folder)]
        done = subprocess.run([sys.executable, "-c", "from render.cli import run; run()", *args], capture_output=True, text=True, timeout=300)
        assert done.returncode == 0, done.stderr
    for name in ("studio-reference.wav", "odd-pair.wav", "studio-reference.json", "odd-pair.json", "summary.md"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes(), name


def test_the_default_designs_warn_once_for_the_ndfeb_demo(tmp_path):
    # The README's main-job example: one warning line on standard error, the NdFeB demo's strings at rest
    # past half their steel's saturation (render.analysis.sense.NEAR_SATURATION); every other shipped design is quiet.
    res = run("clips", *sorted((ROOT / "models").glob("*.toml")), "--dry", DRY, "--seconds", 0.5, "--no-plots", "--out", tmp_path / "all")
    assert res.exit_code == 0, res.output
    warned = [line for line in res.stderr.splitlines() if line.startswith("warning:")]
    assert len(warned) == 1 and warned[0].startswith("warning: slipway-magnet-blades: [construction] strings 1, 2, 3, 4, 5 at rest are polarised past half"), warned
