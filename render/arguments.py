"""Checks of a public function's arguments, at its entry, before any work.

Each returns the value it accepts (a path as a :class:`~pathlib.Path`, a number
as a float) or raises one :class:`~render.errors.ArgumentError` line naming the
Python argument, what is wrong and what to pass, so a script never meets a
bare TypeError from deep inside.
"""

from __future__ import annotations

import math
import numbers as _numbers
import operator
import os
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from .errors import ArgumentError
from .units import shown  # a refused value as a message shows it: a short repr


def path(name: str, value: object, *, what: str = "a file's path") -> Path:
    """A path given as str or Path (any os.PathLike), as a Path."""
    if isinstance(value, (str, os.PathLike)) and str(value) != "":
        return Path(value)
    raise ArgumentError(name, shown(value), f"pass {what} (a str or pathlib.Path)")


def instance(name: str, value: Any, kind: type | tuple[type, ...], hint: str) -> Any:
    """``value`` if it is a ``kind``; otherwise refused, ``hint`` saying what to pass."""
    if isinstance(value, kind):
        return value
    raise ArgumentError(name, shown(value), f"got {type(value).__name__}; pass {hint}")


def number(name: str, value: object, *, lo: float | None = None, hi: float | None = None, lo_open: bool = False, unit: str = "", hint: str = "", option: str | None = None) -> float:
    """A real, finite number (int, float or a numpy scalar, never a str or bool) within ``lo`` .. ``hi``."""
    from .option_checks import number_range

    x = float(value) if isinstance(value, _numbers.Real) and not isinstance(value, bool) else math.nan  # numpy's scalars are Real too
    u = f" in {unit}" if unit else ""
    if not math.isfinite(x):
        raise ArgumentError(name, shown(value), f"must be a finite number{u}{hint}", option=option)
    if (lo is not None and (x < lo or (lo_open and x == lo))) or (hi is not None and x > hi):
        raise ArgumentError(name, shown(value), f"must be {number_range(lo, hi, lo_open=lo_open, unit=unit)}{hint}", option=option)
    return x


def as_whole(value: object) -> int | None:
    """``value`` as an int if it is a whole number (an int or a numpy integer, never a bool or a float), else None."""
    if isinstance(value, bool):
        return None
    try:
        return operator.index(value)  # type: ignore[arg-type]
    except TypeError:
        return None


def whole(name: str, value: object, *, lo: int = 1, hi: int | None = None, hint: str = "", option: str | None = None) -> int:
    """A whole number (int or a numpy integer, never a float or bool) of at least ``lo`` (and at most ``hi``)."""
    n = as_whole(value)
    span = f"from {lo} to {hi}" if hi is not None else f"of at least {lo}"
    if n is None:
        raise ArgumentError(name, shown(value), f"must be a whole number {span}{hint}", option=option)
    if n < lo or (hi is not None and n > hi):
        raise ArgumentError(name, shown(value), f"must be {span.removeprefix('of ')}{hint}", option=option)
    return n


def seed(name: str, value: object) -> int:
    """A seed: a whole number from 0 to 2**32 - 1, the range every ``--seed`` takes (:data:`render.option_checks.SEED_MAX`)."""
    from .option_checks import SEED_MAX

    return whole(name, value, lo=0, hi=SEED_MAX, hint=" (2**32-1); 0 is the default")


def numbers(name: str, value: object, *, hint: str = "", option: str | None = None) -> tuple[float, ...]:
    """A non-empty sequence of real numbers (a single number or a str is refused), as a tuple of floats."""
    if isinstance(value, (str, bytes)) or not isinstance(value, Iterable):
        raise ArgumentError(name, shown(value), f"pass a sequence of numbers, e.g. (0.5,) for one{hint}", option=option)
    items = list(value)
    if not items:
        raise ArgumentError(name, shown(value), f"is empty; pass at least one number{hint}", option=option)
    for i, v in enumerate(items):
        number(f"{name}[{i}]", v, option=option)
    return tuple(float(v) for v in items)


def items(name: str, value: object, kind: type | tuple[type, ...], hint: str) -> tuple:
    """A sequence whose every item is a ``kind`` (a single item, or a str, is refused), as a tuple."""
    if isinstance(value, (str, bytes)) or not isinstance(value, Iterable):
        raise ArgumentError(name, shown(value), f"got {type(value).__name__}; pass a sequence of {hint}")
    out = tuple(value)
    for i, v in enumerate(out):
        instance(f"{name}[{i}]", v, kind, hint)
    return out


def flag(name: str, value: object) -> bool:
    """A switch: True or False (a numpy bool too), never a str such as "no" that would read as on."""
    import numpy as np

    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    raise ArgumentError(name, shown(value), f"got {type(value).__name__}; pass True or False")


def pair(name: str, value: object, hint: str) -> tuple:
    """A sequence of exactly two items (a single item, or a str, is refused), as a tuple; ``hint`` says what to pass."""
    if isinstance(value, (str, bytes)) or not isinstance(value, Iterable):
        raise ArgumentError(name, shown(value), f"got one {type(value).__name__}; pass {hint}")
    out = tuple(value)
    if len(out) != 2:
        raise ArgumentError(name, shown(value), f"got {len(out)} item{'' if len(out) == 1 else 's'}; pass {hint}")
    return out
