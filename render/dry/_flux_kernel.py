"""The flux table's slopes at many points, compiled (numba): the kernel of :mod:`render.dry.construction`.

The table is a bicubic interpolating spline, F(y, z) = Σ_ij c_ij·B_i,3(y)·B_j,3(z)
(scipy's ``RectBivariateSpline``; Dierckx, *Curve and Surface Fitting with
Splines*, Oxford 1993, ch. 2). Its slopes are splines of one degree less in
the differentiated variable, with the differenced coefficients

    ∂F/∂y = Σ_ij d_ij·B_i,2(y)·B_j,3(z),  d_ij = 3·(c_i+1,j − c_ij)/(t_i+4 − t_i+1)

on the knots without their first and last (de Boor, *A Practical Guide to
Splines*, rev. ed., Springer 2001, ch. X, eq. (12)), and likewise in z. The
B-splines at a point come from the Cox–de Boor recurrence in the triangular
form of Piegl & Tiller, *The NURBS Book*, 2nd ed., Springer 1997, Algorithm A2.2,
whose second stage is the quadratic basis the slopes need.
This is the same spline scipy evaluates (``ev(y, z, dx=1)``), to rounding;
tests/dry/test_flux_kernel.py checks it against scipy.

:func:`add_emf` does a coil's whole sensing step in one pass over the samples:
the motion scaled (a pluck strength) plus its fixed part, the displacement held
inside the table, the slopes, and the EMF Φ_y·dū_y/dt + Φ_z·dū_z/dt added, with
no array of the motion's length made on the way.
"""

from __future__ import annotations

import numpy as np
from numba import njit


def slope_tables(tck, *, kx: int = 3, ky: int = 3) -> tuple:
    """The knots and differenced coefficients of ∂F/∂y and ∂F/∂z from a bicubic spline's ``(tx, ty, c)``."""
    tx, ty, c = (np.asarray(a, float) for a in tck)
    c = c.reshape(tx.size - kx - 1, ty.size - ky - 1)
    dy = kx * (c[1:, :] - c[:-1, :]) / (tx[kx + 1 : -1] - tx[1 : -kx - 1])[:, None]
    dz = ky * (c[:, 1:] - c[:, :-1]) / (ty[ky + 1 : -1] - ty[1 : -ky - 1])[None, :]
    return tx, ty, np.ascontiguousarray(dy), np.ascontiguousarray(dz)


