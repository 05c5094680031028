"""Outside references for the magnetics tests: closed forms from the textbooks, and magpylib.

Only the test suite uses this module. Each function names its source.
"""

from __future__ import annotations

import os

import numpy as np
import pytest
from scipy.constants import mu_0
from scipy.special import ellipe, ellipk


def loop_on_axis_bz(a, z, current=1.0):
    """B_z on the axis of a circular loop of radius a at height z (T).

    µ0·I·a² / (2·(a² + z²)^{3/2}): Jackson, *Classical Electrodynamics*,
    3rd ed., 1999, §5.5 (the axial field of eq. 5.37's loop); Griffiths,
    *Introduction to Electrodynamics*, 4th ed., 2013, Example 5.6.
    """
    return mu_0 * current * a * a / (2.0 * (a * a + z * z) ** 1.5)


def loop_field(a, rho, z, current=1.0):
    """(B_ρ, B_z) of a circular loop of radius a in the plane z = 0, off its axis (T).

    The complete-elliptic-integral form of Smythe, *Static and Dynamic
    Electricity*, 3rd ed., 1968, §7.10 (section number from memory), as
    written by Simpson, Lane, Immer & Youngquist, "Simple analytic
    expressions for the magnetic field of a circular current loop", NASA
    Technical Memorandum, 2001 (eqs. 10–11 there; from memory):

        α² = a² + r² − 2aρ, β² = a² + r² + 2aρ, k² = 1 − α²/β², r² = ρ² + z²,
        B_ρ = µ0 I z / (2π α² β ρ) · [(a² + r²) E(k²) − α² K(k²)],
        B_z = µ0 I / (2π α² β) · [(a² − r²) E(k²) + α² K(k²)],

    K and E with scipy's parameter convention m = k². Checked in the tests
    against Jackson's vector potential (eq. 5.37) by a numerical curl, so a
    slip in this transcription cannot pass unnoticed.
    """
    r2 = rho * rho + z * z
    alpha2 = a * a + r2 - 2.0 * a * rho
    beta2 = a * a + r2 + 2.0 * a * rho
    beta = np.sqrt(beta2)
    m = 1.0 - alpha2 / beta2
    K, E = ellipk(m), ellipe(m)
    c = mu_0 * current / np.pi
    bz = c / (2.0 * alpha2 * beta) * ((a * a - r2) * E + alpha2 * K)
    with np.errstate(invalid="ignore", divide="ignore"):
        brho = np.where(rho > 0, c * z / (2.0 * alpha2 * beta * np.where(rho > 0, rho, 1.0)) * ((a * a + r2) * E - alpha2 * K), 0.0)
    return brho, bz


def loop_vector_potential(a, rho, z, current=1.0):
    """A_φ of a circular loop (T·m): Jackson, 3rd ed., eq. 5.37 (equation number from memory).

    A_φ = µ0 I a / (π·√((a+ρ)² + z²)) · [(2 − k²)K(k) − 2E(k)] / k²,
    k² = 4aρ / ((a+ρ)² + z²)  (Jackson writes a² + r² + 2ar·sin θ for (a+ρ)² + z²).
    """
    d2 = (a + rho) ** 2 + z * z
    m = 4.0 * a * rho / d2
    return mu_0 * current * a / (np.pi * np.sqrt(d2)) * ((2.0 - m) * ellipk(m) - 2.0 * ellipe(m)) / m


def dipole_flux_on_loop_axis(a, z, moment):
    """Flux through a circular loop of radius a from a dipole m on its axis at distance z, along the axis (Wb).

    Φ = µ0·m·a² / (2·(a² + z²)^{3/2}): the integral of the dipole field
    (Jackson eq. 5.56) over the disc; equal, by reciprocity, to m times the
    loop's axial field per ampere.
    """
    return mu_0 * moment * a * a / (2.0 * (a * a + z * z) ** 1.5)


def polygon_loop(a, n, z=0.0):
    """A regular n-gon inscribed in the circle of radius a at height z, counter-clockwise seen from +z: shape (1, n, 3)."""
    t = 2.0 * np.pi * np.arange(n) / n
    v = np.stack([a * np.cos(t), a * np.sin(t), np.full(n, z)], axis=-1)
    return v[None]


def require_magpylib():
    """magpylib, or skip with the reason on a user's machine; fail under CI=true."""
    try:
        import magpylib
    except ImportError:
        _missing("magpylib not installed (pip install magpylib); the per-coil flux cross-check needs it")
    return magpylib


def require_material_response():
    """magpylib-material-response (with magpylib), or skip with the reason on a user's machine; fail under CI=true."""
    require_magpylib()
    try:
        import magpylib_material_response
    except ImportError:
        _missing("magpylib-material-response not installed (pip install magpylib-material-response); the construction's steel solve needs it")
    return magpylib_material_response


def _missing(msg: str):
    """Skip with ``msg``; under CI=true fail instead, so CI cannot pass without the reference."""
    if os.environ.get("CI") == "true":
        pytest.fail(msg + " and CI=true requires it")
    pytest.skip(msg)
