"""A coil's inductance as an RL ladder, in the engine's batched polynomials.

The ladder (:class:`render.impedance.ladder.Ladder`, Foster form)

    Z_L(s) = s·L0 + Σ_k s·L_k / (1 + s·τ_k),   τ_k = L_k/R_k,

becomes one (num, den) pair in x = s/w, so the chain matrices, the
difference stage, the noise model (Re{Z_L} is the ladder resistors' thermal
noise, Nyquist 1928) and the renderer's zpk take it like any other coil. N
designs share K section slots; a design with fewer sections, or none, has
L_k = τ_k = 0 there, which adds exactly nothing (a zero numerator over 1).

A design whose coil has no ladder keeps the lumped model of
:mod:`render.circuit.coil` row by row (``LadderParams.active``).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .poly import W_NORM, const, lin, padd, pmul


@dataclass(frozen=True)
class LadderParams:
    """K-section ladders of N coils as arrays.

    Attributes
    ----------
    active : np.ndarray [shape=(N,)], bool
        True where the row's coil uses its ladder.
    L0 : np.ndarray [shape=(N,)], H
    Lk : np.ndarray [shape=(N, K)], H (0: no section)
    tau : np.ndarray [shape=(N, K)], s (0: no section)
    """

    active: np.ndarray
    L0: np.ndarray
    Lk: np.ndarray
    tau: np.ndarray

    def __getitem__(self, idx) -> LadderParams:
        return LadderParams(self.active[idx], self.L0[idx], self.Lk[idx], self.tau[idx])


def ladder_params(ladders) -> LadderParams | None:
    """Stack one ladder per design (``None``: that design keeps its lumped coil).

    Returns None when no design has a ladder, so designs without one take
    exactly the path they always took.
    """
    ladders = list(ladders)
    if all(lad is None for lad in ladders):
        return None
    k = max(len(lad.inductances) for lad in ladders if lad is not None)
    n = len(ladders)
    active = np.array([lad is not None for lad in ladders])
    L0, Lk, tau = np.zeros(n), np.zeros((n, k)), np.zeros((n, k))
    for i, lad in enumerate(ladders):
        if lad is None:
            continue
        m = len(lad.inductances)
        L0[i] = lad.series_inductance
        Lk[i, :m] = lad.inductances
        tau[i, :m] = lad.time_constants
    return LadderParams(active, L0, Lk, tau)


def ladder_inductor_impedance(lp: LadderParams, w: float = W_NORM):
    """Z_L of the ladders as (num, den) polynomials in x = s/w."""
    n = lin(0.0, lp.L0 * w)
    d = const(np.ones_like(lp.L0))
    for k in range(lp.Lk.shape[1]):
        nk = lin(0.0, lp.Lk[:, k] * w)
        dk = lin(1.0, lp.tau[:, k] * w)
        n, d = padd(pmul(n, dk), pmul(nk, d)), pmul(d, dk)
    return n, d


def coil_ladder(coil):
    """A design coil's ladder scaled to its ``inductance`` (None without a ladder).

    The ladder's shape stays; its inductances and resistances scale together
    by ``inductance`` / the ladder's DC inductance (1 as loaded), so a change of
    ``inductance`` (a turns sweep, a sensitivity study) scales the whole
    ladder and keeps its time constants.
    """
    lad = getattr(coil, "ladder", None)
    if lad is None:
        return None
    k = coil.inductance / lad.dc_inductance
    if k == 1.0:
        return lad
    return type(lad)(lad.series_inductance * k, tuple(v * k for v in lad.inductances), tuple(v * k for v in lad.resistances))


def _pad(p: np.ndarray, length: int) -> np.ndarray:
    return padd(p, np.zeros(p.shape[:-1] + (length,)))


def select_rows(active: np.ndarray, ladder_pair, lumped_pair):
    """Row-wise choice between two (num, den) pairs: the ladder's where ``active``."""
    (n1, d1), (n2, d2) = ladder_pair, lumped_pair
    m = np.asarray(active, bool)[:, None]
    ln, ld = max(n1.shape[-1], n2.shape[-1]), max(d1.shape[-1], d2.shape[-1])
    return np.where(m, _pad(n1, ln), _pad(n2, ln)), np.where(m, _pad(d1, ld), _pad(d2, ld))


def with_ladders(coil, ladders):
    """``coil`` (a :class:`render.circuit.params.CoilParams`) with one ladder per design attached."""
    return replace(coil, ladder=ladder_params(ladders))
