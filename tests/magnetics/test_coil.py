"""A coil's turns in space: geometry, quadrature, reciprocity and an outside field library."""

import numpy as np
import pytest
from scipy.integrate import quad

from render.errors import InputError
from render.magnetics.coil import CoilGeometry, coil_centres, coil_pair, geometry_from_winding, placed_coil
from render.magnetics.field import dipole_field, loops_field

from .reference import dipole_flux_on_loop_axis, loop_on_axis_bz, polygon_loop, require_magpylib

# Invented demo bobbin (not a measurement): 1200 turns between a 58 × 3 mm window and a 68 × 13 mm outline, 9 mm high
DEMO = dict(turns=1200, length=0.068, width=0.013, window_length=0.058, window_width=0.003, height=0.009)


def demo():
    return CoilGeometry(**DEMO)


def _unit(v):
    v = np.asarray(v, float)
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


# --- geometry ------------------------------------------------------------------


def test_turns_area_by_hand():
    # arithmetic, recomputed by hand: mean turn area 3·58 + (3·10 + 58·10)/2 + 10·10/3 = 512.333 mm²,
    # × 1200 turns = 0.6148 m²; mean turn 13 + 3 + 68 + 58 = 142 mm
    g = demo()
    assert g.turns_area == pytest.approx(1200 * 512.3333333333e-6, rel=1e-10)
    assert g.mean_turn == pytest.approx(0.142, rel=1e-12)
    assert g.depth_width == pytest.approx(0.005) and g.depth_length == pytest.approx(0.005)


def test_turns_area_against_the_turns_one_by_one():
    # the sum of 1200 discrete rectangles (30 layers × 40 turns, each layer at its midpoint): the closed
    # form is this sum's limit, with a midpoint-rule error of ΔW·ΔL/(12·30²) per turn (Abramowitz & Stegun 25.4.2)
    g = demo()
    u = (np.arange(30) + 0.5) / 30
    areas = (g.window_width + u * 2 * g.depth_width) * (g.window_length + u * 2 * g.depth_length)
    brute = 40 * areas.sum()
    midpoint_error = 1200 * (2 * g.depth_width) * (2 * g.depth_length) / (12 * 30**2)
    assert g.turns_area == pytest.approx(brute + midpoint_error, rel=1e-12)


def test_filaments_carry_every_turn_and_the_exact_area():
    # Gauss–Legendre with n nodes is exact for polynomials of degree < 2n (Abramowitz & Stegun 25.4.29):
    # the turns' area is quadratic in the depth u
    g = demo()
    for nodes in ((2, 1), (4, 4), (7, 3)):
        f = g.filaments(nodes)
        assert f.turns.sum() == pytest.approx(1200, rel=1e-13)
        assert np.sum(f.turns * 4 * f.half_x * f.half_y) == pytest.approx(g.turns_area, rel=1e-13)
        assert f.z.min() > -g.height and f.z.max() < 0


def test_filaments_turn_counter_clockwise_seen_from_above():
    # right-hand rule: current counter-clockwise seen from +z makes +z field at the centre
    c = placed_coil(demo(), centre=(0, 0, 0))
    assert c.field_per_amp(np.array([0.0, 0.0, 0.01]))[2] > 0


def test_centres_from_positions():
    ca, cb = coil_centres(0.038, 0.056)
    assert ca == pytest.approx((-0.009, 0, 0)) and cb == pytest.approx((0.009, 0, 0))


def test_winding_maps_onto_the_geometry():
    g = geometry_from_winding(turns=1200, mean_turn=0.142, height=0.009, depth=0.005, window_width=0.003)
    assert (g.length, g.width, g.window_length, g.window_width) == pytest.approx((0.068, 0.013, 0.058, 0.003))
    assert g.mean_turn == pytest.approx(0.142)
    assert g.turns == 1200 and g.height == 0.009
    with pytest.raises(InputError, match="mean_turn=.*too short"):
        geometry_from_winding(turns=1200, mean_turn=0.02, height=0.009, depth=0.005, window_width=0.003)


def test_copper_fill():
    # 1200 turns of 0.0635 mm copper in 9 mm × 5 mm: 1200·π·0.0635²/4 / 45 = 0.0845 (arithmetic)
    assert demo().copper_fill(0.0635e-3) == pytest.approx(1200 * np.pi * 0.0635**2 / 4 / 45, rel=1e-12)


