"""One validation kit for every file render reads: designs, rigs, phrases and fit files.

- :class:`Field` and :func:`read_table`: a table of keys read against their
  specifications (kind of quantity, required or default, plausible range),
  unknown keys refused with the nearest known key (or the one it begins) suggested;
- :class:`Where`, :func:`check_keys` and :func:`quantity`: the same checks
  for hand-written parsers (phrases, fit files), with one message form;
- :func:`suggest`, :func:`close_name`, :func:`did_you_mean` and :func:`unknown`: the "did you mean" of every message, and
  the one refusal of an unknown key (``<file>: [table]: unknown key 'x'; did you mean 'y'?``);
- :func:`sample_rate`: the one check of an output sample rate.

Every refusal is an :class:`~render.errors.InputError` of one line: the file,
the table, ``key=value`` as written, the constraint, and the fix where one is
likely.
"""

from __future__ import annotations

import difflib
import math
import numbers
import re
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any

from . import units as U
from .errors import ArgumentError, InputError
from .units import SHOWN_CHARS, Kind, QuantityError, parse_quantity, shorten

INF = math.inf
SAMPLE_RATE_RANGE = (8000, 384000)  # Hz, any output rate render writes (48000 is usual)
TOP_KEYS = ("name", "notes")


def suggest(word: str, choices: Iterable[str], *, cutoff: float = 0.6) -> str | None:
    """The known name closest to ``word`` (a likely typo), or None; failing that, the one name that
    ``word`` (three letters or more) begins, as a shortened name does ("scale" for "scale_length")."""
    choices = list(choices)
    close = difflib.get_close_matches(str(word), choices, n=1, cutoff=cutoff)
    if close:
        return close[0]
    low = str(word).strip().lower()
    starts = [c for c in choices if len(low) >= 3 and str(c).lower().startswith(low)]
    return starts[0] if len(starts) == 1 else None


def close_name(word: str, choices: Iterable[str], *, cutoff: float = 0.6) -> str:
    """A message's ending naming the known name closest to ``word`` ("; did you mean 'x'?"), or "" when none is close."""
    close = suggest(word, choices, cutoff=cutoff)
    return f"; did you mean '{close}'?" if close else ""


def did_you_mean(word: str, choices: Iterable[str], *, cutoff: float = 0.6, known: str = "keys") -> str:
    """A message's ending for an unknown name: "; did you mean 'x'?" or the ``known`` names."""
    choices = list(choices)
    return close_name(word, choices, cutoff=cutoff) or f"; known {known}: {', '.join(choices)}"


def unknown(place: str, key: object, choices: Iterable[str], *, what: str = "key", known: str = "keys") -> InputError:
    """The one refusal of an unknown name: "<place>: unknown key 'x'; did you mean 'y'?" (or the known names).

    place : the file and table, as :func:`where` or :attr:`Where.place` give them
    what : the kind of name ("key"; "table or key" at a document's top level; "figure", "part")
    known : the plural named before the list when nothing is close
    """
    return InputError(f"{place}: unknown {what} {U.shown(key)}{did_you_mean(str(key), choices, known=known)}")


def sample_rate(value: object, *, name: str = "sample_rate") -> int:
    """An output sample rate (Hz), a whole number from 8000 to 384000 (an int, or a float with no fraction such as 48000.0),
    returned as an int; :class:`~render.errors.ArgumentError` naming ``name`` otherwise
    (``--sample-rate`` on the command line)."""
    from .arguments import as_whole

    lo, hi = SAMPLE_RATE_RANGE
    rate = as_whole(value)  # int and numpy integers
    if rate is None and not isinstance(value, bool) and isinstance(value, numbers.Real) and math.isfinite(value) and float(value).is_integer():
        rate = int(float(value))  # a float with no fraction (numpy's too) is its whole number: 48000.0 is 48000, 48000.7 is refused
    if rate is None or not lo <= rate <= hi:
        raise ArgumentError(name, repr(value), f"must be from {lo} to {hi} Hz (a whole number); 48000 is usual", option="--sample-rate")
    return rate


# ----------------------------------------------------------------------------
# Tables read against field specifications (designs, rigs, fit files)


