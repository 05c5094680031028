"""A pool whose workers got the stop signal too still ends: the case of ``timeout`` and a closed terminal.

Such a signal reaches the whole process group, so the workers get it as well
as the parent. An idle worker waits for its next task holding the task
queue's lock; killed there by the default action it took the lock with it,
and the parent's ``Pool.terminate()`` then waited for ever. The contract is
this project's own (README: "Stopping a run"); no outside source.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from render.parallel import SideProcess, _end_now, _pool

from .conftest import DARK, ODD, REF
from .test_stops import GRACE_S, _kill_group, _start, _stop_and_watch, _wait_for


def _ends_within(action, seconds: float) -> bool:
    done = threading.Event()

    def run():
        action()
        done.set()

    threading.Thread(target=run, daemon=True).start()
    return done.wait(seconds)


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGHUP], ids=["SIGTERM", "SIGHUP"])
def test_an_idle_worker_stopped_by_a_signal_does_not_hang_the_pool(sig):
    pool = _pool(2)
    time.sleep(0.5)  # both workers idle, one of them waiting on the task queue
    workers = list(pool._pool)
    for w in workers:
        os.kill(w.pid, sig)
    for w in workers:
        w.join(5)  # a worker that had set up its handler is gone now (exit code 128 + sig); one still starting may not be

    # the stop path (the pool's own terminate() alone can hang here: it forks replacements)
    assert _ends_within(lambda: _end_now(pool), 20.0), "ending the pool hung after its workers were signalled"
    assert all(w.exitcode is not None for w in workers + list(pool._pool)), "a worker outlived the pool's end"


def test_a_side_process_stopped_by_a_signal_does_not_hang_its_exit():
    side = SideProcess()
    time.sleep(0.5)
    (worker,) = side._pool._pool
    os.kill(worker.pid, signal.SIGTERM)
    worker.join(5)

    def leave():
        try:
            with side:
                raise KeyboardInterrupt  # as the parent's own stop does
        except KeyboardInterrupt:
            pass

    assert _ends_within(leave, 10.0), "leaving a SideProcess hung after its worker was signalled"


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGHUP], ids=["SIGTERM", "SIGHUP"])
def test_clips_stopped_through_its_group_while_the_workers_render(tmp_path, sig):
    # a longer phrase, stopped once the worker processes exist and have had a second to work
    out = tmp_path / "run"
    proc = _start(["clips", REF, ODD, DARK, "--seconds", "20", "--out", out, "--jobs", "2"])
    pgid = proc.pid
    try:

        def members() -> int:
            count = 0
            for d in os.listdir("/proc"):
                if d.isdigit():
                    try:
                        stat = Path(f"/proc/{d}/stat").read_text()
                    except OSError:
                        continue
                    if int(stat[stat.rindex(")") + 2 :].split()[2]) == pgid:
                        count += 1
            return count

        _wait_for(lambda: proc.poll() is not None or members() >= 3, seconds=120)
        time.sleep(1.0)
        left, code, err = _stop_and_watch(proc, sig, "group", survivors=(survivors := []))
    finally:
        _kill_group(pgid)
    assert not left, f"`render clips --jobs 2` still alive {GRACE_S} s after {sig.name} to its group: {survivors}; stderr {err[-500:]!r}"
    assert code in (0, 1) and "Traceback" not in err, (code, err)


def _python_in_own_group(code: str) -> subprocess.Popen:
    """``python -c code`` in a session of its own (so a test can stop its whole group), pipes as text."""
    return subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)


def test_a_clean_up_that_hangs_still_ends_the_run():
    # the last resort (render.parallel.end_after_grace): a stop whose clean-up hangs ends anyway
    code = (
        "import multiprocessing as mp, signal, time\n"
        "from render.cli.group import _stop\n"
        "signal.signal(signal.SIGTERM, _stop)\n"
        "p = mp.get_context('fork').Process(target=time.sleep, args=(600,)); p.start()\n"
        "print(p.pid, flush=True)\n"
        "try:\n    time.sleep(600)\n"
        "except KeyboardInterrupt:\n    time.sleep(600)  # a clean-up that never ends\n"
    )
    proc = _python_in_own_group(code)
    try:
        child = int(proc.stdout.readline())
        began = time.monotonic()
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=GRACE_S + 5)
        took = time.monotonic() - began
        assert proc.returncode == 1 and "Aborted!" in proc.stderr.read() and took < GRACE_S, (proc.returncode, took)

        def gone() -> bool:
            try:
                return Path(f"/proc/{child}/stat").read_text().split(") ")[1].startswith("Z")
            except OSError:
                return True

        assert _wait_for(gone, seconds=2.0), "the child outlived the run"
    finally:
        _kill_group(proc.pid)


def _hold_and_die(lock) -> None:
    lock.acquire()
    os.kill(os.getpid(), signal.SIGKILL)


def test_a_result_lock_left_held_by_a_killed_process_does_not_hang_the_pools_end():
    # a worker killed while it writes its result leaves the result queue's lock held; here a process
    # forked with the pool's lock takes it and is killed the same way (the task queue's lock, held by
    # an idle worker, is the SIGTERM case above)
    import multiprocessing

    pool = _pool(2)
    time.sleep(0.5)
    p = multiprocessing.get_context("fork").Process(target=_hold_and_die, args=(pool._outqueue._wlock,))
    p.start()
    try:
        p.join(10)
        assert p.exitcode == -signal.SIGKILL
    finally:
        if p.exitcode is None:
            p.kill()
    assert _ends_within(lambda: _end_now(pool), 20.0), "ending the pool hung on a dead process's result-queue lock"


def test_a_stop_raised_where_python_ignores_exceptions_is_not_lost():
    # a signal landing in a finaliser or a fork hook: Python would print "Exception ignored" and drop
    # the stop; render.cli.group._stop_swallowed sends it again, to stop in ordinary code, silently
    code = (
        "import signal, sys, time\n"
        "from render.cli import group\n"
        "signal.signal(signal.SIGTERM, group._stop)\n"
        "sys.unraisablehook = group._stop_swallowed\n"
        "class Slow:\n    def __del__(self):\n        time.sleep(2)\n"
        "d = Slow()\nprint('ready', flush=True)\n"
        "try:\n    del d\n    time.sleep(5)\n    print('not stopped', flush=True)\n"
        "except KeyboardInterrupt:\n    print('stopped', flush=True)\n"
    )
    proc = _python_in_own_group(code)
    try:
        assert proc.stdout.readline().strip() == "ready"
        time.sleep(0.5)
        proc.send_signal(signal.SIGTERM)
        out, err = proc.communicate(timeout=20)
    finally:
        _kill_group(proc.pid)
    assert out.strip() == "stopped" and "Exception ignored" not in err and "Traceback" not in err, (out, err)


def test_ending_the_pool_leaves_a_live_holders_lock_alone():
    # the pool's own task thread takes the result queue's lock for a moment to send its end marker;
    # ending the pool just then must wait for it, not free it under the holder (whose own release
    # would then fail with "semaphore or lock released too many times" and a traceback)
    pool = _pool(2)
    time.sleep(0.5)
    lock, held, failed = pool._outqueue._wlock, threading.Event(), []

    def hold_briefly():
        with lock:
            held.set()
            time.sleep(0.2)

    def holder():
        try:
            hold_briefly()
        except ValueError as exc:
            failed.append(exc)

    t = threading.Thread(target=holder)
    t.start()
    held.wait(5.0)
    assert _ends_within(lambda: _end_now(pool), 20.0)
    t.join(5.0)
    assert not failed, failed
