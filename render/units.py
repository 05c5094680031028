"""Quantities: SI prefixes, unit symbols and IEC 60062 RKM codes.

The one module that knows units. Every physical value in a TOML file is a
number in SI base units, or a string such as ``"22k"``, ``"22kΩ"``,
``"100nF"``, ``"30mm"`` or an RKM code such as ``"4k7"`` (4.7 kΩ),
``"2n2"`` (2.2 nF), ``"R47"`` (0.47 Ω), ``"1M0"`` (1 MΩ).

Rules:

- A unit symbol at the end is matched first, then the prefix, so that for a
  length ``"6m"`` is six metres and ``"30mm"`` thirty millimetres.
- ``M`` is always mega and ``m`` always milli; ``K`` is read as ``k``;
  ``u`` and ``µ`` are both micro.
- For areas the prefix applies to the metre before squaring (``"5cm2"`` is
  5e-4 m²).
"""

from __future__ import annotations

import math
import re
import unicodedata
from dataclasses import dataclass

# SI prefixes (SI Brochure, 9th ed., Table 7). "K" is accepted for kilo and
# "u" for micro as the trade writes them (common practice, no source).
# Exponents of ten, so that "2n2" becomes float("2.2e-9"), the nearest double.
PREFIXES: dict[str, int] = {
    "f": -15,
    "p": -12,
    "n": -9,
    "u": -6,
    "µ": -6,
    "μ": -6,  # Greek mu, which some keyboards give instead of the micro sign
    "m": -3,
    "k": 3,
    "K": 3,
    "M": 6,
    "G": 9,
}

# In an RKM code (IEC 60062:2016, clause 4) the letter marks the decimal point; R stands for the
# unit itself (multiplier 1). Some makers write E for R ("E47" for 0.47 ohm; common practice, no
# source); "E" between digits ("4E7") could equally be an exponent, so a resistance written that way
# is refused (see _ambiguous_e).
RKM_LETTERS: dict[str, int] = {**PREFIXES, "R": 0, "E": 0}


@dataclass(frozen=True)
class Kind:
    """A physical kind: its name, SI unit and the symbols accepted for it."""

    name: str
    unit: str  # the SI unit as printed
    symbols: tuple[str, ...]  # accepted at the end of a string, longest first
    power: int = 1  # prefix exponent: 2 for areas (cm² = (1e-2 m)²)
    rkm: bool = False  # whether RKM codes are accepted
    scaled: tuple[tuple[str, float], ...] = ()  # other symbols and their factor to the SI unit ("V/µs", 1e6)


RESISTANCE = Kind("resistance", "Ω", ("ohms", "ohm", "Ω", "R"), rkm=True)
CAPACITANCE = Kind("capacitance", "F", ("F",), rkm=True)
CAP_PER_LENGTH = Kind("capacitance per metre", "F/m", ("F/m", "F"), rkm=True)
INDUCTANCE = Kind("inductance", "H", ("H",), rkm=True)
VOLTAGE = Kind("voltage", "V", ("V",))
FREQUENCY = Kind("frequency", "Hz", ("Hz",))
LENGTH = Kind("length", "m", ("m",))
AREA = Kind("area", "m²", ("m²", "m2", "m^2"), power=2)
FLUX_DENSITY = Kind("flux density", "T", ("T",))
TIME = Kind("time", "s", ("s",))
SENSITIVITY = Kind("sensitivity", "V·s/m", ("V·s/m", "Vs/m", "V*s/m"))
VOLTAGE_DENSITY = Kind("voltage noise density", "V/√Hz", ("V/√Hz", "V/rtHz", "V/sqrtHz"))
CURRENT_DENSITY = Kind("current noise density", "A/√Hz", ("A/√Hz", "A/rtHz", "A/sqrtHz"))
RATIO = Kind("number", "", ())
# datasheets give slew rates in V/µs (1 V/µs = 1e6 V/s); "us" for µ as ASCII text writes it
SLEW_RATE = Kind("slew rate", "V/s", ("V/s",), scaled=(("V/µs", 1e6), ("V/μs", 1e6), ("V/us", 1e6)))

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_NUMBER_RE = re.compile(rf"^{_NUMBER}$")
_RKM_RE = re.compile(r"^(\d*)([A-Za-zµμ])(\d+)$")


def _a(kind: Kind) -> str:
    """The kind's name with its article: "a resistance", "an inductance"."""
    return ("an " if kind.name[:1] in "aeiou" else "a ") + kind.name


