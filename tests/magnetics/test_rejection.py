"""Rejection with sources in space: the gradient bound, symmetry, the map and the Monte Carlos."""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from render.analysis.hum import field_derivative, hum_table, hum_tolerances
from render.design import load_design
from render.errors import InputError
from render.magnetics.coil import CoilGeometry, coil_pair, placed_coil
from render.magnetics.hum import DipoleSource, hum_emf
from render.magnetics.rejection import (
    engine_gains,
    joint_monte_carlo,
    position_monte_carlo,
    random_sources,
    rejection_map,
    source_hum,
)

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
# invented demo bobbin (see test_coil.py)
DEMO = CoilGeometry(turns=1200, length=0.068, width=0.013, window_length=0.058, window_width=0.003, height=0.009)


def _setup():
    d = load_design(REF)
    coils = coil_pair(DEMO, DEMO, position_a=d.coil_a.position, position_b=d.coil_b.position)
    f, _ = field_derivative(d.hum)
    fa, fb = engine_gains(d, f)
    return d, coils, f, fa, fb


def test_in_line_dipole_is_bounded_by_the_gradient():
    # A dipole of axis z on the x axis gives B_z = −µ0 m/(4π ρ³) at distance ρ (Jackson eq. 5.56, its equator),
    # so coils at r ∓ s/2 differ by 1 − ((r − s/2)/(r + s/2))³ ≈ 3s/r of the larger: rejection ≈ 20·log10(r/3s)
    # (s = 18 mm here). The matched reference design must land there, far below its uniform-field figure.
    d, coils, f, fa, fb = _setup()
    s = d.coil_b.position - d.coil_a.position
    uniform = hum_table(d)["harmonics"][0]["rejection_db"]
    assert uniform > 65  # the one-number room's figure for this design
    # The first-order estimate drops the next term: with x = s/(2r), 1 − ((1 − x)/(1 + x))³ = 6x·(1 − 3x + …),
    # so the rejection lies above 20·log10(r/3s) by about −20·log10(1 − 3x) = 0.47 dB at 0.5 m, less farther
    # out: the README's "within 0.5 dB from 0.5 m out (1.2 dB at 0.2 m)".
    for r in (0.5, 1.0, 2.0):
        emf = hum_emf(coils, [DipoleSource(moment=0.05, at=[r, 0, 0])], mains_hz=d.hum.mains, harmonics=d.hum.harmonics)
        rej = source_hum(emf, from_a=fa, from_b=fb).rejection_db[0]
        point = -20 * np.log10(1 - ((r - s / 2) / (r + s / 2)) ** 3)
        assert rej == pytest.approx(point, abs=0.1)  # the coils' size changes it by far less
        assert 0 < rej - 20 * np.log10(r / (3 * s)) < 0.5  # the first-order gradient estimate
        assert rej < uniform - 30
    emf = hum_emf(coils, [DipoleSource(moment=0.05, at=[0.2, 0, 0])], mains_hz=d.hum.mains, harmonics=d.hum.harmonics)
    gap = source_hum(emf, from_a=fa, from_b=fb).rejection_db[0] - 20 * np.log10(0.2 / (3 * s))
    assert round(gap, 1) == 1.2


def test_broadside_dipole_cancels_as_a_uniform_field():
    # by mirror symmetry (x → −x swaps two identical coils), a z-axis dipole on the y axis links both
    # coils equally: the rejection is the networks' own, as in a uniform field
    d, coils, f, fa, fb = _setup()
    m = rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, distances_m=[0.2, 1.0], bearings_deg=[90.0], plane="xy")
    ref = [row["rejection_db"] for row in hum_table(d)["harmonics"]]
    for i in range(2):
        np.testing.assert_allclose(m.rejection_db[i, 0], ref, atol=1e-6)


