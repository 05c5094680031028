"""The ``render`` command group.

One module per subcommand; each is imported only when its command runs, so
``render --help`` and ``render check`` start fast (no plotting or audio
libraries at start-up).
"""

from __future__ import annotations

import importlib
import os
import signal
import sys

import click

from .. import __version__

# command name -> (module, attribute, one-line help)
COMMANDS = {
    "clips": ("render.cli.clips", "clips_command", "Render one clip per design through one dry signal and rig (the main job)."),
    "bias": ("render.cli.bias", "bias_command", "Clipping as the bias divider is unbalanced or the battery runs down."),
    "blind": ("render.cli.blind", "blind_command", "Build a blind ABX or preference session from two designs."),
    "listen": ("render.cli.listen", "listen_command", "Serve a blind session to the browser on 127.0.0.1."),
    "score": ("render.cli.score", "score_command", "Score a finished blind session: ABX p-value or preferences."),
    "check": ("render.cli.check", "check_command", "Validate design files and print their derived values."),
    "noise": ("render.cli.noise", "noise_command", "Noise floor at the amp input: density, totals, A-weighted, SNR, with the passive reference."),
    "unvoice": ("render.cli.unvoice", "unvoice_command", "Estimate the string velocity behind a passive-pickup recording (DI), to drive any design."),
    "response": ("render.cli.response", "response_command", "Small-signal response from string velocity to the amp input."),
    "dry": ("render.cli.dry", "dry_command", "Preview a phrase's string velocity as a WAV."),
    "fit": ("render.cli.fit", "fit_command", "Search buyable part values that meet stated aims."),
    "hum": ("render.cli.hum", "hum_command", "Hum cancellation per mains harmonic, with a tolerance Monte Carlo."),
    "sense": ("render.cli.sense", "sense_command", "What a design's construction senses: string balance, sensing function, bend dropout, H2/H3."),
    "watch": ("render.cli.watch", "watch_command", "Render designs again as their files are saved, on a comparison page served on 127.0.0.1."),
    "netlist": ("render.cli.netlist", "netlist_command", "Write a design and its rig as a SPICE netlist."),
    "coil": ("render.cli.coil", "coil_command", "Each coil's impedance and self-resonance (render coil MODEL), or fit a measured coil (render coil fit FILE)."),
}


class Stopped(KeyboardInterrupt):
    """SIGTERM (a supervisor, ``timeout``) or SIGHUP (a closed terminal): handled as Ctrl-C is."""


_stopping = False


def _stop(signum: int, frame: object) -> None:
    """The first SIGTERM or SIGHUP stops the run as Ctrl-C does; more of them wait for its clean-up."""
    global _stopping
    if not _stopping:
        _stopping = True
        raise Stopped(signal.Signals(signum).name)


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

    Once the command is done and its files are closed, the objects left are
    frozen, so the exit skips the garbage collector's last full pass over
    scipy's and matplotlib's objects (seen here: 0.17 s after importing
    scipy.signal). In-process callers (tests) use :func:`main`, which leaves
    the collector and the process alone.
    """
    import gc

    signal.signal(signal.SIGTERM, _stop)
    signal.signal(signal.SIGHUP, _stop)
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
        raise
    finally:
        gc.freeze()
