"""Work in several processes with results identical to one.

Each worker ignores Ctrl-C (the parent stops the pool) and limits its BLAS
to one thread: with N processes on N cores,
BLAS threads of their own only fight over the cores (seen here: two
processes with two OpenBLAS threads each ran ten times slower than one).
"""

from __future__ import annotations


def _worker_init():
    """One BLAS thread, and Ctrl-C left to the parent (which stops the pool cleanly)."""
    import signal

    from threadpoolctl import threadpool_limits

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    threadpool_limits(1)


def pmap(fn, tasks, jobs: int = 1, *, on_done=None):
    """``[fn(t) for t in tasks]``, in ``jobs`` processes when more than one; results in order.

    ``on_done`` (optional) is called with each finished task's result, for progress.
    """
    tasks = list(tasks)
    if jobs <= 1 or len(tasks) <= 1:
        from threadpoolctl import threadpool_limits

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
        return _pool_map(fn, tasks, jobs, on_done)
    finally:
        gc.unfreeze()


def _pool_map(fn, tasks, jobs, on_done):
    from concurrent.futures import ProcessPoolExecutor, as_completed

    results = [None] * len(tasks)
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=_worker_init)
    try:
        futs = {pool.submit(fn, t): i for i, t in enumerate(tasks)}
        for fut in as_completed(futs):
            results[futs[fut]] = fut.result()
            if on_done:
                on_done(results[futs[fut]])
    except BaseException:
        # Ctrl-C or a failed task: drop what has not started, let the running tasks end
        # (their files are written whole or not at all), and leave no worker behind
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    pool.shutdown(wait=True)
    return results


class SideProcess:
    """Light work started at once in a process of its own, or, when ``enabled`` is false, done here and now.

    For work that needs only light imports (numpy), to run on the other core
    while this process imports the heavy modules (scipy.signal, matplotlib:
    about a second, seen here) before it forks its workers. ``submit(fn, *args)``
    returns a future either way. Leaving the ``with`` block stops the process,
    dropping work not yet started.
    """

    def __init__(self, enabled: bool = True):
        self._pool = None
        if enabled:
            from concurrent.futures import ProcessPoolExecutor

            self._pool = ProcessPoolExecutor(max_workers=1, initializer=_worker_init)

    def submit(self, fn, *args):
        if self._pool is not None:
            return self._pool.submit(fn, *args)
        from concurrent.futures import Future

        fut = Future()
        fut.set_result(fn(*args))
        return fut

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
        return False
