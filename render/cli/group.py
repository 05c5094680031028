"""The group class behind ``render``: subcommands imported on first use, usage errors on one line, stops as Ctrl-C."""

from __future__ import annotations

import errno
import importlib
import signal
import sys

import click

from .commands import COMMANDS
from .ending import QuietFlush


class Stopped(KeyboardInterrupt):
    """SIGTERM (a supervisor, ``timeout``) or SIGHUP (a closed terminal): handled as Ctrl-C is."""


_stopping = False
_grace_started = False


def _stop(signum: int, frame: object) -> None:
    """The first SIGTERM or SIGHUP stops the run as Ctrl-C does; more of them wait for its clean-up."""
    global _stopping, _grace_started
    if not _stopping:
        _stopping = True
        if not _grace_started:
            _grace_started = True
            from ..parallel import end_after_grace

            end_after_grace()  # should the clean-up hang, the run still ends
        raise Stopped(signal.Signals(signum).name)


def _stop_swallowed(unraisable) -> None:
    """``sys.unraisablehook``: a stop raised where Python ignores exceptions (a fork hook, a finaliser)
    is sent again, to be raised in ordinary code; anything else is reported as Python does."""
    global _stopping
    if isinstance(unraisable.exc_value, Stopped):
        import os
        import threading

        _stopping = False
        signum = signal.Signals[str(unraisable.exc_value)].value
        # sent a moment later, once the code that ignores exceptions has returned
        threading.Timer(0.05, os.kill, (os.getpid(), signum)).start()
        return
    sys.__unraisablehook__(unraisable)


def _interrupted(exc: BaseException | None) -> bool:
    """Whether Ctrl-C is behind ``exc`` (an import cut short by it surfaces as an ImportError)."""
    seen = set()
    while exc is not None and id(exc) not in seen:
        if isinstance(exc, KeyboardInterrupt):
            return True
        seen.add(id(exc))
        exc = exc.__cause__ or exc.__context__
    return False


class OneLineUsageError(click.ClickException):
    """A usage error (unknown option, missing argument, bad value) as one line and exit code 1."""

    exit_code = 1


def _one_line(exc: click.UsageError) -> OneLineUsageError:
    """``exc`` as ``…; see `render CMD --help``` on one line, the command path named from ``render``."""
    names = []
    ctx = exc.ctx
    while ctx is not None:
        names.append(ctx.info_name or "")
        ctx = ctx.parent
    path = " ".join(["render", *reversed(names[:-1])])
    text = " ".join(exc.format_message().split()).replace(". (", " (").rstrip(".")
    return OneLineUsageError(f"{text}; see `{path} --help`")


class LazyGroup(click.Group):
    """A click group whose subcommands are imported on first use.

    Every usage error below it, in any subcommand, is one line and exit code 1
    (:func:`_one_line`); ``render`` alone prints the help.
    """

    def make_context(self, info_name, args, parent=None, **extra):
        try:
            return super().make_context(info_name, args, parent=parent, **extra)
        except click.exceptions.NoArgsIsHelpError as exc:
            click.echo(exc.ctx.get_help())
            raise click.exceptions.Exit(0) from None
        except click.UsageError as exc:
            raise _one_line(exc) from None

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except click.UsageError as exc:
            raise _one_line(exc) from None
        except KeyboardInterrupt:
            # click ends the line the terminal's ^C was echoed on before its "Aborted!"; on standard error that is
            # not a terminal (a pipe, a supervisor's log) that would only add an empty line, so stop without it
            if sys.stderr.isatty():
                raise
            raise click.Abort() from None
        except OSError as exc:
            if exc.errno == errno.EPIPE:
                # standard output closed under the command (`render ... | head -1`): a stop, as a closed terminal's
                # SIGHUP is (README: "Stopping a run"), said on stderr; the run's files were handled on the way here
                sys.stdout = QuietFlush(sys.stdout)
                raise click.Abort() from None
            if exc.errno in (errno.ENOSPC, errno.EDQUOT):  # standard output to a full disk (`> out.txt`): files' own writes say so in render.io.atomic
                raise click.ClickException(f"cannot write to standard output ({exc.strerror}); free some disk space or send it elsewhere") from None
            raise

    def main(self, *args, **kwargs):
        try:
            return super().main(*args, **kwargs)
        except Exception as exc:
            if _interrupted(exc):  # as click does for a plain Ctrl-C: one line, exit 1
                click.echo("Aborted!", err=True)
                sys.exit(1)
            raise

    def list_commands(self, ctx):
        return sorted(COMMANDS)

    def get_command(self, ctx, name):
        if name not in COMMANDS:
            return None
        module, attr, _ = COMMANDS[name]
        return getattr(importlib.import_module(module), attr)

    def format_commands(self, ctx, formatter):
        rows = [(name, COMMANDS[name][2]) for name in self.list_commands(ctx)]
        with formatter.section("Commands"):
            formatter.write_dl(rows)
