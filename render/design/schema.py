"""The design and rig files' schema: one table of field specifications per TOML table.

These tables drive loading, range checks, defaults, error messages and the
README's format table, so the rules live in one place. Each entry is a
:class:`render.validate.Field`: the kind of quantity, whether it is required,
its default and its plausible range.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from .. import units as U
from ..circuit.winding import CORE_FACTORS
from ..errors import InputError
from ..validate import C_RANGE, R_RANGE, TOP_KEYS, Field, with_example
from .construction import CONSTRUCTION
from .model import DEFAULT_HARMONICS

__all__ = ["COIL", "COIL_WITH_GEOMETRY", "DESIGN_TABLES", "FEEDBACK", "HUM", "INPUT_A", "INPUT_B", "MAX_NAME_CHARS", "OUTPUT", "REQUIRED_TABLES", "RIG", "SUPPLY", "TOP_KEYS", "WINDING"]


def read_wire(raw: Any, loc: str) -> tuple[str, float]:
    """A winding's wire: ("awg", gauge) or ("diameter", m)."""
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        if not 20 <= raw <= 60:
            raise InputError(f'{loc}={U.shown(raw)}: an AWG gauge must be from 20 to 60 (pickup wire is usually 41 to 44), or give a bare diameter like "0.0635mm"')
        return ("awg", float(raw))
    try:
        dia = U.parse_quantity(raw, U.LENGTH)
    except U.QuantityError as exc:
        raise InputError(f'{loc}={U.shown(raw)}: {exc}; give an AWG number like 42 or a bare diameter like "0.0635mm"') from None
    if not 5e-6 <= dia <= 2e-3:
        raise InputError(f"{loc}={U.shown(raw)}: a bare wire diameter must be from 5 µm to 2 mm")
    return ("diameter", dia)


with_example(read_wire, "42")


def read_core(raw: Any, loc: str) -> float:
    """A winding's core factor: a number from 1 to 20 or a named core."""
    if isinstance(raw, str) and raw in CORE_FACTORS:
        return float(CORE_FACTORS[raw])
    if isinstance(raw, (int, float)) and not isinstance(raw, bool) and 1.0 <= raw <= 20.0:
        return float(raw)
    raise InputError(f"{loc}={U.shown(raw)}: expected a number from 1 to 20 or one of {', '.join(repr(k) for k in CORE_FACTORS)} (rough estimates)")


with_example(read_core, f'"{next(iter(CORE_FACTORS))}"')


COIL = {
    "inductance": Field(U.INDUCTANCE, True, lo=1e-5, hi=100.0, lo_open=False, doc="inductance of the winding"),
    "resistance": Field(U.RESISTANCE, True, lo=1.0, hi=1e6, lo_open=False, doc="DC resistance of the winding"),
    "capacitance": Field(U.CAPACITANCE, True, lo=1e-13, hi=1e-7, lo_open=False, doc="winding self-capacitance across the coil's terminals"),
    "eddy_resistance": Field(U.RESISTANCE, doc="core loss as a resistance in parallel with the inductance", **R_RANGE),
    "eddy_coupling": Field(
        U.RATIO, lo=0.0, hi=0.95, hi_open=True, doc="core loss as a shorted secondary: coupling k², 0 < k² < 0.95", zero="0 is no secondary: leave both eddy_coupling and eddy_corner out"
    ),
    "eddy_corner": Field(U.FREQUENCY, lo=1.0, hi=1e7, lo_open=False, doc="the shorted secondary's corner R2/(2π L2)"),
    "sensitivity": Field(U.SENSITIVITY, True, lo=1e-5, hi=1e3, lo_open=False, doc="EMF per m/s of string velocity at the sensing point"),
    "turns_area": Field(
        U.AREA,
        True,
        lo=1e-6,
        hi=1e3,
        lo_open=False,
        doc="turns × effective loop area; hum EMF = turns_area · dB/dt",
        missing="or describe the coil's turns in a [{table}.geometry] table instead (turns_area is then derived from it)",
    ),
    "position": Field(U.LENGTH, True, lo=1e-3, hi=1.5, lo_open=False, doc="sensing point: distance from the bridge saddle"),
    "aperture": Field(U.LENGTH, default=0.0, lo=0.0, hi=0.2, lo_open=False, doc="width of the sensing window along the string"),
    "signal_polarity": Field("polarity", doc="+1 or -1 (default +1 for coil_a, -1 for coil_b)"),
    "hum_polarity": Field("polarity", default=1, doc="+1 or -1 (default +1: hum is common-mode)"),
}