def test_map_mirror_symmetry_and_agreement_with_the_table():
    d, coils, f, fa, fb = _setup()
    b = np.arange(0, 360, 15.0)
    m = rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, bearings_deg=b, plane="xy")
    assert m.rejection_db.shape == (8, 24, len(f))
    # y → −y mirrors the pickup onto itself (both coils symmetric in y)
    mirrored = m.rejection_db[:, (-np.arange(24)) % 24]
    np.testing.assert_allclose(m.rejection_db, mirrored, atol=1e-9)
    # a map entry is the per-harmonic table of that one dipole
    emf = hum_emf(coils, [DipoleSource(moment=0.05, at=[0.5 * np.cos(np.deg2rad(45)), 0.5 * np.sin(np.deg2rad(45)), 0])], mains_hz=d.hum.mains, harmonics=d.hum.harmonics)
    np.testing.assert_allclose(m.rejection_db[2, 3], source_hum(emf, from_a=fa, from_b=fb).rejection_db, rtol=1e-12)
    js = m.to_dict()
    assert js["plane"] == "xy" and len(js["rejection_db"]) == 8 and len(js["rejection_db"][0]) == 24


def test_vertical_plane_has_bearings_that_cancel_worse():
    # in the x–z plane a z-axis dipole's B_z changes sign where 3·sin²(elevation) = 1, 35.3° (Jackson eq. 5.56):
    # there the common field vanishes and the coils' difference wins; the rejection falls below 0 dB near it
    d, coils, f, fa, fb = _setup()
    b = np.arange(140.0, 150.0, 0.05)
    m = rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, distances_m=[0.5], bearings_deg=b, plane="xz")
    worst = b[np.argmin(m.rejection_db[0, :, 0])]
    assert m.rejection_db[0, :, 0].min() < 0
    assert abs(worst - (180 - np.rad2deg(np.arcsin(np.sqrt(1 / 3))))) < 1.5
    with pytest.raises(InputError, match="plane='yz'"):
        rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, plane="yz")
    with pytest.raises(InputError, match="lies within coil"):
        rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, distances_m=[0.005], bearings_deg=[0.0])


def test_the_vertical_planes_dip_below_0_db_narrows_as_one_over_distance():
    # Near the bearing where a z dipole's B_z changes sign (Jackson eq. 5.56) the common flux grows as
    # (θ − θ0)/r³ while the coils' difference, the field's gradient times their spacing s, goes as s/r⁴:
    # the hum adds (rejection below 0 dB) over a band of bearings whose width goes as s/r, so width·r is
    # the same at every distance (checked within 5 %). The README's widths (about two degrees at 0.3 m,
    # less than one from 1 m out) are this model's own, held here against change
    d, coils, f, fa, fb = _setup()
    step = 0.01
    b = np.arange(130.0, 160.0, step)
    widths = []
    for r in (0.3, 1.0, 3.0):
        m = rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, distances_m=[r], bearings_deg=b, plane="xz")
        widths.append(np.count_nonzero(m.rejection_db[0, :, 0] < 0) * step)
    products = np.array(widths) * np.array([0.3, 1.0, 3.0])
    np.testing.assert_allclose(products, products.mean(), rtol=0.05)
    assert 1.5 < widths[0] < 2.5 and widths[1] < 1.0


def test_source_draws_fill_the_shell_uniformly():
    # a uniform draw in a spherical shell puts the share (ρ³ − r1³)/(r2³ − r1³) within radius ρ (volume
    # of a sphere); axes uniform on the sphere have mean 0 and E[a_z²] = 1/3 (geometry). 3σ bounds.
    n = 20000
    p, a = random_sources(n, seed=4, shell=(0.3, 2.0))
    r = np.linalg.norm(p, axis=1)
    assert r.min() >= 0.3 and r.max() <= 2.0
    share = (1.0**3 - 0.3**3) / (2.0**3 - 0.3**3)
    assert abs(np.mean(r < 1.0) - share) < 3 * np.sqrt(share * (1 - share) / n)
    np.testing.assert_allclose(np.linalg.norm(a, axis=1), 1.0, rtol=1e-12)
    assert np.all(np.abs(a.mean(axis=0)) < 3 / np.sqrt(3 * n))
    assert abs(np.mean(a[:, 2] ** 2) - 1 / 3) < 3 * np.sqrt(4 / 45 / n)  # Var(a_z²) = 1/5 − 1/9
    assert np.all(np.abs(p.mean(axis=0)) < 3 * np.sqrt(np.mean(r**2) / 3 / n))


