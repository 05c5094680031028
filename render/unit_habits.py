"""Common ways of writing a value that the strict rules of :mod:`render.units` do not cover.

Catalogues and schematics write units in lower case ("2.2uf", "120mh",
"9v", "60hz", "22kohm"); the SI writes F, H, V, Hz and Ω. Where the reading
is unambiguous it is accepted; where it is not, the value is refused with
the fix spelled out:

- a prefix letter then a lower-case unit symbol (``f``, ``h``, ``v``,
  ``hz``, ``ohm``) is read as that unit: ``"2.2uf"`` is 2.2 µF,
  ``"100pf"`` 100 pF, ``"120mh"`` 120 mH, ``"22KOhm"`` 22 kΩ;
- ``"mf"`` and ``"mfd"`` are refused: old catalogues write them for
  microfarads, the SI reads millifarads;
- ``"mhz"`` is refused: milli or mega;
- a prefix written in the wrong case where only one case is a prefix
  (``"2.2UF"``, ``"4.7NF"``) is refused with the corrected spelling.

IEC 60062 letter codes (``"4k7"``, ``"2n2"``, ``"R47"``) and ``K`` for kilo
are read by :mod:`render.units` itself.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping

# (this module is imported by render.units and imports nothing of render's: the parser is passed in)
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"  # as render.units reads a number
_HABIT = re.compile(rf"^({_NUMBER})([A-Za-zµμ]?)(fd|f|h|v|hz|ohms?)$", re.IGNORECASE)
# the unit a lower-case symbol stands for, and the kinds it fits
_SYMBOLS = {
    "f": ("F", ("capacitance", "capacitance per metre")),
    "h": ("H", ("inductance",)),
    "v": ("V", ("voltage",)),
    "hz": ("Hz", ("frequency",)),
    "ohm": ("Ω", ("resistance",)),
    "ohms": ("Ω", ("resistance",)),
}


def read_habit(text: str, kind_name: str, *, parse: Callable[[str], float], prefixes: Mapping[str, int], error: type[Exception]) -> float | None:
    """``text`` (spaces removed) read by a habit above, in SI units; None when no habit applies.

    Parameters
    ----------
    text : str
    kind_name : str
        The field's kind ("capacitance", "inductance", ...).
    parse : callable
        Reads ``"2.2u"`` (a number and a prefix) as the field's kind.
    prefixes : mapping
        The SI prefix letters.
    error : exception class
        Raised, with the fix, for an ambiguous habit.
    """
    m = _HABIT.match(text)
    if not m:
        return None
    number, prefix, symbol = m.group(1), m.group(2), m.group(3)
    low = symbol.lower()
    if low == "fd":
        if not kind_name.startswith("capacitance"):
            return None
        if prefix in ("u", "µ", "μ"):  # "µfd": the old abbreviation of the farad after the SI's micro, unambiguous
            return parse(f"{number}u")
        if prefix == "U":
            raise error(f'"Ufd" is an old way of writing microfarads; micro is a lowercase u: write "{number}uF"')
        if prefix in ("m", "M"):
            raise error(
                f'"{prefix}fd" is an old way of writing microfarads, but the SI reads "{prefix}" as {"milli" if prefix == "m" else "mega"}; write "{number}uF" (or "{number}mF" for millifarads)'
            )
        return None
    unit, kinds = _SYMBOLS[low]
    if kind_name not in kinds:
        return None
    if low == "f" and prefix in ("m", "M"):
        raise error(f'"{prefix}{symbol}" can mean millifarads or, in old catalogues, microfarads; write "{number}uF" for microfarads or "{number}mF" for millifarads')
    if low == "hz" and prefix == "m" and symbol != "Hz":
        raise error(f'"{prefix}{symbol}" can mean millihertz or megahertz; write "{number}MHz" or "{number}mHz"')
    if prefix and prefix not in prefixes:
        fixed = prefix.lower() if prefix.lower() in prefixes else None
        if fixed is None:
            return None
        raise error(f'"{prefix}" is not a prefix render reads here (the prefixes are case-sensitive); write "{number}{fixed}{unit}"')
    return parse(f"{number}{prefix}")
