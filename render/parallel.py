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

    ``on_done`` (optional) is called once per finished task, for progress.
    """
    tasks = list(tasks)
    if jobs <= 1 or len(tasks) <= 1:
        out = []
        for t in tasks:
            out.append(fn(t))
            if on_done:
                on_done()
        return out
    from concurrent.futures import ProcessPoolExecutor, as_completed

    results = [None] * len(tasks)
    pool = ProcessPoolExecutor(max_workers=jobs, initializer=_worker_init)
    try:
        futs = {pool.submit(fn, t): i for i, t in enumerate(tasks)}
        for fut in as_completed(futs):
            results[futs[fut]] = fut.result()
            if on_done:
                on_done()
    except BaseException:
        # Ctrl-C or a failed task: drop what has not started, let the running tasks end
        # (their files are written whole or not at all), and leave no worker behind
        pool.shutdown(wait=True, cancel_futures=True)
        raise
    pool.shutdown(wait=True)
    return results
