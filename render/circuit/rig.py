"""What the pickup plays into: controls, cable and amplifier input.

From the jack (the node the pickup drives): the tone pot section in series
with the tone capacitor to ground, and the volume pot's track to ground with
its wiper driving the cable; the cable and the amplifier's input R and C sit
at the wiper. The tool's output is the voltage at the wiper, i.e. at the
amplifier's input at the cable's far end (the cable is lumped: its
capacitance per metre times its length).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .poly import W_NORM, Chain, cascade, const, lin, series, shunt

MIN_R = 1e-3  # ohm: a pot section at its end stop is this, not an exact short to ground


@dataclass(frozen=True)
class RigParams:
    tone_R: np.ndarray  # ohm, tone pot section in series with the tone cap
    tone_C: np.ndarray  # F
    vol_Ru: np.ndarray  # ohm, volume pot from the jack to the wiper
    vol_Rd: np.ndarray  # ohm, wiper to ground
    amp_G: np.ndarray  # S, 1/amp_r
    load_C: np.ndarray  # F, cable + amp input capacitance at the wiper


def rig_parts(r: RigParams, w: float = W_NORM) -> tuple[Chain, Chain, Chain]:
    """The rig's three sections from the jack: tone branch, volume pot's upper half, the wiper's load."""
    one = const(np.ones_like(r.amp_G))
    tone = shunt(lin(0.0, r.tone_C * w), lin(1.0, r.tone_R * r.tone_C * w))  # Y = sC / (1 + sRC)
    upper = series(const(r.vol_Ru), one)
    at_wiper = shunt(lin(1.0 / r.vol_Rd + r.amp_G, r.load_C * w), one)
    return tone, upper, at_wiper


def rig_chain(r: RigParams, w: float = W_NORM) -> Chain:
    """Chain matrix from the jack to the amplifier input (output port open)."""
    return cascade(*rig_parts(r, w))


def volume_fraction(rotation: float, taper: str) -> float:
    """Fraction of the pot's track between wiper and ground at ``rotation`` (0..1).

    Audio taper: (81^r − 1)/80, 10 % at half rotation (common practice, no source).
    """
    if taper == "audio":
        return (81.0**rotation - 1.0) / 80.0
    return rotation


def rig_params(rigs, *, passive: bool) -> RigParams:
    """The rigs as arrays (one row per rig): the active pickup's controls, or with ``passive`` the passive reference's."""
    tone_R, tone_C, ru, rd, g, c = [], [], [], [], [], []
    for r in rigs:
        vpot = r.passive_pot if passive else r.volume_pot
        tpot = r.passive_pot if passive else r.tone_pot
        frac = volume_fraction(r.volume, r.volume_taper)
        tone_R.append(tpot * volume_fraction(r.tone, r.tone_taper))
        tone_C.append(r.passive_tone_cap if passive else r.tone_cap)
        ru.append(vpot * (1.0 - frac))
        rd.append(max(vpot * frac, MIN_R))
        g.append(1.0 / r.amp_r)
        c.append(r.cable_length * r.cable_capacitance + r.amp_c)
    return RigParams(*(np.asarray(v, dtype=float) for v in (tone_R, tone_C, ru, rd, g, c)))
