"""Values that are legal but unlikely: the usual range of each part, the likely prefix, and warnings.

A design file is refused only for values no circuit can have (the ranges of
:mod:`render.design.schema`). Within them, some values are far from what
pickups and their preamps use and are most often a slipped prefix: a
feedback capacitor of "22n" instead of "22p" puts the feedback corner at
72 Hz with 100 kΩ. This module knows the usual ranges and turns them into

- :func:`likely_prefix`: the prefix that puts a bare number in its part's
  usual range (``inductance = 120`` is most likely ``"120m"``), for the hint
  of a refusal;
- :func:`design_warnings`: one line per unlikely value of a loaded design
  (a network corner inside the band where it normally lies far outside it; a
  coil inductance outside the usual range for pickups), each naming the
  range, its origin, and the value with the likely prefix.

Every range here is marked as a rule of thumb ("common practice, no source")
or as recalled ("from memory"); none is a refusal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from . import units as U


@dataclass(frozen=True)
class Usual:
    """A part's usual range (SI units) and where the range comes from."""

    lo: float
    hi: float
    origin: str  # "common practice, no source" or "from memory"

    def holds(self, x: float) -> bool:
        return self.lo <= x <= self.hi

    def text(self, unit: str) -> str:
        return f"{U.format_si(self.lo, unit)} to {U.format_si(self.hi, unit)}, {self.origin}"


# (table, key) -> usual range
USUAL: dict[tuple[str, str], Usual] = {
    # passive humbucker coils 1-5 H, hot single coils to about 8 H, low-impedance coils a few mH
    ("coil", "inductance"): Usual(1e-3, 10.0, "from memory"),
    ("coil", "capacitance"): Usual(10e-12, 1e-9, "from memory"),
    ("feedback", "c"): Usual(1e-12, 2.2e-9, "common practice, no source"),
    ("input", "series_c"): Usual(10e-9, 100e-6, "common practice, no source"),
    ("input", "load_c"): Usual(10e-12, 10e-9, "common practice, no source"),
    ("input", "shunt_c"): Usual(1e-9, 1e-3, "common practice, no source"),
    ("output", "coupling_c"): Usual(100e-9, 1e-3, "common practice, no source"),
    ("rig", "tone_cap"): Usual(1e-9, 220e-9, "common practice, no source"),
    ("rig", "passive_tone_cap"): Usual(1e-9, 220e-9, "common practice, no source"),
    ("rig", "amp_c"): Usual(1e-12, 1e-9, "common practice, no source"),
    ("rig", "cable_capacitance"): Usual(20e-12, 300e-12, "from memory"),
}

# where a network's corner normally lies (common practice, no source): the feedback r‖c corner
# well above the middle of a guitar's range; the coupling corners below the low E string (82 Hz)
FEEDBACK_CORNER_MIN_HZ = 2000.0
COUPLING_CORNER_MAX_HZ = 40.0

