"""A coil: its EMF in series with DC resistance and inductance, with core loss.

Lumped model (Paiva, Pakarinen & Välimäki, JAES 60(10), 2012): EMF in series
with R_dc and L, winding capacitance across the terminals. Two core-loss
models, which may be combined:

- a resistance R_p in parallel with the inductance;
- a shorted secondary (eddy currents): Z_L = sL1 − s²M²/(R2 + sL2) with
  M² = k²L1L2 and ω_e = R2/L2, which reduces to
  Z_L = sL1 (ω_e + s(1 − k²)) / (s + ω_e): L1 at DC, L1(1 − k²) as f → ∞.

A coil with an RL ladder (``CoilParams.ladder``, :mod:`render.circuit.ladder`)
takes the ladder for Z_L instead, in the rows where it is active.
"""

from __future__ import annotations

import numpy as np

from .params import CoilParams
from .poly import W_NORM, lin, padd, pmul, pscale


def inductor_impedance(c: CoilParams, w: float = W_NORM):
    """Z_L (inductance with its core loss) as (num, den) polynomials in x = s/w."""
    wn = c.we / w
    # sL1 (we + x(1-k²)) / (we·sec + x·sec + (1 - sec)) -- exact sL when sec = 0
    n = pmul(lin(0.0, c.L * w), lin(np.where(c.sec > 0, wn, 1.0), c.sec * (1.0 - c.k2)))
    d = lin(np.where(c.sec > 0, wn, 1.0), c.sec)
    # in parallel with R_p: Z = n / (d + n·Gp)
    d = padd(d, pscale(n, c.Gp))
    if c.ladder is not None:
        from .ladder import ladder_inductor_impedance, select_rows

        return select_rows(c.ladder.active, ladder_inductor_impedance(c.ladder, w), (n, d))
    return n, d


def coil_impedance(c: CoilParams, w: float = W_NORM) -> tuple[np.ndarray, np.ndarray]:
    """Series impedance of the coil, R_dc + Z_L, as (num, den); winding C not included."""
    n, d = inductor_impedance(c, w)
    return padd(pscale(d, c.R), n), d


def impedance_at(c: CoilParams, frequency_hz, w: float = W_NORM) -> np.ndarray:
    """Complex R_dc + Z_L at ``frequency_hz`` (shape (F,)) -> (N, F); for tests and reports."""
    from .poly import peval

    n, d = coil_impedance(c, w)
    x = 1j * 2 * np.pi * np.atleast_1d(frequency_hz) / w
    return peval(n, x) / peval(d, x)
