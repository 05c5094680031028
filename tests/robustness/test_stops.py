"""A stopped run leaves no process and no partial file: SIGTERM, SIGHUP and SIGKILL, each sent two ways.

To the parent alone, as a supervisor or ``timeout`` does, and to the whole
process group, as a closed terminal does. The runs: ``render clips`` and
``render bias`` (worker processes and a side process), ``render hum
--tolerance --jobs 2`` (a Monte Carlo in workers) and ``render listen`` (a
server). Five seconds after the signal no process of the run may be left; no
file under a final name may be partial; a folder left with final files in it
is marked incomplete (``INCOMPLETE.txt``) unless the run finished.

The contract is this project's own (README: "Stopping a run"); no outside source.
"""

from __future__ import annotations

import contextlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from .conftest import DARK, ODD, PHRASE, REF, ROOT, check_outputs

GRACE_S = 5.0  # after the signal, every process of the run must be gone by then
SIGNALS = (signal.SIGTERM, signal.SIGHUP, signal.SIGKILL)
WAYS = ("parent", "group")


def _start(args, cwd=ROOT):
    env = {**os.environ, "MPLBACKEND": "Agg"}
    return subprocess.Popen([sys.executable, "-m", "render", *map(str, args)], cwd=cwd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)


def _group_alive(pgid: int) -> bool:
    """Whether any live (not zombie) process is left in the group."""
    for proc_dir in Path("/proc").iterdir():
        if not proc_dir.name.isdigit():
            continue
        try:
            stat = (proc_dir / "stat").read_text()
        except OSError:
            continue
        fields = stat[stat.rindex(")") + 2 :].split()
        state, group = fields[0], int(fields[2])
        if group == pgid and state != "Z":
            return True
    return False


def _kill_group(pgid: int) -> None:
    with contextlib.suppress(ProcessLookupError):
        os.killpg(pgid, signal.SIGKILL)


def _describe_group(pgid: int) -> list[str]:
    """What is left of the group: pid, state and kernel wait channel of each live process."""
    found = []
    for proc_dir in Path("/proc").iterdir():
        if proc_dir.name.isdigit():
            try:
                stat = (proc_dir / "stat").read_text()
                wchan = (proc_dir / "wchan").read_text()
            except OSError:
                continue
            fields = stat[stat.rindex(")") + 2 :].split()
            if int(fields[2]) == pgid and fields[0] != "Z":
                found.append(f"{proc_dir.name} {fields[0]} {wchan}")
    return found


def _stop_and_watch(proc, sig, way, survivors=None):
    """Send ``sig`` (to the parent, or to the group), then wait up to GRACE_S for every process of the run to go.

    ``survivors`` (a list, optional) receives a description of what was left, for the failure message.
    """
    pgid = proc.pid
    try:
        if way == "parent":
            proc.send_signal(sig)
        else:
            os.killpg(pgid, sig)
        began = time.monotonic()
        with contextlib.suppress(subprocess.TimeoutExpired):
            proc.wait(timeout=GRACE_S)
        while _group_alive(pgid) and time.monotonic() - began < GRACE_S:
            time.sleep(0.05)
        left = _group_alive(pgid)
        if left and survivors is not None:
            survivors.extend(_describe_group(pgid))
        out, err = proc.communicate(timeout=30) if proc.poll() is not None else ("", "")
        return left, proc.returncode, err
    finally:
        _kill_group(pgid)
        with contextlib.suppress(Exception):
            proc.communicate(timeout=30)


def _serving_url(proc, seconds=60.0) -> str | None:
    """The address the server printed on its first line (``serving … at http://…``) within ``seconds``, or None: on a loaded
    machine the import alone can take longer than any fixed pause, and a stop before the server runs is an ordinary
    interrupted start (exit 1), not the server's end."""
    import re
    import threading

    first: list[str] = []
    reader = threading.Thread(target=lambda: first.append(proc.stdout.readline()), daemon=True)
    reader.start()
    reader.join(seconds)
    found = re.search(r"http://127\.0\.0\.1:\d+/", first[0]) if first and proc.poll() is None else None
    return found.group(0) if found else None


def _answer(url: str, answer: dict) -> None:
    """POST one answer as the listening page does (same-origin)."""
    import json
    import urllib.request

    req = urllib.request.Request(url + "api/answer", data=json.dumps(answer).encode(), headers={"Content-Type": "application/json", "Origin": url.rstrip("/")}, method="POST")
    with urllib.request.urlopen(req, timeout=30) as res:
        assert res.status == 200, res.status


def _wait_for(cond, seconds=60.0):
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if cond():
            return True
        time.sleep(0.01)
    return False


