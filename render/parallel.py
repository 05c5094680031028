"""Work in several processes with results identical to one, and no process left behind.

Each worker
- limits its BLAS to one thread: with N processes on N cores, BLAS threads of
  their own only fight over the cores (seen here: two processes with two
  OpenBLAS threads each ran ten times slower than one); the serial path does
  the same, so results do not depend on ``--jobs`` or the core count;
- ignores Ctrl-C, which a terminal sends to the whole process group: the
  parent stops the pool;
- dies with its parent: on Linux the kernel sends it SIGKILL when the parent
  dies (``prctl(PR_SET_PDEATHSIG)``); elsewhere a watcher thread notices
  within half a second. A parent killed outright (SIGKILL, a power cut)
  therefore leaves no worker rendering on.

When the parent is stopped (Ctrl-C, SIGTERM, SIGHUP: see :mod:`render.cli`)
or a task fails, the pool is terminated at once rather than left to finish
its running tasks. Files are written under temporary names and renamed when
whole (:mod:`render.io.atomic`), so a worker stopped mid-file leaves at most
a ``.tmp-*`` file, never a partial file under a final name.
"""

from __future__ import annotations

import contextlib
import os
import signal
import threading
import time
from collections.abc import Callable, Iterable
from typing import Any

PR_SET_PDEATHSIG = 1  # linux/prctl.h
WATCH_SECONDS = 0.5  # how often a worker without PR_SET_PDEATHSIG looks for its parent


def _die_with_parent(parent_pid: int) -> None:
    """Make this process end when ``parent_pid`` does (at once on Linux, within WATCH_SECONDS elsewhere)."""
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        if libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0) != 0:
            raise OSError(ctypes.get_errno(), "prctl")
    except (OSError, AttributeError):

        def watch() -> None:
            while os.getppid() == parent_pid:
                time.sleep(WATCH_SECONDS)
            os._exit(1)

        threading.Thread(target=watch, name="render-parent-watch", daemon=True).start()
    if os.getppid() != parent_pid:  # the parent died before the request took effect
        os._exit(1)


def _leave(signum: int, frame: Any) -> None:
    raise SystemExit(128 + signum)


def _worker_init(parent_pid: int) -> None:
    """One BLAS thread, Ctrl-C left to the parent, SIGTERM and SIGHUP fatal, death with the parent.

    SIGTERM and SIGHUP end the worker by an exception rather than the default
    action: an idle worker waits for its next task holding the pool's task-queue
    lock, and a worker killed there takes the lock with it, so the parent's
    ``Pool.terminate()`` would wait for it forever. The exception leaves through
    the queue's ``with`` block and so releases the lock. (A signal to the whole
    group, as from ``timeout`` or a closed terminal, reaches the workers too.)
    """
    from threadpoolctl import threadpool_limits

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, _leave)
    signal.signal(signal.SIGHUP, _leave)
    _die_with_parent(parent_pid)
    threadpool_limits(1)


LOCK_WAIT_S = 0.5  # a pool lock not free after this long is held by a killed worker (a live holder keeps it for a send)
STOP_GRACE_S = 3.0  # after a stop signal, how long the clean-up may take before the run is ended outright


def _children() -> list[int]:
    """This process's child processes (workers, side process): from /proc on Linux, else multiprocessing's list."""
    me = os.getpid()
    proc = "/proc"
    if os.path.isdir(proc):
        found = []
        for name in os.listdir(proc):
            if name.isdigit():
                try:
                    with open(f"{proc}/{name}/stat", encoding="ascii", errors="replace") as fh:
                        stat = fh.read()
                except OSError:
                    continue
                if int(stat[stat.rindex(")") + 2 :].split()[1]) == me:
                    found.append(int(name))
        return found
    import multiprocessing

    return [p.pid for p in multiprocessing.active_children() if p.pid is not None]


def end_after_grace(seconds: float = STOP_GRACE_S) -> None:
    """Make sure a stopped run ends: if this process still runs ``seconds`` from now, kill its children and exit.

    Called on the first stop signal (:mod:`render.cli`). The clean-up (the
    pool's end, removing temporary files) normally takes a fraction of a
    second; should any part of it hang, the run still ends with "Aborted!"
    and exit code 1, its workers killed (SIGKILL), leaving at worst
    ``.tmp-…`` files, never a partial file under a final name.
    """

    def last_resort() -> None:
        time.sleep(seconds)
        for pid in _children():
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGKILL)
        try:
            os.write(2, b"Aborted!\n")
        finally:
            os._exit(1)

    threading.Thread(target=last_resort, name="render-stop-grace", daemon=True).start()


def _pool(processes: int):
    import multiprocessing

    # fork: the workers share what the parent has imported (scipy.signal, matplotlib: about a second)
    return multiprocessing.get_context("fork").Pool(processes, initializer=_worker_init, initargs=(os.getpid(),))