@pytest.mark.parametrize(
    "change, message",
    [
        (dict(window_length=0.07), "window_length=70mm: must be smaller than length=68mm"),
        (dict(window_width=0.013), "window_width=13mm: must be smaller than width=13mm"),
        (dict(height=-0.009), "height=-0.009: must be a positive"),
        (dict(turns=0.5), "turns=0.5: a coil needs at least one turn"),
        (dict(length="wide"), "length='wide': expected a number"),
    ],
)
def test_bad_geometry_is_refused_in_one_line(change, message):
    with pytest.raises(InputError) as e:
        CoilGeometry(**{**DEMO, **change}, where="x.toml: [coil_a.geometry]")
    assert message in str(e.value) and str(e.value).startswith("x.toml: [coil_a.geometry]") and "\n" not in str(e.value)


# --- quadrature ----------------------------------------------------------------


def test_default_quadrature_has_converged():
    # the default 4 × 4 nodes against 40 × 40, random dipole places and axes around the coil
    g = demo()
    fine = placed_coil(g, centre=(0, 0, 0), nodes=(40, 40))
    default = placed_coil(g, centre=(0, 0, 0))
    rng = np.random.default_rng(5)
    for r, tol in ((0.2, 1e-12), (0.1, 1e-10), (0.05, 1e-6)):
        p = _unit(rng.standard_normal((100, 3))) * r
        ax = _unit(rng.standard_normal((100, 3)))
        ref = fine.dipole_linkage(p, ax)
        err = np.abs(default.dipole_linkage(p, ax) - ref) / np.abs(ref).max()
        assert err.max() < tol, (r, err.max())


# --- reciprocity -----------------------------------------------------------------


def test_dipole_on_a_circular_loops_axis():
    # Φ = µ0·m·a²/(2(a²+z²)^{3/2}), two ways: (1) the dipole field (Jackson eq. 5.56) integrated
    # over the disc with scipy's quad; (2) by reciprocity, m times the loop's own axial field
    a, m = 0.03, 0.05
    for z in (0.01, 0.1, 0.5):
        direct = quad(lambda rho: dipole_field([0, 0, m], [0, 0, z], np.array([rho, 0.0, 0.0]))[2] * 2 * np.pi * rho, 0, a, epsabs=0, epsrel=1e-13)[0]
        assert direct == pytest.approx(dipole_flux_on_loop_axis(a, z, m), rel=1e-10)
        assert m * loop_on_axis_bz(a, z) == pytest.approx(dipole_flux_on_loop_axis(a, z, m), rel=1e-14)
        # the n-gon's axial field, extrapolated (its error falls as 1/n²)
        b1 = loops_field(polygon_loop(a, 1024), [1.0], np.array([0, 0, z]))[2]
        b2 = loops_field(polygon_loop(a, 2048), [1.0], np.array([0, 0, z]))[2]
        assert m * (4 * b2 - b1) / 3 == pytest.approx(dipole_flux_on_loop_axis(a, z, m), rel=1e-10)


def _direct_flux(coil, moment, at, nodes=24):
    """Σ over the filaments of ∫∫ B_z of the dipole over each rectangle (Gauss–Legendre, ``nodes``² points)."""
    x, w = np.polynomial.legendre.leggauss(nodes)
    v = coil.vertices  # (F, 4, 3): corners 0 = (+hx, −hy), 2 = (−hx, +hy)
    hx, hy, zf = v[:, 0, 0] - coil.centre[0], v[:, 1, 1] - coil.centre[1], v[:, 0, 2]
    px = coil.centre[0] + hx[:, None, None] * x[None, :, None]
    py = coil.centre[1] + hy[:, None, None] * x[None, None, :]
    pts = np.stack(np.broadcast_arrays(px, py, zf[:, None, None]), axis=-1)
    bz = dipole_field(moment, at, pts)[..., 2]
    return float(np.sum(coil.currents * hx * hy * np.einsum("fij,i,j->f", bz, w, w)))


