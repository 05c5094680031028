"""Options and helpers the subcommands share: click only here and in the command modules."""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable
from typing import Any, TextIO, cast

import click

from ..errors import ArgumentError, InputError, PassiveGiven
from .values import InFile, OutFile


def friendly(fn: Callable[..., Any]) -> Callable[..., Any]:
    """Turn InputError into one line on stderr and exit code 1 (no traceback)."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except PassiveGiven as exc:
            raise click.ClickException(passive_refusal(exc, click.get_current_context())) from None
        except ArgumentError as exc:  # named as the command line names it
            raise click.ClickException(exc.for_option()) from None
        except InputError as exc:
            raise click.ClickException(str(exc)) from None

    return wrapper


def _takes_compare(cmd: click.Command) -> bool:
    return any("--compare" in p.opts for p in cmd.params)


def passive_refusal(exc: PassiveGiven, ctx: click.Context) -> str:
    """The refusal of a passive file named as a design, with the fix this command offers."""
    head = f'{exc.path}: a passive pickup (kind = "passive") has no preamp to render as a design'
    if _takes_compare(ctx.command):
        return f"{head}; name it with --compare {exc.path} instead"
    from . import COMMANDS, main

    root = click.Context(main)
    others = [name for name in sorted(COMMANDS) if _takes_compare(main.get_command(root, name))]
    names = []
    while ctx.parent is not None:
        names.append(ctx.info_name or "")
        ctx = ctx.parent
    here = " ".join(["render", *reversed(names)])
    listed = ", ".join(others[:-1]) + f" and {others[-1]}" if len(others) > 1 else "".join(others)
    return f"{head}, and {here} takes designs with one only; give a design with a preamp here (render {listed} take a passive pickup with --compare FILE)"


def _sample_rate(ctx: click.Context, param: click.Parameter, value: int) -> int:
    from ..validate import sample_rate

    try:
        return sample_rate(value)
    except ArgumentError as exc:
        raise click.ClickException(exc.for_option()) from None


rig_option = click.option(
    "--rig",
    "rig_path",
    type=InFile(),
    default=None,
    help="Rig file (TOML with [rig] and/or [hum]); replaces each design's own tables.",
)
overwrite_option = click.option("--overwrite", is_flag=True, help="Replace output files that already exist.")
sample_rate_option = click.option("--sample-rate", type=int, default=48000, show_default=True, callback=_sample_rate, help="Output sample rate (Hz), 8000 to 384000.")


_JSON_STDOUT = "render.json_stdout"


def _json_to_stdout(ctx: click.Context, param: click.Parameter, value: str | None) -> str | None:
    """With ``--json -``, standard output holds the JSON alone: the human lines go to stderr until the command ends."""
    if value == "-" and _JSON_STDOUT not in ctx.meta:
        stdout = sys.stdout
        ctx.meta[_JSON_STDOUT] = stdout
        sys.stdout = sys.stderr

        def restore() -> None:
            sys.stdout = stdout

        ctx.call_on_close(restore)
    return value


def json_option(help_text: str = "Write the results as JSON to FILE ('-' for standard output).") -> Callable[[Any], Any]:
    return click.option("--json", "json_path", type=OutFile("out.json", stdout=True), default=None, callback=_json_to_stdout, help=help_text)


def jobs_option(help_text: str, default: int | None = 1) -> Callable[[Any], Any]:
    return click.option("--jobs", type=click.IntRange(min=1, max=64), default=default, show_default=default is not None, help=help_text)


def emit_json(path: str | None, payload: object, *, overwrite: bool) -> None:
    """Write JSON to ``path`` atomically, or to standard output for '-' (the human lines then went to stderr)."""
    from ..io.atomic import json_text, write_json

    if path == "-":
        ctx = click.get_current_context(silent=True)
        stdout = cast(TextIO, ctx.meta.get(_JSON_STDOUT, sys.stdout) if ctx is not None else sys.stdout)
        if stdout is None:  # no standard output at all (`>&-`): nothing to write to, as click.echo does
            return
        stdout.write(json_text(payload))
        stdout.flush()
    elif path:
        write_json(path, payload, overwrite=overwrite)


def warn(text: str) -> None:
    """One warning line on standard error."""
    click.echo(f"warning: {text}", err=True)


def pluck_strength(text) -> float | None:
    """``--strength`` in metres: one length with its unit (``2mm``).

    A bare number is refused: the option is written in mm everywhere, so ``2``
    most likely means 2 mm, while SI would read it as 2 m; the refusal names the
    likely fix.
    """
    from ..errors import InputError
    from ..units import LENGTH, QuantityError, parse_quantity

    if text is None:
        return None
    shown = str(text).strip()
    try:
        bare = float(shown)
    except ValueError:
        bare = None
    if bare is not None:
        if 0 < bare <= 0.05:  # a length in metres, as SI reads it
            fix = f"did you mean {bare * 1e3:g}mm? ({shown} read as metres)"
        elif 0 < bare <= 50:  # mm typed without the unit: the likely habit
            fix = f"did you mean {shown}mm? (bare, it would be {bare:g} m = {bare * 1e3:g} mm)"
        else:
            fix = "give it like 2mm (above 0, at most 50 mm)"
        raise InputError(f"--strength={shown}: a pluck strength needs its unit; {fix}")
    try:
        return parse_quantity(shown, LENGTH)
    except QuantityError as exc:
        both = "; use an exponent or a prefix, not both" if "not both" in str(exc) else ""
        raise InputError(f"--strength={shown!r}: cannot read it as a length{both}; give the strongest pluck's displacement with its unit, like 2mm") from None