def test_position_monte_carlo_is_seeded_and_far_below_the_uniform_figure():
    d, coils, f, fa, fb = _setup()
    a = position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, trials=3000, seed=1)
    b = position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, trials=3000, seed=1)
    c = position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, trials=3000, seed=2)
    np.testing.assert_array_equal(a.rejection_db, b.rejection_db)
    assert not np.array_equal(a.rejection_db, c.rejection_db)
    s = a.summary()[0]
    # Independently, on the same draws: each coil as a point at its centre (x = ∓s/2, half its height down),
    # linking B_z of a point dipole there, B = µ0/(4π)·(3(m·r̂)r̂ − m)/r³ (Jackson, Classical Electrodynamics,
    # 3rd ed., eq. 5.56), and a matched pair's rejection 20·log10(max(|B_a|, |B_b|)/|B_a − B_b|). The windings'
    # size (at 0.3 m and more) and the networks' own 71 dB balance move the median and the 5th percentile by
    # under 0.1 dB (measured 0.01 dB: 31.90 and 16.79 dB here): within 0.2 dB.
    places, axes = random_sources(3000, seed=1)
    sp = d.coil_b.position - d.coil_a.position

    def bz(centre):
        r = np.asarray(centre)[None, :] - places
        n = np.linalg.norm(r, axis=1, keepdims=True)
        u = r / n
        return ((3 * np.sum(axes * u, axis=1, keepdims=True) * u - axes) / n**3)[:, 2]

    ba, bb = bz([-sp / 2, 0, -DEMO.height / 2]), bz([sp / 2, 0, -DEMO.height / 2])
    point = 20 * np.log10(np.maximum(np.abs(ba), np.abs(bb)) / np.abs(ba - bb))
    assert s["median_db"] == pytest.approx(np.median(point), abs=0.2)
    assert s["p5_db"] == pytest.approx(np.percentile(point, 5), abs=0.2)
    assert s["median_db"] < hum_table(d)["harmonics"][0]["rejection_db"] - 25


def test_joint_draw_pairs_the_two_separate_runs():
    # with both coils at one place (point coils of the design's turns_area), every dipole links them
    # in the ratio of their turns areas, as a uniform field does: the joint run must then give the part
    # Monte Carlo's rejection trial by trial, which holds only if the part draws are the same
    d = load_design(REF)
    d = replace(d, coil_b=replace(d.coil_b, turns_area=0.35))
    same = (placed_coil(d.coil_a.turns_area, centre=(0, 0, 0)), placed_coil(d.coil_b.turns_area, centre=(0, 0, 0)))
    f, _ = field_derivative(d.hum)
    j = joint_monte_carlo(d, same, frequency_hz=f, trials=400, seed=9, chunk=150)
    parts = hum_tolerances(d, trials=400, seed=9)
    np.testing.assert_allclose(j.rejection_db, parts.rejection_db, atol=1e-6)
    # and its places are the position-only run's
    _, coils, _, fa, fb = _setup()
    pos = position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, trials=400, seed=9)
    np.testing.assert_array_equal(j.places_m, pos.places_m)
    # chunking and processes change nothing
    j1 = joint_monte_carlo(d, coils, frequency_hz=f, trials=400, seed=9, chunk=400)
    j2 = joint_monte_carlo(d, coils, frequency_hz=f, trials=400, seed=9, chunk=64, jobs=2)
    np.testing.assert_array_equal(j1.rejection_db, j2.rejection_db)
    assert j1.tolerances == {"resistor": 0.01, "capacitor": 0.05, "turns": 0.02}