_PREFIX_LETTERS = {-15: "f", -12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M"}


def _group(table: str) -> str:
    """``coil_a`` -> ``coil``, ``input_b`` -> ``input``."""
    for g in ("coil", "input"):
        if table.startswith(g):
            return g
    return table


def usual(table: str, key: str) -> Usual | None:
    """The usual range of ``[table] key``, or None when there is none on record."""
    return USUAL.get((_group(table), key))


def _mantissa(x: float) -> tuple[float, int]:
    """``x`` as (m, e) with x = m·10^e, e a multiple of 3 and 1 <= m < 1000."""
    e = 3 * math.floor(math.log10(abs(x)) / 3)
    return x / 10.0**e, e


def _with_prefix(number: float, exponent: int) -> str:
    return f"{number:g}{_PREFIX_LETTERS[exponent]}"


def prefixed_alternatives(x: float) -> list[tuple[str, float]]:
    """The same digits as ``x`` under every other prefix from f to M: [("22p", 2.2e-11), ...]."""
    if not (x > 0 and math.isfinite(x)):
        return []
    m, e = _mantissa(x)
    m = float(f"{m:.6g}")
    return [(_with_prefix(m, k), m * 10.0**k) for k in sorted(_PREFIX_LETTERS) if k != e]


def likely_prefix(table: str, key: str, number: float) -> str | None:
    """The bare ``number`` with the prefix that puts it in the part's usual range (nearest its middle), e.g. ``"120m"``; None if none does."""
    rng = usual(table, key)
    if rng is None or not (number > 0 and math.isfinite(number)):
        return None
    middle = math.sqrt(rng.lo * rng.hi)
    best = None
    for k in sorted(_PREFIX_LETTERS):
        v = number * 10.0**k
        if rng.holds(v) and (best is None or abs(math.log(v / middle)) < abs(math.log(best[1] / middle))):
            best = (f"{number:g}{_PREFIX_LETTERS[k]}", v)
    return None if best is None else best[0]


def _fix_for(x: float, ok) -> str:
    """ " (did you mean "22p"?)" for the first alternative prefix of ``x`` that ``ok(value)`` accepts, else ""."""
    for text, v in prefixed_alternatives(x):
        if ok(v):
            return f'; did you mean "{text}"?'
    return ""


def design_warnings(design) -> tuple[str, ...]:
    """One line per legal but unlikely value of ``design`` (rig applied): corners in the band, unusual coil inductances."""
    from .analysis.summary import corners

    out: list[str] = []
    c = corners(design)
    tau = 2 * math.pi
    fb = design.feedback
    if fb.c and c["feedback_hz"] is not None and c["feedback_hz"] < FEEDBACK_CORNER_MIN_HZ:
        rng = USUAL[("feedback", "c")]
        fix = _fix_for(fb.c, lambda v: rng.holds(v) and 1 / (tau * fb.r * v) >= FEEDBACK_CORNER_MIN_HZ)
        out.append(
            f"[feedback] c={U.format_si(fb.c, 'F')}: the feedback corner 1/(2π·r·c) is {c['feedback_hz']:.3g} Hz, inside the band;"
            f" it normally lies above {FEEDBACK_CORNER_MIN_HZ:g} Hz (common practice, no source){fix}"
        )
    for name in ("input_a", "input_b"):
        net = getattr(design, name)
        fc = c[f"{name}_hz"]
        if fc > COUPLING_CORNER_MAX_HZ:
            fix = _fix_for(net.series_c, lambda v, r=net.series_r: 1 / (tau * r * v) <= COUPLING_CORNER_MAX_HZ and USUAL[("input", "series_c")].holds(v))
            out.append(
                f"[{name}] series_c={U.format_si(net.series_c, 'F')}: the input coupling corner 1/(2π·series_r·series_c) is {fc:.3g} Hz, inside the band;"
                f" it normally lies below {COUPLING_CORNER_MAX_HZ:g} Hz (common practice, no source){fix}"
            )
    if c["output_hz"] > COUPLING_CORNER_MAX_HZ:
        cc = design.output.coupling_c
        fix = _fix_for(cc, lambda v: c["output_hz"] * cc / v <= COUPLING_CORNER_MAX_HZ and USUAL[("output", "coupling_c")].holds(v))
        out.append(
            f"[output] coupling_c={U.format_si(cc, 'F')}: the output coupling corner into the controls is {c['output_hz']:.3g} Hz, inside the band;"
            f" it normally lies below {COUPLING_CORNER_MAX_HZ:g} Hz (common practice, no source){fix}"
        )
    rng = USUAL[("coil", "inductance")]
    for name in ("coil_a", "coil_b"):
        ind = getattr(design, name).inductance
        if not rng.holds(ind):
            fix = _fix_for(ind, rng.holds)
            out.append(f"[{name}] inductance={U.format_si(ind, 'H')}: outside the usual range for pickup coils ({rng.text('H')}){fix}")
    return tuple(out)
