"""Free-space magnetic fields in closed form: current segments and point dipoles.

A straight filament from A to B carrying current I makes at P the field
(Biot–Savart law integrated along the segment; e.g. Hanson & Hirshman,
"Compact expressions for the Biot–Savart fields of a filamentary segment",
Phys. Plasmas 9(10), 4410, 2002, eq. 9)

    B = µ0·I/(4π) · (a × l)·(|a| + |b|) / (|a|·|b|·(|a|·|b| + a·b)),

with a = A − P, b = B − P and l = B − A (a × b = a × l, written so to keep
the far field free of cancellation). A closed polygon of such segments is a
current loop; its field is exact for the polygon (no quadrature).

A point dipole of moment m at the origin makes (Jackson, *Classical
Electrodynamics*, 3rd ed., 1999, eq. 5.56)

    B = µ0/(4π) · (3·r̂·(r̂·m) − m) / r³.

µ0 is CODATA's value (``scipy.constants.mu_0``), so the fields agree with
general-purpose libraries built on the same constant.

All functions broadcast over leading axes; vectors are the last axis
(length 3), in metres, teslas and amperes.
"""

from __future__ import annotations

import numpy as np
from scipy.constants import mu_0 as MU0

K_MU = MU0 / (4.0 * np.pi)  # T·m/A

# points × segments evaluated per block: bounds the temporaries (about 40 MB)
_BLOCK = 200_000


def segment_field(start, end, points) -> np.ndarray:
    """Field per ampere of straight segments from ``start`` to ``end`` at ``points``.

    start, end : array_like [shape=(..., 3)], m, broadcast with ``points``
    points : array_like [shape=(..., 3)], m
    returns : np.ndarray [shape=broadcast(...) + (3,)], T per A of current
        flowing from start to end. Zero on the segment's own line outside
        the segment; undefined on the segment itself.
    """
    a = np.asarray(start, float) - np.asarray(points, float)
    b = np.asarray(end, float) - np.asarray(points, float)
    lv = np.asarray(end, float) - np.asarray(start, float)
    na = np.sqrt(np.einsum("...i,...i->...", a, a))
    nb = np.sqrt(np.einsum("...i,...i->...", b, b))
    ab = np.einsum("...i,...i->...", a, b)
    k = K_MU * (na + nb) / (na * nb * (na * nb + ab))
    return np.cross(a, np.broadcast_to(lv, a.shape)) * k[..., None]


def loops_field(vertices, currents, points) -> np.ndarray:
    """Summed field of closed polygonal loops at ``points``.

    vertices : array_like [shape=(F, K, 3)], m, each loop's K corners in the
        order the current flows; the last corner joins the first
    currents : array_like [shape=(F,)], A (a filament carrying n turns of a
        1 A winding carries n here)
    points : array_like [shape=(..., 3)], m
    returns : np.ndarray [shape=(..., 3)], T
    """
    v = np.asarray(vertices, float)
    w = np.asarray(currents, float)
    if v.ndim != 3 or v.shape[2] != 3 or w.shape != v.shape[:1]:
        raise ValueError(f"vertices must have shape (F, K, 3) and currents (F,), got {v.shape} and {w.shape}")
    p = np.asarray(points, float)
    shape = p.shape[:-1]
    p = p.reshape(-1, 3)
    start = v  # (F, K, 3)
    lv = np.roll(v, -1, axis=1) - v  # (F, K, 3)
    out = np.empty_like(p)
    step = max(1, _BLOCK // max(1, v.shape[0] * v.shape[1]))
    for i in range(0, p.shape[0], step):
        q = p[i : i + step, None, None, :]  # (P, 1, 1, 3)
        a = start[None] - q  # (P, F, K, 3)
        b = a + lv[None]
        na = np.sqrt(np.einsum("pfki,pfki->pfk", a, a))
        nb = np.sqrt(np.einsum("pfki,pfki->pfk", b, b))
        ab = np.einsum("pfki,pfki->pfk", a, b)
        k = (na + nb) / (na * nb * (na * nb + ab)) * w[None, :, None]
        # a × l, summed over segments and filaments with their weights
        cx = a[..., 1] * lv[None, ..., 2] - a[..., 2] * lv[None, ..., 1]
        cy = a[..., 2] * lv[None, ..., 0] - a[..., 0] * lv[None, ..., 2]
        cz = a[..., 0] * lv[None, ..., 1] - a[..., 1] * lv[None, ..., 0]
        out[i : i + step, 0] = np.einsum("pfk,pfk->p", cx, k)
        out[i : i + step, 1] = np.einsum("pfk,pfk->p", cy, k)
        out[i : i + step, 2] = np.einsum("pfk,pfk->p", cz, k)
    return (K_MU * out).reshape(*shape, 3)


def dipole_field(moment, position, points) -> np.ndarray:
    """Field of point dipoles at ``points`` (Jackson eq. 5.56).

    moment : array_like [shape=(..., 3)], A·m²
    position : array_like [shape=(..., 3)], m, the dipole's place
    points : array_like [shape=(..., 3)], m; all three broadcast
    returns : np.ndarray [shape=broadcast(...) + (3,)], T; undefined at the dipole
    """
    m = np.asarray(moment, float)
    r = np.asarray(points, float) - np.asarray(position, float)
    r2 = np.einsum("...i,...i->...", r, r)
    rm = np.einsum("...i,...i->...", r, np.broadcast_to(m, r.shape))
    inv = 1.0 / np.sqrt(r2)
    inv3 = inv / r2
    return K_MU * (3.0 * r * (rm * inv3 / r2)[..., None] - m * inv3[..., None])
