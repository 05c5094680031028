"""Winding capacitance from the layers and the wire's insulation.

Turn to turn (Massarini & Kazimierczuk, "Self-capacitance of inductors",
IEEE Trans. Power Electron. 12(4), 671–676, 1997): two touching round wires
of bare radius r_c and outer (insulated) radius r_o, insulation of relative
permittivity ε_r, over a turn length l_t. Each elementary path at angle θ
from the line joining the centres crosses the two insulation layers and an
air gap; M&K take the insulation alone below θ* and the air gap alone above
it, up to the next neighbour at π/6 (hexagonal packing):

    θ* = arccos(1 − ln(r_o/r_c)/ε_r)
    C_tt = ε0·l_t·[ε_r·θ*/ln(r_o/r_c) + cot(θ*/2) − cot(π/12)]           (1)

Layers. An orderly (orthocyclic) winding of n_t turns per layer has each turn
lying in the groove of two turns of the layer below, so two adjacent layers
face each other through C_ll = 2·n_t·C_tt. Wound back and forth, the voltage
between two adjacent layers grows linearly from 0 at the turn-round to
2V/N_L at the far end, so the energy ½·C_ll·(2V/N_L)²/3 per layer pair gives
the terminal capacitance

    C_w = 4/(3·N_L²) · Σ_i C_ll,i                                         (2)

(the energy method, as in Dalessandro, da Silva Cavalcante & Kolar, IEEE
Trans. Power Electron. 22(5), 2007; for two layers it is C_ll/3). Turns
within a layer differ by V/N and add a negligible C_tt/N.

Expected error: M&K compared (1) with measured, orderly wound inductors and
report agreement of about 10 % (from memory; the measurements not
re-checked here). Against a 2-D electrostatic finite-element solve of the
cross-section (GetDP and gmsh; tests/impedance/test_capacitance_fe.py),
ε_r = 3.7, r_o/r_c = 1.06, 1.12 and 1.26:

* two touching wires alone: (1) reads +6 %, −3 % and −17 %. Its split
  overstates the paths near the contact and its cut at π/6 drops the far
  ones, and the two nearly cancel for a heavy build;
* a wire in the groove of two: 2·C_tt reads +17 %, +11 % and 0 %;
* a row against a row (the periodic orthocyclic cell, the case of (2)):
  2·C_tt per turn reads +30 %, +29 % and +25 %. The neighbouring turns
  take the far paths away, and the overestimate near the contact stays.

So (2) with (1) reads about 30 % above the field solution of the same
orderly winding for thin and heavy builds (the README's worked winding:
118 pF, and 91 pF with the solve's layer capacitance). The formula is kept
as published, not scaled to the solve.

Pickup coils are scatter-wound: turns of distant layers touch, which raises
the capacitance, and the winding is looser than orthocyclic, which lowers
it. Expect a factor of up to 2 either way for such coils (common practice,
no source): measure the coil when it exists (:mod:`render.impedance.measured`).

Typical insulation permittivity: polyurethane and polyvinyl-formal enamels
ε_r ≈ 3.5–4 (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from scipy.constants import epsilon_0

from ..errors import InputError

ENAMEL_PERMITTIVITY = 3.7  # polyurethane / polyvinyl-formal magnet-wire enamel, from memory


def turn_to_turn_capacitance(*, turn_length: float, bare_diameter: float, outer_diameter: float, permittivity: float = ENAMEL_PERMITTIVITY) -> float:
    """C_tt in F between two touching insulated round wires over ``turn_length`` m, eq. (1)."""
    if not (0 < bare_diameter < outer_diameter):
        raise InputError(f"wire bare diameter {bare_diameter!r} m and outer diameter {outer_diameter!r} m: need 0 < bare < outer (the outer includes the insulation)")
    if not permittivity >= 1:
        raise InputError(f"insulation permittivity={permittivity!r}: must be ≥ 1 (relative)")
    ln_r = math.log(outer_diameter / bare_diameter)
    cos_star = 1.0 - ln_r / permittivity
    limit = math.pi / 6
    if cos_star <= math.cos(limit):  # thick insulation: the insulation term alone up to π/6
        return epsilon_0 * turn_length * permittivity * limit / ln_r
    theta = math.acos(cos_star)
    return epsilon_0 * turn_length * (permittivity * theta / ln_r + 1.0 / math.tan(theta / 2) - 1.0 / math.tan(limit / 2))


@dataclass(frozen=True)
class LayerEstimate:
    """Winding capacitance of an orderly layered winding.

    Attributes
    ----------
    capacitance : float, F
        Across the terminals, eq. (2).
    turns_per_layer : int
    layers : int
    turn_to_turn : float, F
        C_tt of the mean turn.
    depth_used : float, m
        How deep the orderly layers reach (compare with the bobbin's depth).
    """

    capacitance: float
    turns_per_layer: int
    layers: int
    turn_to_turn: float
    depth_used: float


def layered_winding_capacitance(
    *,
    turns: float,
    height: float,
    window_length: float,
    window_width: float,
    bare_diameter: float,
    outer_diameter: float,
    permittivity: float = ENAMEL_PERMITTIVITY,
) -> LayerEstimate:
    """Eq. (2) for ``turns`` wound in orderly layers on a rectangular window (m).

    Each layer holds as many turns as fit along ``height``; layer i sits at
    depth (i + ½)·pitch with the orthocyclic pitch √3/2·outer_diameter, and
    its turn length is the window's perimeter grown by that depth on every
    side (sharp corners, as :mod:`render.impedance.inductance`).
    """
    if not (turns >= 2 and height > 0):
        raise InputError(f"turns={turns!r}, height={height!r} m: need at least 2 turns and a height > 0")
    n_t = int(height // outer_diameter)
    if n_t < 1:
        raise InputError(f"height={height!r} m is less than one wire ({outer_diameter!r} m): no layer fits")
    n_layers = int(math.ceil(turns / n_t))
    pitch = math.sqrt(3.0) / 2.0 * outer_diameter
    total = 0.0
    for i in range(n_layers - 1):
        depth = (i + 1) * pitch  # the interface between layers i and i + 1
        l_t = 2 * (window_length + window_width) + 8 * depth
        total += 2 * n_t * turn_to_turn_capacitance(turn_length=l_t, bare_diameter=bare_diameter, outer_diameter=outer_diameter, permittivity=permittivity)
    c = 4.0 / (3.0 * n_layers**2) * total
    mid = n_layers * pitch / 2
    c_tt = turn_to_turn_capacitance(turn_length=2 * (window_length + window_width) + 8 * mid, bare_diameter=bare_diameter, outer_diameter=outer_diameter, permittivity=permittivity)
    return LayerEstimate(c, n_t, n_layers, c_tt, n_layers * pitch)
