"""Click parameter types that check a value as the command line is read (:mod:`render.option_checks`).

A refused value stops the command before it loads, computes or writes anything:
one line, ``Error: --option=value: what is wrong; the fix``, exit code 1.
"""

from __future__ import annotations

from typing import Any

import click

from .. import option_checks as checks
from ..errors import InputError


def _name(param: click.Parameter | None) -> str:
    if isinstance(param, click.Option):
        return max(param.opts, key=len)
    return (param.human_readable_name if param is not None else "value") or "value"


class _Checked(click.ParamType):
    """A parameter type whose check is a :mod:`render.option_checks` function of (name, value)."""

    def check(self, name: str, value: Any) -> Any:  # pragma: no cover - overridden
        raise NotImplementedError

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> Any:
        try:
            return self.check(_name(param), value)
        except InputError as exc:
            raise click.ClickException(str(exc)) from None


class Finite(_Checked):
    """A finite number (NaN and infinities refused), within a range where one is meaningful."""

    name = "number"

    def __init__(self, lo: float | None = None, hi: float | None = None, *, lo_open: bool = False, unit: str = "", usual: str = "") -> None:
        self.limits = dict(lo=lo, hi=hi, lo_open=lo_open, unit=unit, usual=usual)

    def check(self, name: str, value: Any) -> float:
        return checks.typed_number(name, value, **self.limits)  # type: ignore[arg-type]


class Seed(_Checked):
    """A seed, a whole number from 0 to 2**32 - 1."""

    name = "integer"

    def check(self, name: str, value: Any) -> int:
        return checks.typed_seed(name, value)


class InFile(_Checked):
    """A file to read; an empty path refused (click's own Path checks follow)."""

    name = "file"

    def __init__(self) -> None:
        self.path = click.Path(dir_okay=False)

    def check(self, name: str, value: Any) -> str:
        return checks.in_file(name, value)

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None) -> Any:
        return self.path.convert(super().convert(value, param, ctx), param, ctx)


class OutFile(_Checked):
    """A file to write, refused before any work when it could not be written (``-`` only with ``stdout``)."""

    name = "file"

    def __init__(self, example: str, *, stdout: bool = False) -> None:
        self.example, self.stdout = example, stdout

    def check(self, name: str, value: Any) -> str:
        return checks.out_file(name, value, stdout=self.stdout, example=self.example)


class OutFolder(_Checked):
    """A folder to write into; refused when it is a file or inside one."""

    name = "directory"

    def check(self, name: str, value: Any) -> str:
        return checks.out_folder(name, value)


def given(name: str) -> bool:
    """Whether option ``name`` (its parameter name) was typed on the command line, not left at its default."""
    from click.core import ParameterSource

    ctx = click.get_current_context()
    return ctx.get_parameter_source(name) is ParameterSource.COMMANDLINE