@dataclass(frozen=True)
class Field:
    """How one key is read: its kind, whether required, default, plausible range."""

    kind: U.Kind | str | Callable[[Any, str], Any]  # a units.Kind; "polarity", "taper", "list"; or a reader (raw, where) -> value
    required: bool = False
    default: Any = None
    lo: float = 0.0  # plausible range (inclusive unless lo_open/hi_open)
    hi: float = INF
    lo_open: bool = True  # zero (or lo) itself not allowed
    hi_open: bool = False
    doc: str = ""
    zero: str = ""  # the fix a value of exactly 0 gets instead of the range ("leave it out for no capacitor")
    missing: str = ""  # another way to give a required key, appended when it is missing ("{table}" is the table's name)


R_RANGE: dict[str, Any] = dict(lo=1.0, hi=1e9, lo_open=False)  # a resistor below 1 Ω or above 1 GΩ is implausible
C_RANGE: dict[str, Any] = dict(lo=1e-14, hi=0.1, lo_open=False)  # 0.01 pF .. 0.1 F


def where(source: str, table: str | None, key: str | None = None) -> str:
    loc = source
    if table:
        loc += f": [{table}]"
    if key:
        loc += f" {key}"
    return loc


def _slip_hint(key: str, raw: Any, value: float, spec: Field, table: str = "") -> str:
    """Suggest the likely fix for a value outside the plausible range (the prefix from the part's usual range, :mod:`render.plausible`)."""
    bare = isinstance(raw, (int, float)) or (isinstance(raw, str) and U._NUMBER_RE.match(raw.strip()) is not None)
    if bare and spec.kind in (U.CAPACITANCE, U.INDUCTANCE, U.CAP_PER_LENGTH) and value >= 1:
        from .usual import likely_prefix

        part = key.split(".")[:2] if table == "free" and key.count(".") >= 2 else [table, key]  # a fit file's [free] "feedback.c".min
        guess = likely_prefix(part[0], part[1], value) or f"{value:g}n"
        return f' (plain numbers are in SI units: {shorten(str(raw).strip())} means {value:g} {spec.kind.unit}; write e.g. "{guess}")'
    if bare and spec.kind is U.SLEW_RATE and value < spec.lo and _in_range(value * 1e6, spec):
        return f' (plain numbers are in V/s; if the datasheet gives {value:g} V/µs, write "{value:g}V/us")'
    if bare and spec.kind is U.LENGTH and value > spec.hi and _in_range(value * 1e-3, spec):
        return f" ({U.metres_hint(value)})"
    if isinstance(raw, str):
        t = raw.strip()
        if spec.kind is U.FLUX_DENSITY and t.endswith("G") and U._NUMBER_RE.match(t[:-1]) and _in_range(float(t[:-1]) * 1e-4, spec):
            return f' ("G" is giga in the SI; for gauss write "{float(t[:-1]) * 1e-4:g}T": 1 G = 0.1 mT)'
        body = next((t[: -len(s)] for s in ("ohms", "ohm", "Ω") if t.endswith(s)), t)
        if spec.kind is U.RESISTANCE and body.endswith("m") and value < spec.lo and _in_range(value * 1e9, spec):
            return f' ("m" is milli; for mega write "{body[:-1]}M")'
        other = _other_prefix(t, spec, table, key)
        if other:
            return f'; did you mean "{other}"?'
        if spec.kind is U.CAPACITANCE and value > spec.hi:
            return " (a capacitor that large is unlikely; check the prefix: p, n, u)"
    return ""


def _in_range(value: float, spec: Field) -> bool:
    lo_ok = value > spec.lo if spec.lo_open else value >= spec.lo
    hi_ok = value < spec.hi if spec.hi_open else value <= spec.hi
    return lo_ok and hi_ok


