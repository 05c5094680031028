"""What the pickup plays into: controls, cable and amplifier input.

From the jack (the node the pickup drives): the tone pot section in series
with the tone capacitor to ground, and the volume pot's track to ground with
its wiper driving the cable; the cable and the amplifier's input R and C sit
at the wiper. The tool's output is the voltage at the wiper, i.e. at the
amplifier's input at the cable's far end (the cable is lumped: its
capacitance per metre times its length).
"""

from __future__ import annotations

import numpy as np

from .params import RigParams
from .poly import W_NORM, Chain, cascade, const, lin, series, shunt


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