def test_reciprocity_against_a_direct_flux_integral():
    # flux linkage from dipole m = m·B1(r) (reciprocity; Jackson §5.17, Smythe §8.02) against the dipole's
    # field (Jackson eq. 5.56) integrated over every filament's own area, an independent route
    ca, _ = coil_pair(demo(), demo(), position_a=0.038, position_b=0.056, nodes=(5, 5))
    rng = np.random.default_rng(11)
    for _ in range(6):
        at = _unit(rng.standard_normal(3)) * rng.uniform(0.1, 0.6)
        m = rng.standard_normal(3) * 0.05
        direct = _direct_flux(ca, m, at)
        assert float(ca.dipole_linkage(at, m)) == pytest.approx(direct, rel=1e-9)


def test_per_coil_flux_against_magpylib():
    # magpylib (a general-purpose field library): each of the 1200 turns its own closed Polyline, laid out
    # 30 layers × 40 turns on a uniform grid (not this code's quadrature); flux from a dipole at 0.2 m by
    # reciprocity, m·B1(r). The README claims 2.5e-5 relative at each place: measured 1.96e-5 (both coils,
    # magpylib 6.3), the bound a quarter above it for the last digits of another magpylib or BLAS
    magpy = require_magpylib()
    g = demo()
    ca, cb = coil_pair(g, g, position_a=0.038, position_b=0.056)
    u = (np.arange(30) + 0.5) / 30
    z = -g.height * (np.arange(40) + 0.5) / 40
    rng = np.random.default_rng(2)
    places = np.array([[0.2, 0, 0], [0, 0.2, 0], [0, 0, 0.2], [-0.12, 0.1, -0.12]])
    places = np.vstack([places, _unit(rng.standard_normal((4, 3))) * 0.2])
    axes = np.vstack([[0, 0, 1], [0, 0, 1], [0, 0, 1], _unit(rng.standard_normal((5, 3)))])
    for coil in (ca, cb):
        turns = []
        for ui in u:
            hx = g.window_width / 2 + ui * g.depth_width
            hy = g.window_length / 2 + ui * g.depth_length
            for zi in z:
                v = np.array([[hx, -hy, zi], [hx, hy, zi], [-hx, hy, zi], [-hx, -hy, zi], [hx, -hy, zi]]) + np.array(coil.centre)
                turns.append(magpy.current.Polyline(current=1.0, vertices=v))
        b1 = magpy.getB(turns, places, sumup=True)
        ref = np.einsum("pi,pi->p", axes, b1)
        ours = coil.dipole_linkage(places, axes)
        # the two layouts differ only by the midpoint rule's O(1/30²) error: far inside the 0.5 % asked for
        np.testing.assert_allclose(ours, ref, rtol=2.5e-5, atol=0)


def test_point_coil_is_the_far_limit():
    # a point coil links turns_area·B_z(centre); the real winding tends to it as (size/r)² far away
    g = demo()
    real = placed_coil(g, centre=(0.009, 0, 0))
    point = placed_coil(g.turns_area, centre=(0.009, 0, 0))
    at, ax = np.array([20.0, 5.0, -7.0]), _unit([0.3, -0.4, 0.8])
    assert point.dipole_linkage(at, ax) == pytest.approx(float(real.dipole_linkage(at, ax)), rel=1e-4)
    assert float(point.dipole_linkage(at, ax)) == pytest.approx(g.turns_area * dipole_field(ax, at, np.array([0.009, 0, 0]))[2], rel=1e-14)
    # a uniform field along x links no flux; along z, turns_area per tesla
    assert real.uniform_linkage(np.array([1.0, 0, 0])) == 0.0
    assert real.uniform_linkage(np.array([0, 0, 1.0])) == g.turns_area


def test_field_in_the_coils_far_zone_is_its_moment():
    # Jackson §5.6: far away the winding's field is that of a dipole N·A·I along z
    c = placed_coil(demo(), centre=(0, 0, 0))
    p = np.array([[30.0, 0, 0], [0, 0, 30.0], [17.0, 17.0, 17.0]])
    ref = dipole_field([0, 0, demo().turns_area], [0, 0, -0.0045], p)
    np.testing.assert_allclose(c.field_per_amp(p), ref, rtol=0, atol=2e-5 * np.abs(ref).max())