def _end_now(pool: Any) -> None:
    """End ``pool`` at once, also when its workers got the stop signal as well.

    A signal to the whole process group (``timeout``, a closed terminal)
    reaches the workers too. The pool's own ``terminate()`` can then wait for
    ever: it replaces workers that died, and a replacement forked at that
    moment may hang before it can take a signal; and a worker killed while
    waiting for a task takes the task queue's lock with it (one killed while
    writing its result, the result queue's). So: no more replacements, SIGKILL
    to every worker, those locks freed if a dead worker holds them, and only
    then the pool's own clean-up. (This uses
    ``multiprocessing.pool`` internals that are the same from Python 3.8 to
    3.13.)
    """
    from multiprocessing.pool import TERMINATE

    handler = getattr(pool, "_worker_handler", None)
    if handler is not None:
        handler._state = TERMINATE
        pool._change_notifier.put(None)
        handler.join(5.0)
    for worker in list(pool._pool):
        if worker.exitcode is None:
            worker.kill()
    for worker in list(pool._pool):
        worker.join(5.0)
    # the locks a worker killed mid-way keeps for ever: reading a task, writing a result. The pool's own
    # task thread also takes the result lock, for a moment, to send its end marker; so wait a little
    # for a lock before taking it as a dead worker's (releasing a live holder's lock would make that
    # holder's own release fail)
    for lock in (pool._inqueue._rlock, pool._outqueue._wlock):
        if lock is not None:
            lock.acquire(timeout=LOCK_WAIT_S)  # got it, or its holder is dead: either way it ends free
            lock.release()
    pool.terminate()
    pool.join()


def _indexed(args: tuple) -> tuple[int, Any]:
    fn, i, task = args
    return i, fn(task)


def pmap(fn: Callable[[Any], Any], tasks: Iterable[Any], jobs: int = 1, *, on_done: Callable[[Any], None] | None = None) -> list[Any]:
    """``[fn(t) for t in tasks]``, in ``jobs`` processes when more than one; results in order.

    ``fn`` must be a module-level function. ``on_done`` (optional) is called
    with each finished task's result, in the order they finish, for progress.
    """
    from threadpoolctl import threadpool_limits

    tasks = list(tasks)
    if jobs <= 1 or len(tasks) <= 1:
        # one BLAS thread here too: a multi-threaded BLAS sums in another order, and the
        # results must not depend on --jobs or on the machine's core count
        out = []
        with threadpool_limits(1):
            for t in tasks:
                out.append(fn(t))
                if on_done:
                    on_done(out[-1])
        return out
    import gc

    # what the parent holds now is shared with the forked workers: frozen, their collections
    # skip it and do not touch (and so copy) its pages; the parent unfreezes once the pool is done
    gc.freeze()
    try:
        return _pool_map(fn, tasks, min(jobs, len(tasks)), on_done)
    finally:
        gc.unfreeze()


def _pool_map(fn: Callable[[Any], Any], tasks: list[Any], jobs: int, on_done: Callable[[Any], None] | None) -> list[Any]:
    results: list[Any] = [None] * len(tasks)
    pool = None
    try:
        pool = _pool(jobs)
        for i, value in pool.imap_unordered(_indexed, [(fn, i, t) for i, t in enumerate(tasks)]):
            results[i] = value
            if on_done:
                on_done(value)
    except BaseException:
        # a stop (Ctrl-C, SIGTERM, SIGHUP) or a failed task: end every worker now
        if pool is not None:
            _end_now(pool)
        raise
    pool.close()
    pool.join()
    return results


class _Done:
    """The result of work done here and now, with the same ``result()`` as a pool's."""

    def __init__(self, value: Any):
        self._value = value

    def result(self) -> Any:
        return self._value


class _Pending:
    def __init__(self, handle: Any):
        self._handle = handle

    def result(self) -> Any:
        return self._handle.get()


class SideProcess:
    """Light work started at once in a process of its own, or, when ``enabled`` is false, done here and now.

    For work that needs only light imports (numpy), to run on the other core
    while this process imports the heavy modules (scipy.signal, matplotlib:
    about a second, seen here) before it forks its workers. ``submit(fn, *args)``
    returns an object whose ``result()`` gives the value either way. Leaving
    the ``with`` block ends the process: normally after its work, at once
    when the block is left by an exception (a stop included).
    """

    def __init__(self, enabled: bool = True):
        self._pool = _pool(1) if enabled else None

    def submit(self, fn: Callable[..., Any], *args: Any) -> _Done | _Pending:
        if self._pool is not None:
            return _Pending(self._pool.apply_async(fn, args))
        from threadpoolctl import threadpool_limits

        with threadpool_limits(1):  # as in the side process and every worker: the same sums, the same bits
            return _Done(fn(*args))

    def __enter__(self) -> SideProcess:
        return self

    def __exit__(self, kind: Any, *exc: Any) -> None:
        if self._pool is not None:
            if kind is None:
                self._pool.close()
                self._pool.join()
            else:
                _end_now(self._pool)
