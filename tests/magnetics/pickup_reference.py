"""Outside references for the construction tests: closed forms from the papers, and a single-pole model.

Only the test suite uses this module. Each function names its source.
"""

from __future__ import annotations

import numpy as np
from scipy.constants import mu_0


def cylinder_axis_bz(z, *, radius, length, remanence):
    """B_z on the axis of a cylinder magnetised along its axis, z from its centre, outside it (T).

    B = B_r/2 · [(z + L/2)/√((z + L/2)² + R²) − (z − L/2)/√((z − L/2)² + R²)]:
    the on-axis limit of Derby & Olbert, "Cylindrical magnets and ideal
    solenoids", Am. J. Phys. 78(3), 229–235, 2010 (a uniformly magnetised
    cylinder is an ideal solenoid of surface current M; their field off the
    axis reduces to this on it).
    """
    z = np.asarray(z, float)
    a, b = z + length / 2.0, z - length / 2.0
    return remanence / 2.0 * (a / np.sqrt(a * a + radius * radius) - b / np.sqrt(b * b + radius * radius))


def _charged_rectangle(points, *, x, y, z0, sigma):
    """H (A/m) of a rectangle x[0..1] × y[0..1] in the plane z = z0 carrying magnetic charge σ (A/m), shape (..., 3)."""
    p = np.asarray(points, float)
    out = np.zeros(p.shape)
    for k, xk in enumerate(x):
        for m, ym in enumerate(y):
            s = (-1) ** (k + m)  # + at (x1, y1) and (x0, y0), − at the mixed corners
            u = xk - p[..., 0]
            v = ym - p[..., 1]
            w = z0 - p[..., 2]
            r = np.sqrt(u * u + v * v + w * w)
            # ∫∫ (r − r')/|r − r'|³ dx' dy' over the rectangle, corner by corner
            out[..., 0] += s * np.log(v + r)
            out[..., 1] += s * np.log(u + r)
            out[..., 2] += s * np.arctan(u * v / (-w * r))
    return sigma / (4.0 * np.pi) * out


def cuboid_bz_magnet(points, *, lo, hi, remanence):
    """B (T) outside a cuboid magnetised along +z with polarisation B_r: shape (..., 3).

    The magnetic-charge closed form of Engel-Herbert & Hesjedal, "Calculation
    of the magnetic stray field of a uniaxial magnetic domain", J. Appl. Phys.
    97, 074504, 2005: charges ±M = ±B_r/µ0 on the top and bottom faces,
    each face's field a sum of logarithms (in-plane) and arctangents (normal)
    over its four corners. Written out here from the charged faces; the tests
    also hold it against magpylib, so a sign slip cannot pass unnoticed.
    """
    m = remanence / mu_0
    x, y = (lo[0], hi[0]), (lo[1], hi[1])
    h = _charged_rectangle(points, x=x, y=y, z0=hi[2], sigma=m) + _charged_rectangle(points, x=x, y=y, z0=lo[2], sigma=-m)
    return mu_0 * h


def _dipole_potential_loop(moments, places, loop, *, per_side=64):
    """Flux (Wb) through a closed polygon ``loop`` (K, 3) of dipoles ``moments`` at ``places`` (n, 3), by ∮A·dl.

    A = µ0/(4π)·m × (r − r_m)/|r − r_m|³ (Jackson, 3rd ed., eq. 5.55), integrated
    along each side with Gauss–Legendre points: Stokes' theorem, not reciprocity.
    """
    g, w = np.polynomial.legendre.leggauss(per_side)
    t, w = (g + 1) / 2, w / 2
    total = 0.0
    for a, b in zip(loop, np.roll(loop, -1, axis=0)):
        pts = a + np.outer(t, b - a)  # (G, 3)
        dl = (b - a)[None, :] * w[:, None]  # (G, 3)
        r = pts[:, None, :] - places[None, :, :]  # (G, n, 3)
        r3 = np.sum(r * r, axis=-1) ** 1.5
        A = mu_0 / (4 * np.pi) * np.cross(moments[None, :, :], r) / r3[..., None]
        total += np.einsum("gni,gi->", A, dl)
    return total


def single_pole_flux(dz, *, pole, remanence, turn_half, height, string_diameter, chi_t=2.0, reach=0.04, step=2.5e-4):
    """Flux linkage (Wb) of one square turn from a string over one magnet pole, at vertical offsets ``dz`` (m).

    The magnetic-charge model of Horton & Moore, "Modeling the magnetic
    pickup of an electric guitar", Am. J. Phys. 77(2), 144–150, 2009, for a
    single pole: the pole is a magnet with magnetic charge on its end faces;
    the string, a thin steel wire along x at ``height`` (+dz) above the
    pole's centre, is magnetised across its axis by the pole's field
    (M = χ⊥·H, χ⊥ = 2 for a thin steel cylinder); the turn's flux is the
    string's field through it. Here the pole is square (``pole`` = (side,
    length), top face at z = 0), the turn a square of half-side
    ``turn_half`` in the plane z = 0, and the flux comes from the string's
    vector potential around the turn (Stokes), not from reciprocity.
    """
    side, length = pole
    lo, hi = (-side / 2, -side / 2, -length), (side / 2, side / 2, 0.0)
    x = np.arange(-reach, reach + step / 2, step)
    area = np.pi * string_diameter**2 / 4.0
    loop = np.array([[turn_half, -turn_half, 0.0], [turn_half, turn_half, 0.0], [-turn_half, turn_half, 0.0], [-turn_half, -turn_half, 0.0]])
    out = []
    for d in np.atleast_1d(dz):
        places = np.c_[x, np.zeros_like(x), np.full_like(x, height + d)]
        b = cuboid_bz_magnet(places, lo=lo, hi=hi, remanence=remanence)
        m = chi_t * b / mu_0 * area * step
        m[:, 0] = 0.0  # across the string only
        out.append(_dipole_potential_loop(m, places, loop))
    return np.array(out)


def emf_harmonics_db(flux_of_z, *, amplitude, points=64):
    """2nd and 3rd harmonics (dB re the 1st) of dΦ/dt for z = amplitude·sin(θ), by a spectral derivative."""
    theta = 2 * np.pi * np.arange(points) / points
    phi = np.asarray(flux_of_z(amplitude * np.sin(theta)))
    c = np.fft.rfft(phi)
    n = np.arange(c.size)
    e = np.abs(n * c)
    return 20 * np.log10(e[2] / e[1]), 20 * np.log10(e[3] / e[1])
