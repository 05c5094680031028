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

from . import units as U

_HABIT = re.compile(rf"^({U._NUMBER})([A-Za-zµμ]?)(fd|f|h|v|hz|ohms?)$", re.IGNORECASE)
# the unit a lower-case symbol stands for, and the kinds it fits
_SYMBOLS = {"f": ("F", ("capacitance", "capacitance per metre")), "h": ("H", ("inductance",)), "v": ("V", ("voltage",)), "hz": ("Hz", ("frequency",)), "ohm": ("Ω", ("resistance",)), "ohms": ("Ω", ("resistance",))}


def read_habit(text: str, kind: U.Kind) -> float | None:
    """``text`` (spaces removed) read by a habit above, in SI units; None when no habit applies.

    Raises
    ------
    QuantityError
        For an ambiguous habit, with the fix.
    """
    m = _HABIT.match(text)
    if not m:
        return None
    number, prefix, symbol = m.group(1), m.group(2), m.group(3)
    low = symbol.lower()
    if low == "fd":
        if prefix in ("m", "M", "u", "U", "µ", "μ") and kind.name.startswith("capacitance"):
            raise U.QuantityError(f'"{prefix}fd" is an old way of writing microfarads, which the SI reads as milli- or megafarads; write "{number}uF" (or "{number}mF" for millifarads)')
        return None
    unit, kinds = _SYMBOLS[low]
    if kind.name not in kinds:
        return None
    if low == "f" and prefix in ("m", "M"):
        raise U.QuantityError(f'"{prefix}{symbol}" can mean millifarads or, in old catalogues, microfarads; write "{number}uF" for microfarads or "{number}mF" for millifarads')
    if low == "hz" and prefix == "m" and symbol != "Hz":
        raise U.QuantityError(f'"{prefix}{symbol}" can mean millihertz or megahertz; write "{number}MHz" or "{number}mHz"')
    if prefix and prefix not in U.PREFIXES:
        fixed = prefix.lower() if prefix.lower() in U.PREFIXES else None
        if fixed is None:
            return None
        raise U.QuantityError(f'"{prefix}" is not an SI prefix; write "{number}{fixed}{unit}"')
    return U.parse_quantity(f"{number}{prefix}", kind)
