"""A coil's model from its winding and its core parts, in one call.

Puts together, for the coil's terminals:

- R_dc from the wire's length (turns × mean turn) and copper
  (:mod:`render.circuit.winding`, IEC 60028);
- the air-core inductance of the rectangular winding (:mod:`.inductance`);
- the core parts' eddy-current impedance (:mod:`.eddy`), realised as a fitted
  RL ladder (:mod:`.ladder`) over 10 Hz–100 kHz, its error reported over
  20 Hz–20 kHz;
- the winding capacitance of orderly layers (:mod:`.capacitance`).

The impedance at the terminals is then eq. (1) of :mod:`.measured` with these
values, and the ladder goes to the engine through
:func:`render.circuit.ladder.ladder_params`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..circuit.winding import wire_resistance
from ..magnetics.coil import CoilGeometry
from .capacitance import ENAMEL_PERMITTIVITY, LayerEstimate, layered_winding_capacitance
from .eddy import core_impedance, dc_inductance
from .inductance import winding_inductance
from .ladder import FIT_BAND_HZ, LadderFit, fit_ladder


@dataclass(frozen=True)
class DerivedCoil:
    """A coil's model derived from its winding and core.

    Attributes
    ----------
    resistance : float, Ω
    air_inductance : float, H
    dc_inductance : float, H
        With the core parts at DC.
    ladder_fit : LadderFit
        The inductance with its core loss as an RL ladder, and the fit's error.
    capacitance : LayerEstimate
        The winding capacitance estimate (``.capacitance`` in F).
    wire_length : float, m
    """

    resistance: float
    air_inductance: float
    dc_inductance: float
    ladder_fit: LadderFit
    capacitance: LayerEstimate
    wire_length: float


def derive_coil(
    winding: CoilGeometry,
    *,
    bare_diameter: float,
    outer_diameter: float,
    parts=(),
    temperature_c: float = 20.0,
    permittivity: float = ENAMEL_PERMITTIVITY,
    fit: Callable[[np.ndarray, np.ndarray], LadderFit] = fit_ladder,
) -> DerivedCoil:
    """The coil's R_dc, inductance with core loss (as a ladder) and capacitance.

    Parameters
    ----------
    winding : CoilGeometry
    bare_diameter, outer_diameter : float, m
        The wire's copper and its insulated diameter.
    parts : sequence of :class:`render.impedance.eddy.CorePart`
        Conducting core parts (none: an air core).
    temperature_c : float
        Of the copper, °C.
    permittivity : float
        Of the wire's insulation (relative).
    fit : callable
        ``fit(frequency_hz, impedance) -> LadderFit``: :func:`render.impedance.ladder.fit_ladder`, or a
        caller's cached copy of it (the same numbers).
    """
    wire = winding.turns * winding.mean_turn
    r = wire_resistance(length=wire, diameter=bare_diameter, temperature_c=temperature_c)
    l_air = winding_inductance(winding)
    f = np.geomspace(FIT_BAND_HZ[0], FIT_BAND_HZ[1], 241)
    z = 2j * np.pi * f * l_air + core_impedance(f, air_inductance=l_air, parts=parts)
    ladder_fit = fit(f, z)
    cap = layered_winding_capacitance(
        turns=winding.turns,
        height=winding.height,
        window_length=winding.window_length,
        window_width=winding.window_width,
        bare_diameter=bare_diameter,
        outer_diameter=outer_diameter,
        permittivity=permittivity,
    )
    return DerivedCoil(r, l_air, dc_inductance(air_inductance=l_air, parts=parts), ladder_fit, cap, wire)