class QuantityError(ValueError):
    """A value that is not a quantity of the expected kind (message: the reason)."""


SHOWN_CHARS = 60  # how much of a bad value a message repeats


def shorten(text: str, limit: int = SHOWN_CHARS) -> str:
    """``text`` cut to ``limit`` characters, ending in "…" when cut."""
    return text if len(text) <= limit else text[: limit - 1] + "…"


def _written(value: object) -> str:
    """``repr(value)``, with true/false written as TOML writes them (also inside lists and tables)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, list):
        return "[" + ", ".join(_written(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k!r}: {_written(v)}" for k, v in value.items()) + "}"
    return repr(value)


def shown(value: object, limit: int = SHOWN_CHARS) -> str:
    """``repr(value)`` for a one-line message: escapes line breaks and control
    characters, writes true/false as a TOML file has them (not Python's True and
    False), and is cut to about ``limit`` characters (ending in "…")."""
    return shorten(_written(value), limit)


def parse_quantity(value: object, kind: Kind) -> float:
    """Read one value of ``kind`` and return it in SI base units.

    Parameters
    ----------
    value : int | float | str
        A TOML number (already SI) or a string with optional prefix, unit
        symbol or RKM code.
    kind : Kind
        The physical kind the field holds.

    Returns
    -------
    float
        The value in SI units (ohm, farad, henry, ...). Sign and range are
        not judged here; see :mod:`render.design`.

    Raises
    ------
    QuantityError
        If the value cannot be read as that kind.
    """
    if isinstance(value, bool):
        raise QuantityError(f"expected {_a(kind)}, got a true/false value")
    if isinstance(value, (int, float)):
        try:
            x = float(value)
        except OverflowError:  # a TOML integer has no size limit in tomllib
            raise QuantityError(f"expected a finite {kind.name}, got an integer far too large") from None
        if not math.isfinite(x):
            raise QuantityError(f"expected a finite {kind.name}")
        return x
    if not isinstance(value, str):
        raise QuantityError(f"expected {_a(kind)} as a number or a string like {example(kind)}")
    text = value.strip()
    if _SPLIT_NUMBER_RE.search(text):
        raise QuantityError(f'{shown(value)} has a space inside its number; write the number without one (a space may only stand before the prefix or unit, as in "4.7 k")')
    for space in _SPACES:
        text = text.replace(space, "")
    text = text.replace("\u2126", "Ω")  # OHM SIGN, as some keyboards give it, is the Greek capital omega
    if not text:
        raise QuantityError(f"expected {_a(kind)}, got an empty string")
    _refuse_odd_characters(text, kind)
    for sym, factor in kind.scaled:  # a scaled unit: read the number before it as if in the SI unit, then scale
        if text.endswith(sym) and len(text) > len(sym):
            return _finite(parse_quantity(text[: -len(sym)] + kind.symbols[0], kind) * factor, kind)
    body = text
    for sym in sorted(kind.symbols, key=len, reverse=True):
        if body.endswith(sym) and len(body) > len(sym):
            body = body[: -len(sym)]
            break
    else:
        # A unit symbol of another kind at the end is the wrong unit.
        other = _foreign_unit(text, kind)
        if other:
            also = "".join(f" or {sym}" for sym, _ in kind.scaled[:1])
            raise QuantityError(f"unit '{other}' does not fit {_a(kind)} (expected {kind.unit or 'a plain number'}{also})")
    _ambiguous_e(body, value, kind)
    if _NUMBER_RE.match(body):
        return _finite(float(body), kind)
    # number followed by one prefix letter
    prefixes = {**PREFIXES, "c": -2} if kind.symbols and kind.symbols[0] in ("m", "m²") else PREFIXES
    if len(body) >= 2 and body[-1] in prefixes and _NUMBER_RE.match(body[:-1]):
        if "e" in body[:-1].lower():  # "1e3k": float("1e3e3") would raise a bare ValueError
            raise QuantityError(f'cannot read {shown(value)} as {_a(kind)}: use an exponent or a prefix, not both (e.g. "4.7e3" or "4.7k")')
        return _finite(float(f"{body[:-1]}e{prefixes[body[-1]] * kind.power}"), kind)
    # RKM: the letter stands for the decimal point
    m = _RKM_RE.match(body)
    if m and kind.rkm and m.group(2) in RKM_LETTERS and (m.group(1) or m.group(2) in "RE"):
        whole, letter, frac = m.groups()
        if letter in "RE" and kind.name != "resistance":
            raise QuantityError(f"'{letter}' in an RKM code stands for ohms, not {_a(kind)}")
        return _finite(float(f"{whole or '0'}.{frac}e{RKM_LETTERS[letter]}"), kind)
    if m and kind.rkm and m.group(1) and m.group(2) in "NPU" and kind.name != "resistance":  # "3N9", "4U7": a case SI does not read
        fixed = f"{m.group(1)}{m.group(2).lower()}{m.group(3)}"
        raise QuantityError(f'cannot read {shown(value)} as {_a(kind)}: IEC 60062 letter codes are case-sensitive ("{m.group(2)}" is no prefix); write "{fixed}"')
    if len(body) >= 2 and body[-1] in "NPU" and _NUMBER_RE.match(body[:-1]) and "e" not in body[:-1].lower():  # "22N", "4.7U": a prefix in the wrong case
        fixed = f"{body[:-1]}{body[-1].lower()}{text[len(body) :]}"  # the unit symbol, if one was written, kept
        raise QuantityError(f'cannot read {shown(value)} as {_a(kind)}: prefixes are case-sensitive ("{body[-1]}" is no prefix); did you mean "{fixed}"?')
    if kind.name == "resistance" and re.fullmatch(r"\d+(?:\.\d+)?E", text):  # "470E": E marking ohms, as some makers print it
        raise QuantityError(f'cannot read {shown(value)} as a resistance: a trailing "E" is read neither as ohms nor as an exponent; write "{text[:-1]}R" (ohms)')
    if kind is FLUX_DENSITY and text.endswith("G") and len(text) > 1:  # gauss: "10mG" (a lone "10G" is read as giga and refused by range)
        try:
            gauss = parse_quantity(text[:-1], RATIO)
        except QuantityError:
            gauss = None
        if gauss is not None:
            tesla = format_si(gauss * 1e-4, "T").replace(" ", "").replace("µ", "u")
            raise QuantityError(f'the gauss is not an SI unit (1 G = 100 µT); for {shown(value)} write "{tesla}"')
    comma = re.fullmatch(r"(\d+),(\d+)(\D*)", text)
    if comma:  # "4,7u": a decimal comma, as many countries write it
        raise QuantityError(f'cannot read {shown(value)} as {_a(kind)}: a comma is no decimal point here; write "{comma.group(1)}.{comma.group(2)}{comma.group(3)}"')
    meg = re.fullmatch(r"(\d+(?:\.\d*)?|\.\d+)meg(\D*)", text, re.IGNORECASE)
    if meg:  # "1Meg": SPICE's way of writing mega (SPICE reads a bare "M" as milli)
        raise QuantityError(f'cannot read {shown(value)} as {_a(kind)}: "meg" is how SPICE writes mega; here write "{meg.group(1)}M{meg.group(2)}" (SI, capital M)')
    if kind is RATIO:  # a datasheet's open-loop gain: "100dB" or "200V/mV", refused with the plain ratio it means
        _refuse_datasheet_gain(text)
    from .unit_habits import read_habit  # "2.2uf", "120mh": read, or refused with the fix

    habit = read_habit(text, kind.name, parse=lambda t: parse_quantity(t, kind), prefixes=PREFIXES, error=QuantityError)
    if habit is not None:
        return habit
    raise QuantityError(f"cannot read {shown(value)} as {_a(kind)}; write it like {example(kind)}")


_GAIN_RE = re.compile(r"^([+-]?(?:\d+\.?\d*|\.\d+))(dB|V/mV|V/uV|V/µV|V/V)$", re.IGNORECASE)
_GAIN_PER = {"v/mv": 1e3, "v/uv": 1e6, "v/µv": 1e6, "v/v": 1.0}


def _refuse_datasheet_gain(text: str) -> None:
    """Refuse a gain written as a datasheet gives it, naming the plain ratio: 20·log10 for dB, V/mV = 1000."""
    m = _GAIN_RE.match(text)
    if m is None:
        return
    x, unit = float(m.group(1)), m.group(2).lower()
    ratio = 10 ** (x / 20) if unit == "db" else x * _GAIN_PER[unit]

    def plain_text(x: float) -> str:
        return f"{x:.4g}".replace("e+0", "e").replace("e+", "e")

    how = f"{m.group(1)} dB is 10^({m.group(1)}/20)" if unit == "db" else f"{m.group(1)} {m.group(2)} is {m.group(1)} × {plain_text(_GAIN_PER[unit])}"
    plain = plain_text(ratio)
    raise QuantityError(f"a ratio is written here as a plain number, not in {m.group(2)}; {how} = {plain}, so write {plain}")


_DIGITS_E_DIGITS_RE = re.compile(r"^(\d+)E(\d+)$")


def _ambiguous_e(body: str, value: object, kind: Kind) -> None:
    """Refuse a resistance such as "4E7": an RKM code with E for R (4.7 ohm) or an exponent (40 Mohm).

    A lowercase "e" ("4e7"), a signed exponent ("4E+7"), a decimal point ("4.7E3") or a leading E
    ("E47", 0.47 ohm) reads one way only and is left alone."""
    m = _DIGITS_E_DIGITS_RE.match(body)
    if not (m and kind.name == "resistance"):
        return
    whole, frac = m.groups()
    rkm, power = float(f"{whole}.{frac}"), float(f"{whole}e{frac}")
    if rkm == power:  # "1E0": both readings are 1 ohm
        return
    prefixed = format_si(power).replace(" ", "")
    alternative = f' or "{prefixed}"' if "e" not in prefixed else ""
    raise QuantityError(
        f'{shown(value)} reads two ways: "{whole}R{frac}" for {format_si(rkm, "Ω")} (IEC 60062 letter code, E for R) '
        f'or "{whole}e{frac}"{alternative} for {format_si(power, "Ω")} (exponent); write the one you mean'
    )


# Spaces a value may carry between number, prefix and unit: the plain space,
# the thin space and the (narrow) no-break space typesetting puts there.
_SPACES = (" ", "\u2009", "\u00a0", "\u202f")
_SPLIT_NUMBER_RE = re.compile("[0-9.][" + "".join(_SPACES) + "]+[0-9.]")  # "1 10k": digits on both sides of a space
# The only characters beyond ASCII a quantity may hold: micro (sign or Greek
# mu), ohm, superscript two, the middle dot and the root sign of the units.
_UNIT_CHARACTERS = frozenset("µμΩ²·√")


def _refuse_odd_characters(text: str, kind: Kind) -> None:
    """Name the first character no quantity can hold (a fullwidth digit, an invisible mark, ...)."""
    for c in text:
        if c.isascii() and c.isprintable() or c in _UNIT_CHARACTERS:
            continue
        code = f"U+{ord(c):04X}"
        name = unicodedata.name(c, "a control character" if unicodedata.category(c) == "Cc" else "unnamed")
        if unicodedata.category(c) == "Nd":
            raise QuantityError(f"{code} ({name}) is not an ASCII digit; write the number with the digits 0-9")
        if not c.isprintable() or unicodedata.category(c) in ("Cf", "Zs", "Zl", "Zp", "Mn"):
            raise QuantityError(f"holds the invisible character {code} ({name}); delete the value and type it again")
        raise QuantityError(f"{code} ({name}) cannot be part of {_a(kind)}; write it like {example(kind)}")


def _finite(x: float, kind: Kind) -> float:
    if not math.isfinite(x):
        raise QuantityError(f"expected a finite {kind.name}")
    return x


_ALL_SYMBOLS = ("ohm", "Ω", "F", "H", "V", "Hz", "T", "s", "A")


def _foreign_unit(text: str, kind: Kind) -> str | None:
    """Name a unit symbol at the end of ``text`` that belongs to another kind."""
    for sym in sorted(_ALL_SYMBOLS, key=len, reverse=True):
        if sym in kind.symbols:
            continue
        if text.endswith(sym) and len(text) > len(sym):
            head = text[: -len(sym)]
            if _NUMBER_RE.match(head) or (head[-1:] in PREFIXES and _NUMBER_RE.match(head[:-1])):
                return sym
    return None


def metres_hint(value: float) -> str:
    """The fix for a plain number of millimetres read as metres: ``plain numbers are in metres: for 3 mm write "3mm"``."""
    return f'plain numbers are in metres: for {value:g} mm write "{value:g}mm"'


def example(kind: Kind) -> str:
    """A short example string for error messages."""
    return {
        "resistance": '"22k", "4k7" or "470R"',
        "capacitance": '"100nF", "2n2" or "470p"',
        "capacitance per metre": '"100p" (per metre)',
        "inductance": '"2.5H" or "180mH"',
        "voltage": '"9V" or 9',
        "frequency": '"60Hz" or "1MHz"',
        "length": '"30mm" or "6m"',
        "area": '"2.5m2" or 2.5',
        "flux density": '"1uT"',
        "time": '"0.2s" or "20ms"',
        "sensitivity": '0.045 or "45mV·s/m"',
        "voltage noise density": '"10n" or "10nV/rtHz"',
        "current noise density": '"10f" or "10fA/rtHz"',
        "slew rate": '"13V/us" or "13MV/s"',
    }.get(kind.name, "a number")


# Engineering formatting (the other direction) -------------------------------

_FORMAT_PREFIXES = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]


def format_si(x: float, unit: str = "", digits: int = 3) -> str:
    """Format ``x`` with an SI prefix: ``format_si(4700, "Ω") == "4.7 kΩ"``.

    For an area (``unit`` "m²") the prefix is the metre's, squared (1 mm² = 1e-6 m²): from 1 cm² up the
    area is written in m² (``format_si(0.36, "m²") == "0.36 m²"``), below it in mm² (from 0.001 mm²), then µm².
    """
    if x == 0 or not math.isfinite(x):
        return f"{x:g} {unit}".strip()
    ax = abs(x)
    if unit.endswith("²"):
        scale, p = next(((s, q) for s, lowest, q in ((1.0, 1e-4, ""), (1e-3, 1e-9, "m")) if ax >= lowest * 0.9995), (1e-6, "µ"))
        return f"{_positional(x / (scale * scale), digits)} {p}{unit}"
    for scale, p in _FORMAT_PREFIXES:  # noqa: B007 (the prefix found is used below)
        if ax >= scale * 0.9995:
            break
    text = f"{x / scale:.{digits}g}"
    return f"{text} {p}{unit}".strip()


def _positional(v: float, digits: int) -> str:
    """``v`` to ``digits`` significant figures without an exponent: 1000 → "1000", 0.36 → "0.36"."""
    e = math.floor(math.log10(abs(v)))
    places = digits - 1 - e
    text = f"{round(v, places):.{max(0, places)}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def microvolts(v: float, width: int = 0, decimals: int | None = None, *, digits: int = 4) -> str:
    """A voltage (V) right-aligned in ``width`` + 3 characters: in µV where that shows it (with
    ``decimals`` places up to 100 mV and down to one unit of the last place; with ``digits``
    significant figures when ``decimals`` is None, from 1 nV up to where µV would need an exponent,
    10^digits µV), otherwise with the prefix that does, to ``digits`` figures (``"260.3 mV"``,
    ``"1.58 mV"``, ``"4.2 pV"``)."""
    lowest = 1e-9 if decimals is None else 10.0 ** (-6 - decimals)
    highest = 0.1 if decimals is not None else min(0.1, 10.0 ** (digits - 6) * (1 - 0.5 * 10.0**-digits))  # 999.5 µV rounds to "1e+03" at 3 figures
    spec = f".{digits}g" if decimals is None else f".{decimals}f"
    text = f"{v * 1e6:{spec}} µV" if v == 0 or lowest <= abs(v) < highest else format_si(v, "V", digits)
    return f"{text:>{width + 3}s}"


def format_rkm(x: float, unit_letter: str = "R", digits: int = 3) -> str:
    """Write ``x`` as an IEC 60062 RKM code: ``4700 -> "4k7"``, ``0.47 -> "R47"``.

    ``unit_letter`` is the letter used where no prefix applies ("R" for
    resistors; capacitors use prefixes, so pass ``""`` to have "1n0" style
    codes fall back to the prefix letter).
    """
    if x <= 0 or not math.isfinite(x):
        raise ValueError(f"x={x!r}: an RKM code needs a positive finite value")
    letters = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, unit_letter or ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p"), (1e-15, "f")]
    carry = 1 - 0.5 * 10.0**-digits  # at or above scale·carry, x rounds to the scale itself (0.9995 at 3 figures)
    for scale, letter in letters:
        if not letter:
            continue
        if x >= scale * carry or (scale == 1.0 and x >= 0.0995):
            break  # R47 rather than 470m: the trade writes sub-ohm values with R
    text = f"{x / scale:.{digits}g}"
    if "e" in text:  # rounding carried past the prefix (e.g. 999.9 -> 1e+03)
        text = f"{float(text):.0f}"
    if "." in text:
        whole, frac = text.split(".")
        return f"{'' if whole == '0' else whole}{letter}{frac}"
    return f"{text}{letter}0" if len(text) == 1 else f"{text}{letter}"