def _other_prefix(text: str, spec: Field, table: str, key: str) -> str | None:
    """``text`` ("520M", "9mV", "500H") with the prefix that brings it into ``spec``'s range, or None.

    The unit symbol is taken off first, as :func:`render.units.parse_quantity` reads it
    ("38m" is 38 metres). Among several prefixes, the one in the part's usual range
    (:data:`render.usual.USUAL`), nearest the middle of that range (or of the accepted
    range when there is no usual one).
    """
    from .usual import usual

    kind = spec.kind
    if not isinstance(kind, U.Kind) or kind.power != 1 or kind.scaled:
        return None
    body, symbol = text.replace(" ", ""), ""
    for sym in sorted(kind.symbols, key=len, reverse=True):
        if body.endswith(sym) and len(body) > len(sym):
            body, symbol = body[: -len(sym)], sym
            break
    prefix = body[-1:] if body[-1:] in U.PREFIXES else ""
    number = body[: len(body) - len(prefix)]
    if not U._NUMBER_RE.match(number) or "e" in number.lower() or not (prefix or symbol):
        return None  # not a number with a prefix or a unit (a bare number, an RKM code, an exponent)
    rng = usual(table, key)
    lo, hi = (rng.lo, rng.hi) if rng else (spec.lo, spec.hi)
    if not (lo > 0 and math.isfinite(hi)):
        return None
    best: tuple[float, str] | None = None
    for letter in ("p", "n", "u", "m", "", "k", "M", "G"):
        if letter == prefix:
            continue
        v = float(number) * 10.0 ** U.PREFIXES.get(letter, 0)
        if not _in_range(v, spec) or (rng is not None and not rng.holds(v)):
            continue
        unit = "" if letter and symbol == "R" else symbol or ("" if letter else "R" if kind is U.RESISTANCE else kind.unit if kind.unit.isascii() else "")
        distance = abs(math.log(v / math.sqrt(lo * hi)))
        if best is None or distance < best[0]:
            best = (distance, f"{number}{letter}{unit}")
    return None if best is None else best[1]


def read_value(raw: Any, spec: Field, *, source: str, table: str, key: str, part: tuple[str, str] | None = None) -> Any:
    """Read and range-check one value; raise InputError with a one-line message.

    ``part`` (table, key) names the design part whose usual range the prefix hint uses, when ``table`` and
    ``key`` do not (a command-line option).
    """
    loc = where(source, table, key)
    if spec.kind == "polarity":
        if raw in (1, -1) and not isinstance(raw, bool):
            return int(raw)
        raise InputError(f"{loc}={U.shown(raw)}: a polarity must be +1 or -1")
    if spec.kind == "taper":
        if raw in ("audio", "linear"):
            return raw
        raise InputError(f'{loc}={U.shown(raw)}: a taper must be "audio" or "linear"')
    if callable(spec.kind):
        return spec.kind(raw, loc)
    if spec.kind == "list":
        if not isinstance(raw, list) or not raw or len(raw) > 64:
            raise InputError(f"{loc}={U.shown(raw)}: expected a list of 1 to 64 relative amplitudes, e.g. [1.0, 0.1, 0.3]")
        out = []
        for x in raw:
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not 0 <= x <= 100:  # NaN fails the comparison; a huge int is never converted
                raise InputError(f"{loc}={U.shown(raw)}: each relative amplitude must be a number from 0 to 100")
            out.append(float(x))
        return tuple(out)
    assert isinstance(spec.kind, U.Kind), spec.kind
    try:
        value = U.parse_quantity(raw, spec.kind)
    except U.QuantityError as exc:
        raise InputError(f"{loc}={U.shown(raw)}: {exc}") from None
    unit = spec.kind.unit
    if value < 0 and spec.lo >= 0:
        raise InputError(f"{loc}={U.shown(raw)}: must not be negative")
    if value == 0 and spec.zero:
        raise InputError(f"{loc}={U.shown(raw)}: {spec.zero}")
    rng = outside(value, spec)
    if rng:
        raise InputError(f"{loc}={U.shown(raw)} ({_fmt(value, unit)}): {rng}{_slip_hint(part[1] if part else key, raw, value, spec, part[0] if part else table)}")
    return value


def _fmt(x: float, unit: str) -> str:
    # a plain number (k², a knob rotation) without SI prefixes: "0.95", not "950 m"
    return U.format_si(x, unit) if unit else f"{x:g}"


def outside(value: float, spec: Field) -> str:
    """ "expected a plausible value, at least … and at most …" when ``value`` is outside ``spec``'s range, else ""."""
    too_low = value < spec.lo or (spec.lo_open and value <= spec.lo)
    too_high = value > spec.hi or (spec.hi_open and value >= spec.hi)
    if not (too_low or too_high):
        return ""
    unit = spec.kind.unit if isinstance(spec.kind, U.Kind) else ""
    lo = _fmt(spec.lo, unit) if spec.lo else "0"
    return f"expected a plausible value, {'above' if spec.lo_open else 'at least'} {lo} and {'below' if spec.hi_open else 'at most'} {_fmt(spec.hi, unit)}"


