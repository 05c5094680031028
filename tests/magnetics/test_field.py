"""Free-space fields: straight segments, polygon loops and dipoles against closed forms."""

import numpy as np
import pytest
from scipy.constants import mu_0

from render.magnetics.field import dipole_field, loops_field, segment_field

from .reference import loop_field, loop_on_axis_bz, loop_vector_potential, polygon_loop, require_magpylib


def test_finite_wire():
    # Griffiths, Introduction to Electrodynamics, 4th ed., 2013, Example 5.5:
    # B = µ0 I/(4π d)·(sin θ2 − sin θ1), along I × d̂ (right-hand rule)
    start, end = np.array([0.0, 0.0, -0.03]), np.array([0.0, 0.0, 0.05])
    for d, z in ((0.01, 0.0), (0.2, 0.3), (0.05, -0.2)):
        p = np.array([d, 0.0, z])
        s1 = (start[2] - z) / np.hypot(d, start[2] - z)
        s2 = (end[2] - z) / np.hypot(d, end[2] - z)
        expected = mu_0 / (4 * np.pi * d) * (s2 - s1)
        b = segment_field(start, end, p)
        assert b[1] == pytest.approx(expected, rel=1e-12)
        assert abs(b[0]) < 1e-20 and abs(b[2]) < 1e-20


def _richardson(a, n, points):
    # the n-gon's field tends to the circle's as 1/n²: (4·B(2n) − B(n))/3 removes that term
    b1 = loops_field(polygon_loop(a, n), [1.0], points)
    b2 = loops_field(polygon_loop(a, 2 * n), [1.0], points)
    return (4 * b2 - b1) / 3


def test_circular_loop_on_axis():
    a = 0.03
    z = np.array([0.0, 0.01, 0.05, 0.2, 1.0])
    pts = np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=-1)
    b = _richardson(a, 512, pts)
    np.testing.assert_allclose(b[:, 2], loop_on_axis_bz(a, z), rtol=1e-9)
    np.testing.assert_allclose(b[:, :2], 0.0, atol=1e-18)


def test_circular_loop_off_axis_elliptic():
    a = 0.03
    rho = np.array([0.005, 0.02, 0.04, 0.1, 0.3, 0.02])
    z = np.array([0.01, -0.03, 0.002, 0.05, -0.2, 0.0])
    phi = np.array([0.3, 1.1, 2.0, 4.0, 5.5, 0.7])
    pts = np.stack([rho * np.cos(phi), rho * np.sin(phi), z], axis=-1)
    b = _richardson(a, 1024, pts)
    brho, bz = loop_field(a, rho, z)
    b_rho_num = b[:, 0] * np.cos(phi) + b[:, 1] * np.sin(phi)
    b_phi_num = -b[:, 0] * np.sin(phi) + b[:, 1] * np.cos(phi)
    scale = np.hypot(brho, bz)
    # relative to the field's magnitude at each point (B_ρ or B_z alone may be near zero)
    np.testing.assert_allclose(b[:, 2] / scale, bz / scale, rtol=0, atol=1e-9)
    np.testing.assert_allclose(b_rho_num / scale, brho / scale, rtol=0, atol=1e-9)
    np.testing.assert_allclose(b_phi_num / scale, 0.0, atol=1e-10)


def test_elliptic_form_matches_jacksons_vector_potential():
    # B = curl A: B_z = (1/ρ)·∂(ρA_φ)/∂ρ, B_ρ = −∂A_φ/∂z (Jackson eq. 5.37), by central differences
    a = 0.03
    for rho, z in ((0.01, 0.01), (0.05, -0.02), (0.2, 0.1)):
        h = 1e-6
        bz = ((rho + h) * loop_vector_potential(a, rho + h, z) - (rho - h) * loop_vector_potential(a, rho - h, z)) / (2 * h * rho)
        brho = -(loop_vector_potential(a, rho, z + h) - loop_vector_potential(a, rho, z - h)) / (2 * h)
        er, ez = loop_field(a, rho, z)
        assert ez == pytest.approx(bz, rel=1e-6)
        assert er == pytest.approx(brho, rel=1e-6)


def test_dipole_field_on_axis_and_equator():
    # Jackson eq. 5.56: on the axis B = µ0·2m/(4π r³), on the equator −µ0·m/(4π r³)
    m = np.array([0.0, 0.0, 0.05])
    for r in (0.1, 0.7, 3.0):
        assert dipole_field(m, [0, 0, 0], [0, 0, r])[2] == pytest.approx(mu_0 * 2 * 0.05 / (4 * np.pi * r**3), rel=1e-13)
        assert dipole_field(m, [0, 0, 0], [r, 0, 0])[2] == pytest.approx(-mu_0 * 0.05 / (4 * np.pi * r**3), rel=1e-13)


def test_dipole_field_against_magpylib():
    magpy = require_magpylib()
    rng = np.random.default_rng(3)
    m = rng.standard_normal(3) * 0.05
    at = np.array([0.1, -0.2, 0.3])
    pts = rng.standard_normal((20, 3)) * 0.5
    dip = magpy.misc.Dipole(moment=m, position=at)
    np.testing.assert_allclose(dipole_field(m, at, pts), magpy.getB(dip, pts), rtol=1e-10, atol=1e-20)


def test_polygon_far_field_is_a_dipole():
    # far from any localised current its field is that of its moment m = I·area (Jackson §5.6),
    # with relative corrections of order (size/r)²
    v = np.array([[[0.01, -0.03, 0.0], [0.01, 0.03, 0.0], [-0.01, 0.03, 0.0], [-0.01, -0.03, 0.0]]])
    area = 0.02 * 0.06
    for p in ([20.0, 0, 0], [0, 0, 20.0], [11.0, -7.0, 9.0]):
        b = loops_field(v, [1.0], np.array(p))
        ref = dipole_field([0, 0, area], [0, 0, 0], np.array(p))
        np.testing.assert_allclose(b, ref, rtol=0, atol=1e-5 * np.abs(ref).max())
