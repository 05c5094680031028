"""The usual range of each part and the likely prefix of a bare number (a leaf module: it imports only :mod:`render.units`).

:mod:`render.validate` uses :func:`likely_prefix` for the hint of a refused
value; :mod:`render.plausible` uses the ranges for its warnings. Every range
is marked as a rule of thumb ("common practice, no source") or as recalled
("from memory").
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
    # DC resistance: passive coils 2-20 kΩ, low-impedance coils tens of Ω (the range render coil fit uses)
    ("coil", "resistance"): Usual(10.0, 100e3, "from memory"),
    # core loss as a resistance across the inductance: kΩ (solid steel, low-impedance coils) to MΩ
    ("coil", "eddy_resistance"): Usual(1e3, 100e6, "from memory"),
    ("feedback", "c"): Usual(1e-12, 2.2e-9, "common practice, no source"),
    ("input", "series_c"): Usual(10e-9, 100e-6, "common practice, no source"),
    ("input", "load_c"): Usual(10e-12, 10e-9, "common practice, no source"),
    ("input", "shunt_c"): Usual(1e-9, 1e-3, "common practice, no source"),
    ("output", "coupling_c"): Usual(100e-9, 1e-3, "common practice, no source"),
    ("rig", "tone_cap"): Usual(1e-9, 220e-9, "common practice, no source"),
    ("rig", "passive_tone_cap"): Usual(1e-9, 220e-9, "common practice, no source"),
    ("rig", "amp_c"): Usual(1e-12, 1e-9, "common practice, no source"),
    ("rig", "cable_capacitance"): Usual(20e-12, 300e-12, "from memory"),
    # resistors of an op-amp stage fed by a pickup: below about 1 kΩ the inputs load the coil and
    # the op-amp's output, above about 10 MΩ bias currents and noise take over
    ("input", "series_r"): Usual(1e3, 1e6, "common practice, no source"),
    ("input", "load_r"): Usual(1e3, 10e6, "common practice, no source"),
    ("input", "bias_top"): Usual(10e3, 10e6, "common practice, no source"),
    ("input", "bias_bottom"): Usual(10e3, 10e6, "common practice, no source"),
    ("feedback", "r"): Usual(10e3, 10e6, "common practice, no source"),
    ("output", "series_r"): Usual(10.0, 10e3, "common practice, no source"),
    ("output", "shunt_r"): Usual(10e3, 10e6, "common practice, no source"),
}

# the stage's nominal gain feedback.r / input_a.series_r: an active pickup's preamp raises its
# low-impedance coils by about 0 to 40 dB (common practice, no source)
STAGE_GAIN_RANGE = (1.0, 100.0)

# where a network's corner normally lies (common practice, no source): the feedback r‖c corner
# well above the middle of a guitar's range; the coupling corners below the low E string (82 Hz)
FEEDBACK_CORNER_MIN_HZ = 2000.0
COUPLING_CORNER_MAX_HZ = 40.0
# a coil's resonance with its winding and load capacitance: pickups put it at about 2-12 kHz, a
# low-impedance coil with no load capacitor far higher, so only a resonance below this warns (common practice, no source)
LOADED_RESONANCE_MIN_HZ = 2000.0
# the stage's closed-loop corner gbw / (1 + feedback.r / input_a.series_r) lies above the audio
# band, 20 kHz (common practice, no source)
CLOSED_LOOP_CORNER_MIN_HZ = 20e3
# the audio band the warnings place a corner against (the usual 20 Hz to 20 kHz of hearing, common practice, no source)
AUDIO_BAND_HZ = (20.0, 20e3)


def band_place(f_hz: float) -> str:
    """Where ``f_hz`` lies against :data:`AUDIO_BAND_HZ`, in words: "inside the band", "below the band" or "above the band"."""
    lo, hi = AUDIO_BAND_HZ
    return "below the band" if f_hz < lo else "above the band" if f_hz > hi else "inside the band"


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
