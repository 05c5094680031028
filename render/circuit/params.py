"""Designs as arrays: the engine's input, one row per design.

:func:`from_designs` turns validated :class:`render.design.Design` objects
into one :class:`Params` whose fields are float arrays of shape (N,), so
the engine evaluates many designs in one vectorised pass (Monte Carlo and
fitting change these arrays directly). Absent optional parts become exact
zeros of the matching admittance or coefficient, never a special case in
the algebra.
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import TYPE_CHECKING

import numpy as np

from .ladder import LadderParams, coil_ladder, ladder_params
from .rig import RigParams, rig_params

if TYPE_CHECKING:
    from ..design import Design


@dataclass(frozen=True)
class CoilParams:
    L: np.ndarray  # H
    R: np.ndarray  # ohm, DC resistance
    Cw: np.ndarray  # F, winding capacitance
    Gp: np.ndarray  # S, 1/eddy_resistance (0: none)
    k2: np.ndarray  # shorted-secondary coupling k² (0: none)
    we: np.ndarray  # rad/s, secondary corner 2π·eddy_corner (1 when absent)
    sec: np.ndarray  # 1.0 with a shorted secondary, 0.0 without
    sig: np.ndarray  # V·s/m: signal_polarity · sensitivity
    hum: np.ndarray  # m²: hum_polarity · turns_area
    ladder: LadderParams | None = None  # RL ladder replacing L and its core loss, row by row (render.circuit.ladder)


@dataclass(frozen=True)
class InputParams:
    Gl: np.ndarray  # S, 1/load_r (0: none)
    Cl: np.ndarray  # F, load_c (0: none)
    Cs: np.ndarray  # F, series_c
    Rs: np.ndarray  # ohm, series_r
    Gn: np.ndarray  # S, admittance from the amplifier input node to AC ground (bias divider; 0 for input_a)
    Cn: np.ndarray  # F, shunt_c at that node (0: none)


@dataclass(frozen=True)
class Params:
    """N designs as arrays (SI units)."""

    coil_a: CoilParams
    coil_b: CoilParams
    input_a: InputParams
    input_b: InputParams
    fb_G: np.ndarray  # S, 1/feedback.r
    fb_C: np.ndarray  # F, feedback.c (0: none)
    inv_a0: np.ndarray  # 1/A0, the op-amp's open-loop DC gain
    inv_gbw: np.ndarray  # s/rad, 1/(2π·gbw) (0: no bandwidth limit)
    out_Cc: np.ndarray  # F, output coupling_c
    out_Ro: np.ndarray  # ohm, output series_r
    out_G: np.ndarray  # S, 1/output shunt_r (0: none)
    rig: RigParams  # what the active pickup plays into
    passive_rig: RigParams  # the passive reference's controls, same cable and amp

    @property
    def n(self) -> int:
        return self.fb_G.shape[0]


def _arr(values) -> np.ndarray:
    return np.asarray(values, dtype=float)


def _inv(x):
    return 0.0 if x is None else 1.0 / x


def _coil(cs) -> CoilParams:
    return CoilParams(
        L=_arr([c.inductance for c in cs]),
        R=_arr([c.resistance for c in cs]),
        Cw=_arr([c.capacitance for c in cs]),
        Gp=_arr([_inv(c.eddy_resistance) for c in cs]),
        k2=_arr([c.eddy_coupling or 0.0 for c in cs]),
        we=_arr([2 * np.pi * c.eddy_corner if c.eddy_corner else 1.0 for c in cs]),
        sec=_arr([1.0 if c.eddy_coupling else 0.0 for c in cs]),
        sig=_arr([c.signal_polarity * c.sensitivity for c in cs]),
        hum=_arr([c.hum_polarity * c.turns_area for c in cs]),
        ladder=ladder_params([coil_ladder(c) for c in cs]),
    )


def _input(ns, with_bias: bool) -> InputParams:
    return InputParams(
        Gl=_arr([_inv(n.load_r) for n in ns]),
        Cl=_arr([n.load_c or 0.0 for n in ns]),
        Cs=_arr([n.series_c for n in ns]),
        Rs=_arr([n.series_r for n in ns]),
        Gn=_arr([1.0 / n.bias_top + 1.0 / n.bias_bottom if with_bias else 0.0 for n in ns]),
        Cn=_arr([(n.shunt_c or 0.0) if with_bias else 0.0 for n in ns]),
    )


def from_designs(designs: list[Design] | tuple[Design, ...]) -> Params:
    """Stack validated designs (each with its rig applied) into one :class:`Params`."""
    ds = list(designs)
    return Params(
        coil_a=_coil([d.coil_a for d in ds]),
        coil_b=_coil([d.coil_b for d in ds]),
        input_a=_input([d.input_a for d in ds], with_bias=False),
        input_b=_input([d.input_b for d in ds], with_bias=True),
        fb_G=_arr([1.0 / d.feedback.r for d in ds]),
        fb_C=_arr([d.feedback.c or 0.0 for d in ds]),
        inv_a0=_arr([1.0 / d.supply.open_loop_gain for d in ds]),
        inv_gbw=_arr([1.0 / (2 * np.pi * d.supply.gbw) if d.supply.gbw else 0.0 for d in ds]),
        out_Cc=_arr([d.output.coupling_c for d in ds]),
        out_Ro=_arr([d.output.series_r for d in ds]),
        out_G=_arr([_inv(d.output.shunt_r) for d in ds]),
        rig=rig_params([d.rig for d in ds], passive=False),
        passive_rig=rig_params([d.rig for d in ds], passive=True),
    )


def without_cable(p: Params, designs) -> Params:
    """The same designs with the cable removed (amp input capacitance kept)."""
    amp_c = _arr([d.rig.amp_c for d in designs])
    return replace(p, rig=replace(p.rig, load_C=amp_c), passive_rig=replace(p.passive_rig, load_C=amp_c))


def take(p, idx):
    """Rows ``idx`` of a Params (or any of its nested tables)."""
    kw = {}
    for f in fields(p):
        v = getattr(p, f.name)
        kw[f.name] = v[idx] if isinstance(v, np.ndarray) else None if v is None else take(v, idx)
    return type(p)(**kw)