# with a [coil_x.geometry] table, turns_area is derived from it (an entered one is shown beside it)
COIL_WITH_GEOMETRY = {**COIL, "turns_area": replace(COIL["turns_area"], required=False)}

WINDING = {
    "turns": Field(U.RATIO, True, lo=1.0, hi=1e6, lo_open=False, doc="number of turns"),
    "wire": Field(read_wire, True, doc='AWG gauge number (e.g. 42) or bare copper diameter ("0.0635mm")'),
    "mean_turn": Field(U.LENGTH, True, lo=5e-3, hi=2.0, lo_open=False, doc="mean length of one turn"),
    "height": Field(U.LENGTH, True, lo=2e-4, hi=0.3, lo_open=False, doc="winding length along the coil's axis"),
    "depth": Field(U.LENGTH, True, lo=1e-4, hi=0.1, lo_open=False, doc="radial build of the winding"),
    "core_factor": Field(read_core, True, doc='multiplies the air-core inductance: a number ≥ 1 or "air", "ceramic", "alnico", "steel"'),
    "temperature": Field(U.RATIO, default=20.0, lo=-50.0, hi=200.0, lo_open=False, doc="copper temperature in °C"),
}

INPUT_A = {
    "load_r": Field(U.RESISTANCE, doc="loading resistor across the coil", **R_RANGE),
    "load_c": Field(U.CAPACITANCE, doc="loading capacitor across the coil", zero="0 F is no capacitor: leave load_c out", **C_RANGE),
    "series_c": Field(U.CAPACITANCE, True, doc="from the coil towards the amplifier input (bass cut)", **C_RANGE),
    "series_r": Field(U.RESISTANCE, True, doc="in series with series_c, into the amplifier input", **R_RANGE),
}
INPUT_B = {
    **INPUT_A,
    "bias_top": Field(U.RESISTANCE, True, doc="battery + to the non-inverting input node", **R_RANGE),
    "bias_bottom": Field(U.RESISTANCE, True, doc="non-inverting input node to ground", **R_RANGE),
    "shunt_c": Field(U.CAPACITANCE, doc="non-inverting input node to ground", zero="0 F is no capacitor: leave shunt_c out", **C_RANGE),
}
FEEDBACK = {
    "r": Field(U.RESISTANCE, True, doc="amplifier output to the inverting input", **R_RANGE),
    "c": Field(U.CAPACITANCE, doc="in parallel with r", zero="0 F is no capacitor: leave c out", **C_RANGE),
}
OUTPUT = {
    "coupling_c": Field(U.CAPACITANCE, True, doc="amplifier output to series_r (blocks the DC bias)", **C_RANGE),
    "series_r": Field(U.RESISTANCE, True, doc="to the output jack (sets the output impedance)", **R_RANGE),
    "shunt_r": Field(U.RESISTANCE, doc="output jack to ground", **R_RANGE),
}
SUPPLY = {
    "battery": Field(U.VOLTAGE, True, lo=1.5, hi=60.0, lo_open=False, doc="battery voltage, e.g. 9 or 18"),
    "margin_low": Field(U.VOLTAGE, default=1.0, lo=0.0, hi=30.0, lo_open=False, doc="closest the amplifier output gets to ground"),
    "margin_high": Field(U.VOLTAGE, default=1.0, lo=0.0, hi=30.0, lo_open=False, doc="closest it gets to the battery +"),
    "knee": Field(U.VOLTAGE, default=0.5, lo=1e-3, hi=10.0, lo_open=False, doc="width of the soft transition into each limit"),
    "gbw": Field(U.FREQUENCY, lo=1e3, hi=1e10, lo_open=False, doc="op-amp gain-bandwidth product (absent: no bandwidth limit)"),
    "open_loop_gain": Field(U.RATIO, default=1e5, lo=1e2, hi=1e9, lo_open=False, doc="op-amp DC open-loop gain (default 1e5, from memory: typical of general-purpose op-amps)"),
    "slew_rate": Field(U.SLEW_RATE, lo=1e3, hi=1e11, lo_open=False, doc='op-amp output slew rate, e.g. "13MV/s" or "13V/us" (V/µs, as datasheets give it; needs gbw; absent: no limit)'),
    "noise_voltage": Field(U.VOLTAGE_DENSITY, default=10e-9, lo=1e-11, hi=1e-5, lo_open=False, doc="op-amp input voltage noise density"),
    "noise_current": Field(U.CURRENT_DENSITY, default=1e-14, lo=1e-17, hi=1e-8, lo_open=False, doc="op-amp input current noise density"),
}
RIG = {
    "volume_pot": Field(U.RESISTANCE, default=25e3, doc="volume pot track resistance", **R_RANGE),
    "volume": Field(U.RATIO, default=1.0, lo=0.0, hi=1.0, lo_open=False, doc="volume knob rotation 0..1"),
    "volume_taper": Field("taper", default="audio", doc='"audio" or "linear"'),
    "tone_pot": Field(U.RESISTANCE, default=25e3, doc="tone pot resistance", **R_RANGE),
    "tone": Field(U.RATIO, default=1.0, lo=0.0, hi=1.0, lo_open=False, doc="tone knob rotation 0..1"),
    "tone_taper": Field("taper", default="linear", doc='"audio" or "linear"'),
    "tone_cap": Field(U.CAPACITANCE, default=22e-9, doc="tone capacitor", **C_RANGE),
    "cable_length": Field(U.LENGTH, default=6.0, lo=0.0, hi=200.0, lo_open=False, doc="cable length"),
    "cable_capacitance": Field(U.CAP_PER_LENGTH, default=100e-12, lo=1e-12, hi=1e-9, lo_open=False, doc="cable capacitance per metre"),
    "amp_r": Field(U.RESISTANCE, default=1e6, doc="amplifier input resistance", **R_RANGE),
    "amp_c": Field(U.CAPACITANCE, default=50e-12, lo=0.0, hi=1e-6, lo_open=False, doc="amplifier input capacitance"),
    "passive_pot": Field(U.RESISTANCE, default=500e3, doc="passive reference: volume and tone pots", **R_RANGE),
    "passive_tone_cap": Field(U.CAPACITANCE, default=22e-9, doc="passive reference: tone capacitor", **C_RANGE),
}
HUM = {
    "mains": Field(U.FREQUENCY, default=50.0, lo=40.0, hi=70.0, lo_open=False, doc="mains frequency (50 or 60)"),
    "field": Field(
        U.FLUX_DENSITY,
        default=1e-6,
        lo=1e-10,
        hi=1e-2,
        lo_open=False,
        doc="reference peak flux density: harmonic h peaks at field × harmonics[h−1] (the fundamental at field when harmonics starts with 1)",
    ),
    "harmonics": Field("list", default=DEFAULT_HARMONICS, doc="relative field amplitudes of harmonics 1, 2, 3, …"),
}

DESIGN_TABLES = {
    "coil_a": COIL,
    "coil_b": COIL,
    "input_a": INPUT_A,
    "input_b": INPUT_B,
    "feedback": FEEDBACK,
    "output": OUTPUT,
    "supply": SUPPLY,
    "rig": RIG,
    "hum": HUM,
    "construction": CONSTRUCTION,
}
REQUIRED_TABLES = ("coil_a", "coil_b", "input_a", "input_b", "feedback", "output", "supply")
MAX_NAME_CHARS = 120  # a design's name heads tables, plots and messages (common practice, no source)