def _check_folder(out: Path, finished: bool) -> None:
    if not out.exists():
        return
    names = check_outputs(out)  # every final name reads whole
    if names and not finished:
        assert "INCOMPLETE.txt" in names, names
    if finished:
        assert "INCOMPLETE.txt" not in names, names


def _expect_code(code, sig, finished_early):
    """A run that finished before the signal exits 0; a killed one by the signal; one stopped by SIGTERM or SIGHUP as Ctrl-C (exit 1)."""
    if finished_early:
        return code == 0
    return code == (-signal.SIGKILL if sig == signal.SIGKILL else 1)


RUNS = {
    "clips": lambda out: ["clips", REF, ODD, DARK, "--dry", PHRASE, "--seconds", "3", "--out", out, "--jobs", "2"],
    "bias": lambda out: ["bias", REF, "--ratios", "0.3,0.4,0.5,0.6,0.7", "--battery", "9,7", "--seconds", "2", "--jobs", "2", "--out", out],
    "hum": lambda out: ["hum", ODD, "--tolerance", "1%", "--trials", "1000000", "--jobs", "2", "--out", out],
}


@pytest.mark.parametrize("way", WAYS)
@pytest.mark.parametrize("sig", SIGNALS, ids=[s.name for s in SIGNALS])
@pytest.mark.parametrize("command", sorted(RUNS))
def test_a_stopped_run_leaves_no_process_and_no_partial_file(tmp_path, command, sig, way):
    out = tmp_path / "run"
    proc = _start(RUNS[command](out))
    # stop it once its folder exists and holds something (the work is under way)
    _wait_for(lambda: proc.poll() is not None or (out.exists() and any(out.iterdir())))
    time.sleep(0.2)
    finished_early = proc.poll() == 0
    left, code, err = _stop_and_watch(proc, sig, way)
    assert not left, f"processes of `render {command}` still alive {GRACE_S} s after {sig.name} to the {way}"
    assert _expect_code(code, sig, finished_early), (code, err)
    if sig != signal.SIGKILL and code == 1:
        assert "Aborted!" in err and "Traceback" not in err, err
        assert err.splitlines()[-1] == "Aborted!" and "" not in err.splitlines(), err  # README: "one line `Aborted!`", no empty line before it
        # README: "A stopped run removes its temporary files" (only SIGKILL leaves them), in its folder and beside it
        assert [p.name for p in tmp_path.rglob(".tmp-*")] == []
    _check_folder(out, finished=finished_early)


@pytest.mark.parametrize("way", WAYS)
@pytest.mark.parametrize("sig", SIGNALS, ids=[s.name for s in SIGNALS])
def test_a_stopped_listening_server_leaves_no_process(make_session, sig, way):
    paths = make_session(method="abx", trials=3)
    proc = _start(["listen", paths.root, "--no-browser", "--port", "0"])
    url = _serving_url(proc)
    assert url, "render listen did not start serving within 60 s"
    _answer(url, {"trial": 0, "answer": "A", "comment": "before the stop"})  # the answer log holds a line when it stops
    left, code, err = _stop_and_watch(proc, sig, way)
    assert not left, f"`render listen` still alive {GRACE_S} s after {sig.name} to the {way}"
    if sig == signal.SIGKILL:
        assert code == -signal.SIGKILL
    else:
        assert code == 0 and "Traceback" not in err, (code, err)  # the server stops as on Ctrl-C and says so
    # the log reads whole: every line a whole answer, none torn (render.listening.answers reads it strictly)
    from render.listening.answers import read_answers
    from render.listening.layout import load_plan

    assert [a["answer"] for a in read_answers(paths, load_plan(paths))] == ["A"]
    assert paths.answers.read_bytes().endswith(b"\n")


def test_workers_die_with_a_killed_parent(tmp_path):
    """SIGKILL to the parent alone: its workers notice at once (PR_SET_PDEATHSIG) and publish nothing more."""
    out = tmp_path / "run"
    proc = _start(RUNS["clips"](out))
    assert _wait_for(lambda: out.exists() and any(out.iterdir()))
    pgid = proc.pid
    try:
        proc.kill()
        proc.wait(timeout=10)
        assert _wait_for(lambda: not _group_alive(pgid), seconds=2.0), "a worker outlived its killed parent by 2 s"
        before = sorted(p.name for p in out.iterdir())
        time.sleep(1.0)
        assert sorted(p.name for p in out.iterdir()) == before  # nothing published after the kill
        _check_folder(out, finished=False)
    finally:
        _kill_group(pgid)
