"""The process's end once a command is done: a late stop reads as any other stop, never as death by signal.

Python's own exit restores the default action of the signals it handles before it tears its
modules down (tens of milliseconds after a command that imported scipy and matplotlib), so a
SIGTERM or SIGHUP in that window used to kill the process: exit status -15, no ``Aborted!``.
Here the exit's work is done by hand while the handlers still stand (non-daemon threads joined,
the ``atexit`` functions run, standard output and error flushed), a stop in that time is noted,
and the process ends with :func:`os._exit`: ``Aborted!`` and code 1 after a stop, as for a stop
during the command (README: "Stopping a run"), else the command's own code. Every file is
already whole or gone by then (written under a temporary name, renamed when complete).
"""

from __future__ import annotations

import contextlib
import errno
import os
import signal
import sys
import threading
from typing import NoReturn

STOPS = (signal.SIGTERM, signal.SIGHUP)


class QuietFlush:
    """Standard output whose reader has gone: its later flushes (click's, the exit's) say nothing more.
    (click's own wrapper for this is deprecated from click 8.2.)"""

    def __init__(self, wrapped):
        self.wrapped = wrapped

    def flush(self) -> None:
        try:
            self.wrapped.flush()
        except OSError as exc:
            if exc.errno != errno.EPIPE:
                raise

    def __getattr__(self, name):
        return getattr(self.wrapped, name)


def exit_code(code: object) -> int:
    """A :class:`SystemExit` code as the process's exit status (None is 0, a message is 1 and goes to standard error)."""
    if code is None:
        return 0
    if isinstance(code, int):
        return code
    sys.stderr.write(f"{code}\n")
    return 1


def end(code: object) -> NoReturn:
    """Exit with ``code`` after Python's exit work, a stop meanwhile reported as ``Aborted!`` with code 1."""
    import atexit

    stopped: list[int] = []
    try:
        for sig in STOPS:
            signal.signal(sig, lambda signum, frame: stopped.append(signum))
        status = exit_code(code)
        for t in threading.enumerate():
            if t is not threading.main_thread() and not t.daemon:
                t.join()
        atexit._run_exitfuncs()
    except KeyboardInterrupt:  # a stop raised by the command's own handler before the swap above, or Ctrl-C
        stopped.append(signal.SIGINT)
        status = 1
    for stream in (sys.stdout, sys.stderr):
        with contextlib.suppress(OSError, ValueError, AttributeError):  # a closed pipe or stream, or none (`>&-`): nothing more can be said on it
            stream.flush()
    if stopped:
        with contextlib.suppress(OSError):
            os.write(2, b"Aborted!\n")
        status = 1
    os._exit(status)