def slopes(tables, y: np.ndarray, z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """∂F/∂y and ∂F/∂z at the points (y, z) (each shape (n,), inside the table), from :func:`slope_tables`."""
    tx, ty, dy, dz = tables
    y = np.ascontiguousarray(y, float)
    z = np.ascontiguousarray(z, float)
    return _slopes(tx, ty, dy, dz, y, z)


def add_emf(tables, box, motion: np.ndarray, out: np.ndarray, *, scale: float = 1.0, fixed: np.ndarray | None = None, sign: float = 1.0) -> bool:
    """Add sign·(∂F/∂y·u̇_y + ∂F/∂z·u̇_z) into ``out`` (shape (n,), V) at each sample where the motion is not all zero.

    Parameters
    ----------
    tables : from :func:`slope_tables`
    box : (y_lo, y_hi, z_lo, z_hi), m
        The table's range: the displacement is held inside it.
    motion : np.ndarray [shape=(4, n)], float32 or float64, m and m/s
        ū_y, ū_z, u̇_y, u̇_z, multiplied by ``scale`` and added to ``fixed`` (same shape, float64) when given.
    sign : ±1, the coil's wiring

    Returns
    -------
    bool : whether the displacement left the box somewhere (it was held at its edge there)
    """
    tx, ty, dy, dz = tables
    if fixed is None:
        fixed = np.zeros((4, 0))
    if motion.ndim != 2 or motion.shape[0] != 4 or out.shape != (motion.shape[1],) or fixed.shape[1] not in (0, motion.shape[1]):
        raise ValueError("add_emf: motion (4, n), out (n,), fixed (4, n) or None")
    y_lo, y_hi, z_lo, z_hi = (float(v) for v in box)
    return bool(_add_emf(tx, ty, dy, dz, y_lo, y_hi, z_lo, z_hi, float(scale), motion, np.ascontiguousarray(fixed, float), float(sign), out))


def warm() -> None:
    """Load the compiled kernels (numba's start and its cache, about 0.5 s) for float64 and float32 motion, so
    that processes forked after this share them."""
    t = np.r_[np.zeros(4), np.ones(4)]
    tables = slope_tables((t, t, np.zeros(16)))
    for dtype in (np.float64, np.float32):
        add_emf(tables, (0.0, 1.0, 0.0, 1.0), np.zeros((4, 1), dtype), np.zeros(1))


@njit(cache=True, inline="always")
def _span(t, p, x):
    """μ with t[μ] ≤ x < t[μ+1], p ≤ μ ≤ len(t) − p − 2 (the last span holds the right end)."""
    lo, hi = p, t.size - p - 1  # t[lo] ≤ x < t[hi] is kept
    if x >= t[hi]:
        return hi - 1
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if x < t[mid]:
            hi = mid
        else:
            lo = mid
    return lo


@njit(cache=True, inline="always")
def _bases(t, mu, x, cubic, quad, left, right):
    """B_μ−3..μ,3(x) into cubic[0..3] and B_μ−2..μ,2(x) into quad[0..2], on the knots t.

    The Cox–de Boor recurrence in the triangular form of Piegl & Tiller, Algorithm A2.2: its
    second stage is the quadratic basis, which on the knots t[1:-1] is the one of span μ − 1.
    """
    cubic[0] = 1.0
    for j in range(1, 4):
        left[j] = x - t[mu + 1 - j]
        right[j] = t[mu + j] - x
        saved = 0.0
        for r in range(j):
            temp = cubic[r] / (right[r + 1] + left[j - r])
            cubic[r] = saved + right[r + 1] * temp
            saved = left[j - r] * temp
        cubic[j] = saved
        if j == 2:
            quad[0], quad[1], quad[2] = cubic[0], cubic[1], cubic[2]


@njit(cache=True, inline="always")
def _tensor(coef, i0, j0, bi, bj):
    """Σ_ab coef[i0 + a, j0 + b]·bi[a]·bj[b]: a tensor spline at one point from its two bases."""
    total = 0.0
    for a in range(bi.size):
        row = 0.0
        for b in range(bj.size):
            row += coef[i0 + a, j0 + b] * bj[b]
        total += bi[a] * row
    return total


@njit(cache=True)
def _slopes(tx, ty, dy, dz, y, z):
    n = y.size
    gy = np.empty(n)
    gz = np.empty(n)
    by3, by2, bz3, bz2 = np.empty(4), np.empty(3), np.empty(4), np.empty(3)
    left, right = np.empty(4), np.empty(4)
    for k in range(n):
        my, mz = _span(tx, 3, y[k]), _span(ty, 3, z[k])
        _bases(tx, my, y[k], by3, by2, left, right)
        _bases(ty, mz, z[k], bz3, bz2, left, right)
        # the slopes' coefficients on t[1:-1] at span μ − 1 start at index μ − 3, as the cubic's do
        sy = _tensor(dy, my - 3, mz - 3, by2, bz3)
        sz = _tensor(dz, my - 3, mz - 3, by3, bz2)
        gy[k] = sy
        gz[k] = sz
    return gy, gz


@njit(cache=True)
def _add_emf(tx, ty, dy, dz, y_lo, y_hi, z_lo, z_hi, scale, motion, fixed, sign, out):
    n = out.size
    has_fixed = fixed.shape[1] > 0
    by3, by2, bz3, bz2 = np.empty(4), np.empty(3), np.empty(4), np.empty(3)
    left, right = np.empty(4), np.empty(4)
    a = np.empty(4)
    held = False
    my, mz = _span(tx, 3, tx[3]), _span(ty, 3, ty[3])
    for k in range(n):
        live = False
        for j in range(4):
            a[j] = scale * np.float64(motion[j, k])
            if has_fixed:
                a[j] += fixed[j, k]
            live |= a[j] != 0.0
        if not live:
            continue
        y = min(max(a[0], y_lo), y_hi)
        z = min(max(a[1], z_lo), z_hi)
        held |= (y != a[0]) or (z != a[1])
        # a string moves little from one sample to the next: its last spans usually hold it still
        if not (tx[my] <= y < tx[my + 1]):
            my = _span(tx, 3, y)
        if not (ty[mz] <= z < ty[mz + 1]):
            mz = _span(ty, 3, z)
        # the point's body as in _slopes, written out: a shared helper taking the scratch arrays measured 3x slower
        _bases(tx, my, y, by3, by2, left, right)
        _bases(ty, mz, z, bz3, bz2, left, right)
        sy = _tensor(dy, my - 3, mz - 3, by2, bz3)
        sz = _tensor(dz, my - 3, mz - 3, by3, bz2)
        out[k] += sign * (sy * a[2] + sz * a[3])
    return held
