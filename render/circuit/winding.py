"""A coil from its winding: turns, wire and former give resistance and inductance.

Both results are estimates, to be replaced by measured values when the
coil exists:

- Wire diameter from the AWG number: d = 0.005 in × 92^((36 − n)/39)
  (ASTM B258).
- Resistance from the wire's length (turns × mean turn length), its bare
  cross-section and annealed copper's resistivity, 0.017241 Ω·mm²/m at
  20 °C with temperature coefficient 0.00393 /K (IEC 60028).
- Air-core inductance from Wheeler's multilayer formula,
  L(µH) = 0.8 a² N² / (6a + 9b + 10c), a the mean radius, b the winding
  length, c the depth, all in inches (Wheeler, Proc. IRE 16(10), 1928;
  about 1 % for a round coil). The mean radius is taken from the mean turn
  length as a = mean_turn / (2π), which treats a flat bobbin as a round one
  of the same perimeter: a further approximation.
- Times a core factor for a steel or magnet core.
"""

from __future__ import annotations

import math

INCH = 0.0254  # m
RHO_20 = 0.017241e-6  # Ω·m, annealed copper at 20 °C (IEC 60028)
ALPHA_20 = 0.00393  # 1/K, its temperature coefficient at 20 °C (IEC 60028)

# Rough multipliers of the air-core inductance (common practice, no source):
# estimates for a typical pickup bobbin, to be replaced by a measurement.
CORE_FACTORS = {"air": 1.0, "ceramic": 1.3, "alnico": 1.8, "steel": 2.5}


def awg_diameter(gauge: float) -> float:
    """Bare copper diameter (m) of AWG ``gauge``: 0.005 in × 92^((36 − n)/39) (ASTM B258)."""
    return 0.005 * INCH * 92.0 ** ((36.0 - gauge) / 39.0)


def copper_resistivity(temperature_c: float) -> float:
    """Resistivity of annealed copper (Ω·m) at ``temperature_c`` (IEC 60028, linear in T)."""
    return RHO_20 * (1.0 + ALPHA_20 * (temperature_c - 20.0))


def wire_resistance(*, length: float, diameter: float, temperature_c: float = 20.0) -> float:
    """DC resistance (Ω) of ``length`` m of round copper wire of bare ``diameter`` m."""
    return copper_resistivity(temperature_c) * length / (math.pi * diameter**2 / 4.0)


def wheeler_inductance(*, turns: float, mean_radius: float, length: float, depth: float) -> float:
    """Air-core inductance (H) of a multilayer coil, Wheeler 1928 (dimensions in m)."""
    a, b, c = mean_radius / INCH, length / INCH, depth / INCH
    return 0.8 * a * a * turns * turns / (6 * a + 9 * b + 10 * c) * 1e-6


def from_winding(*, turns: float, diameter: float, mean_turn: float, height: float, depth: float, core_factor: float, temperature_c: float = 20.0):
    """(inductance H, resistance Ω, wire length m) estimated from a winding."""
    wire = turns * mean_turn
    r = wire_resistance(length=wire, diameter=diameter, temperature_c=temperature_c)
    l_air = wheeler_inductance(turns=turns, mean_radius=mean_turn / (2 * math.pi), length=height, depth=depth)
    return l_air * core_factor, r, wire
