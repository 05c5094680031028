"""The ``render`` command group.

One module per subcommand; each is imported only when its command runs, so
``render --help`` and ``render check`` start fast (no plotting or audio
libraries at start-up).
"""

from __future__ import annotations

import os
import signal
import sys

import click

from .. import __version__
from .commands import COMMANDS
from .ending import end
from .group import LazyGroup, _interrupted, _stop, _stop_swallowed

__all__ = ["COMMANDS", "main", "run"]


@click.group(cls=LazyGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="render")
def main():
    """Hear and measure an active humbucker voicing before it is built.

    Start quiet: renders can be loud. See README.md for the safety notes.
    """


def _show_warnings_as_lines() -> None:
    """The library's :class:`render.errors.SkippedDesign` warnings as one ``warning:`` line each."""
    import warnings

    from ..errors import SkippedDesign

    def show(message, category, filename, lineno, file=None, line=None):
        if issubclass(category, SkippedDesign):
            click.echo(f"warning: {message}", err=True)
        else:
            sys.stderr.write(warnings.formatwarning(message, category, filename, lineno, line))

    warnings.showwarning = show


def run():
    """The ``render`` program (console script and ``python -m render``): :func:`main`, then exit.

    Once the command is done and its files are closed, :func:`render.cli.ending.end`
    does the exit's work and ends the process without tearing its modules down, so the exit
    skips the garbage collector's last full pass over scipy's and matplotlib's objects (seen
    here: 0.17 s after importing scipy.signal) and a SIGTERM or SIGHUP meanwhile is a stop
    (``Aborted!``, code 1), never death by signal. In-process callers (tests) use :func:`main`,
    which leaves the collector and the process alone.
    """
    import gc

    signal.signal(signal.SIGTERM, _stop)
    signal.signal(signal.SIGHUP, _stop)
    sys.unraisablehook = _stop_swallowed
    _show_warnings_as_lines()
    try:
        main()
    except SystemExit as exc:
        if _interrupted(exc):
            # Ctrl-C was reported ("Aborted!", exit code 1), but CPython still ends the process by
            # SIGINT when the KeyboardInterrupt first surfaced in code it ran through its C API, as
            # during some imports (seen here: python -m, Ctrl-C 0.1 s in): exit now, as reported.
            # Every file is whole or gone and every worker stopped by the time the error got here.
            sys.stdout.flush()
            sys.stderr.flush()
            os._exit(exc.code if isinstance(exc.code, int) else 1)
        end(exc.code)  # a stop from here on is a stop, not death by signal (render.cli.ending)
    finally:
        gc.freeze()
