"""Command-line values checked as they are read, before any work: numbers, seeds, paths.

Each check returns the value it accepts or raises an :class:`~render.errors.InputError`
of one line, ``--option=value: what is wrong; the fix``; :mod:`render.cli.values`
turns these into click parameter types, so a command refuses a bad value while
its command line is read, before it loads, computes or writes anything.
"""

from __future__ import annotations

import math
import operator
from pathlib import Path

from .errors import InputError
from .io.atomic import refuse_unwritable
from .units import shorten

# numpy's SeedSequence takes any whole number >= 0, but scipy's optimisers (render fit) and numpy's
# legacy RandomState take 0 .. 2**32 - 1 only: one range for every ordinary --seed (render blind's
# seed, drawn for the key, takes 0 .. 2**63 - 1: render.runs.blind.SEED_LIMIT)
SEED_MAX = 2**32 - 1


def _shown(value: object) -> str:
    return repr(value) if value == "" else shorten(str(value))


def _path(value: object) -> str:
    """A path as typed, whole (shortened, it would not name the file); '' for an empty one."""
    return repr(value) if value == "" else str(value)


def _g(x: float) -> str:
    return f"{x:g}"


def number_range(lo: float | None, hi: float | None, *, lo_open: bool = False, unit: str = "") -> str:
    """The accepted range in words: "from 0.001 to 100 m/s", "above 0 and at most 100 V"."""
    u = f" {unit}" if unit else ""
    if lo is not None and hi is not None:
        return f"above {_g(lo)} and at most {_g(hi)}{u}" if lo_open else f"from {_g(lo)} to {_g(hi)}{u}"
    if lo is not None:
        return f"above {_g(lo)}{u}" if lo_open else f"of at least {_g(lo)}{u}"
    return f"of at most {_g(hi)}{u}" if hi is not None else "finite"


def typed_number(name: str, value: object, *, lo: float | None = None, hi: float | None = None, lo_open: bool = False, unit: str = "", usual: str = "") -> float:
    """``value`` as a finite float within the range; NaN, infinities and text refused with the range."""
    rng = number_range(lo, hi, lo_open=lo_open, unit=unit)
    tail = f"; {usual}" if usual else ""
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"{name}={_shown(value)}: not a number; give one {rng}{tail}") from None
    if not math.isfinite(x):
        raise InputError(f"{name}={_shown(value)}: not a finite number; give one {rng}{tail}")
    low = lo is not None and (x <= lo if lo_open else x < lo)
    if low or (hi is not None and x > hi):
        raise InputError(f"{name}={_shown(value)}: out of range; give a number {rng}{tail}")
    return x


def typed_seed(name: str, value: object, *, hi: int = SEED_MAX) -> int:
    """A seed: a whole number from 0 to ``hi`` (2**32 - 1 unless given)."""
    try:
        s = None if isinstance(value, bool) else operator.index(value)  # type: ignore[arg-type]
    except TypeError:
        try:
            s = int(str(value).strip(), 10)
        except ValueError:
            s = None
    if s is None or not 0 <= s <= hi:
        top = " (2**32-1)" if hi == SEED_MAX else ""
        raise InputError(f"{name}={_shown(value)}: a seed must be a whole number from 0 to {hi}{top}; 0 is the default")
    return s


def in_file(name: str, value: object) -> str:
    """A file to read, named by a non-empty path (an empty one would read as "not given" or as the current folder)."""
    text = str(value)
    if not text.strip():
        raise InputError(f"{name}={_path(value)}: an empty path; give the file's path, or leave the option out")
    return text


def _file_ancestor(path: Path) -> Path | None:
    """The first of ``path``'s parents that exists as something other than a folder, or None."""
    for parent in reversed(path.parents):
        if parent.exists() and not parent.is_dir():
            return parent
    return None


FIXED_FORMATS = {".wav": "a WAV", ".png": "a PNG image"}  # files whose bytes are that format whatever they are called: the name must say so


def out_file(name: str, value: object, *, stdout: bool = False, example: str = "out.json") -> str:
    """A file to write: not empty, a folder, inside a missing folder or inside a file; ``-`` only where ``stdout``.

    Whether it exists already is checked with ``--overwrite`` (:func:`render.io.folders.refuse_existing`).
    """
    text = str(value)
    if not text.strip():
        raise InputError(f"{name}={_path(value)}: an empty path; give a file name such as {example}")
    if text == "-":
        if stdout:
            return text
        raise InputError(f"{name}=-: this file cannot go to standard output; give a file name such as {example}")
    p = Path(text)
    if p.is_dir():
        raise InputError(f"{name}={_path(text)}: is a folder; give a file name inside it, such as {p / example}")
    fixed = Path(example).suffix.lower()
    if fixed in FIXED_FORMATS and p.suffix.lower() != fixed:
        raise InputError(f"{name}={_path(text)}: this file is written as {FIXED_FORMATS[fixed]}; give a name ending in {fixed}, such as {p.with_suffix(fixed).name}")
    blocked = _file_ancestor(p)
    if blocked is not None:
        raise InputError(f"{name}={_path(text)}: {blocked} is a file, not a folder; choose another path")
    if not p.parent.is_dir():
        raise InputError(f"{name}={_path(text)}: folder {p.parent} does not exist; create it first or choose another path")
    try:
        refuse_unwritable(p.parent)
    except InputError as exc:
        raise InputError(f"{name}={_path(text)}: {exc}") from None
    return text


def out_folder(name: str, value: object) -> str:
    """A folder to write into (made with its parents if missing): not empty, ``-``, a file or inside a file."""
    text = str(value)
    if not text.strip() or text == "-":
        raise InputError(f"{name}={_path(value)}: give a folder's name, such as outputs/run-1")
    p = Path(text)
    if p.exists() and not p.is_dir():
        raise InputError(f"{name}={_path(text)}: is a file; give a folder")
    blocked = _file_ancestor(p)
    if blocked is not None:
        raise InputError(f"{name}={_path(text)}: {blocked} is a file, not a folder; choose another path")
    return text
