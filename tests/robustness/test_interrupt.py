"""Interrupted runs: ``render clips`` stopped by SIGINT (Ctrl-C) or SIGKILL (a
killed terminal) at several moments of a three-design run. Afterwards no file
under a final name is truncated or unreadable, and a rerun with --overwrite
completes.

The command runs as a subprocess in a session of its own, and each signal goes
to that process group, as a terminal sends Ctrl-C to everything it started
(the worker processes included); the group is always killed and reaped at the end.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest

from .conftest import DARK, ODD, PHRASE, REF, ROOT, check_outputs

MODELS = (REF, ODD, DARK)
STEMS = [m.stem for m in MODELS]
SECONDS = 2.0  # long enough that the stop lands mid-run on a fast machine (at 0.5 s, runs ended before it)
FRAMES = 96000  # 2 s at 48 kHz
PER_DESIGN = (".wav", ".json", "-response.png", "-spectrum.png", "-spectrogram.png")
EVERY_FILE = sorted([f"{s}{x}" for s in STEMS for x in PER_DESIGN] + ["index-clips.js", "index.html", "responses.png", "summary.md"])


def start(out, *extra):
    env = {**os.environ, "MPLBACKEND": "Agg"}
    cmd = [sys.executable, "-m", "render", "clips", *map(str, MODELS), "--dry", str(PHRASE), "--seconds", str(SECONDS), "--out", str(out), *extra]
    return subprocess.Popen(cmd, cwd=ROOT, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)


def finals(out):
    try:
        return [p for p in out.iterdir() if not p.name.startswith(".tmp-")]
    except FileNotFoundError:
        return []


def stop_group(proc, wait=0.0):
    """Wait up to ``wait`` seconds for the run to end by itself, then kill its whole group and reap it."""
    try:
        return proc.communicate(timeout=wait or 0.01)
    except subprocess.TimeoutExpired:
        pass
    if proc.poll() is None:
        try:
            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
    out, err = proc.communicate(timeout=60)
    return out, err


def interrupt(out, sig, after_files, *extra, delay=0.0):
    """Start a run, wait until ``after_files`` final files exist (0: until the folder exists)
    and ``delay`` seconds more, then send ``sig`` to its process group."""
    proc = start(out, *extra)
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and proc.poll() is None:
            if out.exists() and len(finals(out)) >= after_files:
                break
            time.sleep(0.002)
        time.sleep(delay)
        if proc.poll() is None:
            os.killpg(proc.pid, sig)
        try:
            proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            pass
    finally:
        _, err = stop_group(proc)
    return proc.returncode, err


CASES = [
    # (signal, final files to wait for, extra options); with 0, 0.3 s after the folder appears
    (signal.SIGINT, 0, ("--jobs", "1")),  # while the designs render
    (signal.SIGINT, 1, ()),  # the workers are writing plots
    (signal.SIGKILL, 1, ("--jobs", "1")),
    (signal.SIGKILL, 7, ()),  # part-way through the files
]


@pytest.mark.parametrize("sig, after, extra", CASES, ids=[f"{s.name}-after-{n}-files{'-serial' if e else ''}" for s, n, e in CASES])
def test_an_interrupted_run_leaves_only_whole_files(tmp_path, sig, after, extra):
    out = tmp_path / "run"
    code, err = interrupt(out, sig, after, *extra, delay=0.3 if after == 0 else 0.0)
    if code == 0:
        pytest.skip("the run finished before the signal arrived (a very fast machine)")
    if sig == signal.SIGINT:
        assert code == 1 and "Aborted!" in err and "Traceback" not in err, err
    else:
        assert code == -signal.SIGKILL
    if out.exists():
        names = check_outputs(out, frames=FRAMES)  # every final name reads whole
        assert set(names) <= set(EVERY_FILE) | {"INCOMPLETE.txt"}
        assert not names or "INCOMPLETE.txt" in names  # a stopped run's folder never looks finished
        if sig == signal.SIGINT:  # Ctrl-C is seen: the temporary files go too
            assert not [p.name for p in out.iterdir() if p.name.startswith(".tmp-")]


def snapshot(folder):
    return {p.name: (p.stat().st_mtime_ns, p.read_bytes()) for p in folder.iterdir()}


def test_a_rerun_with_overwrite_completes_after_a_kill(tmp_path):
    out = tmp_path / "run"
    interrupt(out, signal.SIGKILL, 4)
    assert out.exists()
    if any(out.iterdir()):
        # without --overwrite the folder is refused, and nothing in it is touched
        before = snapshot(out)
        proc = start(out)
        _, err = stop_group(proc, wait=60)
        assert proc.returncode == 1 and "folder exists and is not empty; pass --overwrite" in err, err
        assert snapshot(out) == before
    proc = start(out, "--overwrite")
    _, err = stop_group(proc, wait=120)
    assert proc.returncode == 0, err
    assert check_outputs(out, frames=FRAMES) == EVERY_FILE


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGTERM], ids=["SIGKILL", "SIGTERM"])
def test_an_overwrite_after_a_stop_leaves_only_the_new_runs_files(tmp_path, sig):
    # the README's advice after a stop: "Run the command again with --overwrite". A rerun with other designs and
    # no plots must not keep the stopped run's WAVs, plots or .tmp- files beside its own, nor read as finished
    out = tmp_path / "run"
    code, err = interrupt(out, sig, 4, "--jobs", "2")
    if code == 0:
        pytest.skip("the run finished before the signal arrived (a very fast machine)")
    left = {p.name for p in out.iterdir()}
    assert "INCOMPLETE.txt" in left, (left, err)
    (out / "notes.txt").write_text("mine\n", encoding="utf-8")  # the user's own file, put there after the stop
    tmp = out / ".tmp-odd-pair.wav.abcdefgh"  # as a writer killed mid-file leaves one (SIGTERM's clean-up removes its own)
    tmp.write_bytes(b"RIFF")
    mine = ["ember-dark.json", "ember-dark.wav", "index-clips.js", "index.html", "summary.md"]
    assert left - set(mine) - {"INCOMPLETE.txt", ".run-files"}, left  # the stopped run left files of its own
    env = {**os.environ, "MPLBACKEND": "Agg"}
    cmd = [sys.executable, "-m", "render", "clips", str(DARK), "--dry", str(PHRASE), "--seconds", "0.5", "--no-plots", "--out", str(out), "--overwrite"]
    res = subprocess.run(cmd, cwd=ROOT, env=env, capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stderr
    assert sorted(p.name for p in out.iterdir()) == sorted([".run-files", "notes.txt", *mine])
    assert check_outputs(out, frames=24000) == sorted(["notes.txt", *mine])
    assert (out / ".run-files").read_text(encoding="utf-8").splitlines() == mine