def read_table(data: Any, specs: dict[str, Field], *, source: str, table: str) -> dict[str, Any]:
    """Read one TOML table against its field specs (unknown keys refused)."""
    if not isinstance(data, dict):
        raise InputError(f"{where(source, table)}: expected a table of keys, got {U.shown(data)}; write a [{table}] section with its keys")
    for key in data:
        if key not in specs:
            raise unknown(where(source, table), key, specs)
    out: dict[str, Any] = {}
    for key, spec in specs.items():
        if key in data:
            out[key] = read_value(data[key], spec, source=source, table=table, key=key)
        elif spec.required:
            other = f", {spec.missing.format(table=table)}" if spec.missing else ""
            raise InputError(f"{where(source, table)}: missing required key '{key}' ({spec.doc}); add e.g. {key} = {field_example(spec)}{other}")
        elif spec.default is not None:
            out[key] = spec.default
    return out


def with_example(read: Callable, text: str) -> Callable:
    """``read`` (a field's reader) carrying ``text``, a value it accepts as TOML writes it, for :func:`field_example`."""
    read.example = text  # type: ignore[attr-defined]
    return read


def field_example(spec: Field) -> str:
    """One value ``spec`` accepts, as TOML writes it: what a missing key's message suggests.

    A reader (a callable kind) gives its own in its ``example`` attribute (a choice its first
    choice, quoted; a list of lengths a short list); a quantity the first of
    :func:`render.units.example`'s that lies well inside the range (a factor 4 from a bound), else a round value near the
    middle of the range (geometric, for a range that spans decades) with its unit.
    """
    kind = spec.kind
    if kind == "polarity":
        return "1"
    if kind == "taper":
        return '"audio"'
    if kind == "list":
        return "[1.0, 0.1, 0.3]"
    if not isinstance(kind, U.Kind):
        return str(getattr(kind, "example", "1"))
    for text in re.findall(r'"[^"]*"|[-+0-9.][^ ,]*', U.example(kind)):
        if _well_inside(_read_example(text, kind), spec):
            return text
    return _quantity_example(spec, kind)


def _read_example(text: str, kind: Kind) -> float | None:
    try:
        return parse_quantity(text.strip('"') if text.startswith('"') else float(text), kind)
    except (QuantityError, ValueError):
        return None


def _well_inside(value: float | None, spec: Field) -> bool:
    """``value`` in range and, at a finite bound, a factor 4 from it (an example near an edge invites the next refusal)."""
    if value is None or not _in_range(value, spec):
        return False
    lo_ok = spec.lo <= 0 or value >= 4 * spec.lo
    hi_ok = not math.isfinite(spec.hi) or spec.hi <= 0 or value <= spec.hi / 4
    return lo_ok and hi_ok


def _quantity_example(spec: Field, kind: Kind) -> str:
    lo, hi = spec.lo, spec.hi
    if lo > 0 and math.isfinite(hi):
        v = math.sqrt(lo * hi)
    elif math.isfinite(hi):
        v = hi / 2 if lo <= 0 else (lo + hi) / 2
    else:
        v = max(2 * lo, 1.0)
    v = float(f"{v:.2g}")
    if not _in_range(v, spec):
        v = (lo + hi) / 2 if math.isfinite(hi) else v
    if not kind.unit or kind.power != 1:
        return f"{v:g}"
    exp = 3 * math.floor(math.log10(abs(v)) / 3) if v else 0
    letter = {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G"}.get(exp)
    symbol = next((s for s in kind.symbols if s.isascii()), "")
    text = f'"{v / 10.0**exp:.3g}{letter}{symbol}"' if letter is not None and symbol else f"{v:g}"
    return text if _in_range(_read_example(text, kind) or math.nan, spec) else f"{v:g}"


def check_document(data: Any, source: str, known: list[str]) -> None:
    """A TOML document of ``known`` tables and keys, with ``name`` and ``notes`` strings when present."""
    if not isinstance(data, dict):
        raise InputError(f"{source}: expected a TOML document of tables")
    for key in data:
        if key not in known:
            raise unknown(source, key, known, what="table or key")
    for key in TOP_KEYS:
        if key in data and not isinstance(data[key], str):
            raise InputError(f"{source}: {key}={U.shown(data[key])}: expected a string")


# ----------------------------------------------------------------------------
# Hand-written parsers (phrases, fit files): one message form

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def _quote(text: str) -> str:
    """A TOML basic string: quotes, backslashes, line breaks and control characters escaped."""
    out = []
    for c in text:
        if c in '"\\':
            out.append("\\" + c)
        elif c.isprintable():
            out.append(c)
        elif ord(c) <= 0xFFFF:
            out.append(f"\\u{ord(c):04X}")
        else:
            out.append(f"\\U{ord(c):08X}")
    return '"' + "".join(out) + '"'


def _key(key: object) -> str:
    """A key as TOML writes it: bare when it can be, else quoted."""
    key = str(key)
    return key if _BARE_KEY.match(key) else _quote(key)


def _show_full(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return _quote(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_show_full(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{_key(k)} = {_show_full(v)}" for k, v in value.items()) + "}"
    return str(value)


def show(value: object, limit: int = SHOWN_CHARS) -> str:
    """A value as it would be written in TOML, on one line, cut to about ``limit`` characters."""
    return shorten(_show_full(value), limit)


@dataclass(frozen=True)
class Where:
    """Where a value sits, to build one-line messages."""

    source: str
    table: str  # "[instrument]", "[[note]] #3" or "" for the top level

    @property
    def place(self) -> str:
        """The file and the table, as a message starts: "p.toml: [instrument]" or "p.toml"."""
        return f"{self.source}: {self.table}" if self.table else self.source

    def fail(self, key: str, value: object, constraint: str, fix: str | None = None) -> InputError:
        where = f"{self.source}: {self.table} " if self.table else f"{self.source}: "
        text = f"{where}{shorten(_key(key))}={show(value)}: {constraint}"
        return InputError(f"{text}; {fix}" if fix else text)

    def missing(self, key: str, fix: str) -> InputError:
        where = f"{self.source}: {self.table} " if self.table else f"{self.source}: "
        return InputError(f"{where}{key} is missing; {fix}")


def check_keys(where: Where, table: dict, known: tuple[str, ...]) -> None:
    """Refuse the first key of ``table`` not in ``known``, as :func:`unknown` words it (a table or key at the top level)."""
    for key in table:
        if key not in known:
            raise unknown(where.place, key, known, what="key" if where.table else "table or key")


def as_table(where: Where, key: str, value: object) -> dict:
    """``value`` if it is a TOML table, else InputError naming ``key``."""
    if not isinstance(value, dict):
        raise where.fail(key, value, "expected a table", f"write it as {key} = {{ ... }} or a [{key}] section")
    return value


def quantity(
    where: Where,
    key: str,
    value: object,
    kind: Kind,
    *,
    low: float | None = None,
    high: float | None = None,
    low_open: bool = False,
    shown: str = "",
    fix: str | None = None,
) -> float:
    """Parse ``value`` as ``kind`` and check low <= x <= high (x > low when low_open).

    Out of range with no ``fix`` given, the fix is the likely slip's, as for a design file's values
    (a prefix that brings it into range: "648m" → "648mm"; a plain number of millimetres).
    """
    try:
        x = parse_quantity(value, kind)
    except QuantityError as e:
        raise where.fail(key, value, str(e)) from None
    if fix is None and ((low is not None and (x <= low if low_open else x < low)) or (high is not None and x > high)):
        spec = Field(kind, lo=low if low is not None else 0.0, hi=high if high is not None else INF, lo_open=low_open)
        hint = _slip_hint(key, value, x, spec)
        fix = hint.lstrip(" ;").removeprefix("(").removesuffix(")") or None
    unit = f" {shown}" if shown else (f" {kind.unit}" if kind.unit else "")
    if low is not None and (x <= low if low_open else x < low):
        bound = f"> {low:g}{unit}" if low_open else f">= {low:g}{unit}"
        if high is not None:
            raise where.fail(key, value, f"must be {bound} and <= {high:g}{unit}", fix)
        raise where.fail(key, value, f"must be {bound}", fix)
    if high is not None and x > high:
        lower = "" if low is None else (f"> {low:g}{unit} and " if low_open else f">= {low:g}{unit} and ")
        raise where.fail(key, value, f"must be {lower}<= {high:g}{unit}", fix)
    return x
