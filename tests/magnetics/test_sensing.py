"""What a construction senses: string balance, bend dropout, and the chain's own consistency."""

from __future__ import annotations

import numpy as np
import pytest
from magnetics.reference import require_magpylib, require_material_response
from scipy.interpolate import CubicSpline

from render.magnetics.coil import CoilGeometry
from render.magnetics.construction import Construction, Strings
from render.magnetics.sensing import PickupSensing, pickup_sensing

MM = 1e-3
CORES = (0.25 * MM, 0.33 * MM, 0.43 * MM)  # three plain strings, thinnest on the bass side


def _geometry(window):
    return CoilGeometry(turns=1000, length=68 * MM, width=window + 9 * MM, window_length=58 * MM, window_width=window, height=9 * MM)


def _strings(**kw):
    """Three plain strings with their axes at one height, 2.7 mm above the coils' top faces."""
    return Strings(cores=CORES, outers=CORES, spacing=10.4 * MM, heights=tuple(2.7 * MM - d / 2 for d in CORES), **kw)


def _blades(**kw):
    require_magpylib()
    require_material_response()
    c = Construction(kind="steel-blades", magnet=(20 * MM, 64 * MM, 3.2 * MM), remanence=0.39, magnet_permeability=1.1, strings=_strings(**kw), steel=(2.5 * MM, 56 * MM, 11 * MM))
    g = _geometry(3.4 * MM)
    return pickup_sensing(c, g, g, position_a=0.038, position_b=0.056, refine=0.6)


@pytest.fixture(scope="module")
def blades():
    return _blades()


@pytest.fixture(scope="module")
def poles():
    require_magpylib()
    require_material_response()
    c = Construction(
        kind="steel-poles",
        magnet=(20 * MM, 64 * MM, 3.2 * MM),
        remanence=0.39,
        magnet_permeability=1.1,
        strings=_strings(),
        steel=(4.2 * MM, 4.2 * MM, 11 * MM),
        poles=3,
        pole_spacing=10.4 * MM,
    )
    g = _geometry(4.6 * MM)
    return pickup_sensing(c, g, g, position_a=0.038, position_b=0.056, refine=0.6)


def test_plain_strings_sense_about_in_proportion_to_their_cross_section(blades):
    # "Analytical Modeling and Experimental Characterization of a Magnetic Pickup for Electric
    # Guitar", JAES 65(9):711–721, 2017: on the bench, plain strings at equal height give an output
    # proportional to their cross-section. The outer strings sit symmetrically on the blade
    # (y = ±10.4 mm, axes at one height), so the bench's ratio is (0.43/0.25)² = 2.96. The model,
    # at the default string permeability µr = 100 and saturation 2.0 T, reads 10 % less (measured 0.898
    # of it, −0.9 dB; 0.838 with a linear steel): the string's magnetisation along its axis is held back
    # by its own charges, more so the thicker it is, and the thinner string, more polarised, is nearer
    # saturation. The check holds it within 20 %, and far from the ratio of the diameters (1.72).
    for coil in (blades.coil_a, blades.coil_b):
        thin, thick = coil[0], coil[2]  # lowest first: 0.25 mm at −y, 0.43 mm at +y
        ratio = thick.sensitivity_z / thin.sensitivity_z
        assert ratio == pytest.approx((CORES[2] / CORES[0]) ** 2, rel=0.20)
        assert ratio > 1.25 * CORES[2] / CORES[0]
        assert ratio / (CORES[2] / CORES[0]) ** 2 == pytest.approx(0.90, abs=0.01)  # the README's figure (measured 0.898)


def test_with_a_low_string_permeability_the_balance_is_the_bench_one():
    # The same check at µr = 10 for the strings: their longitudinal demagnetisation then hardly
    # depends on their thickness, and the model keeps the bench's proportionality (JAES 2017)
    # within 3 % (measured 0.975 of it). What separates the two is the string steel's permeability,
    # which no source here gives (see README.md, "Where the model stands", the strings).
    low = _blades(permeability=10.0)
    thin, thick = low.coil_a[0], low.coil_a[2]
    assert thick.sensitivity_z / thin.sensitivity_z == pytest.approx((CORES[2] / CORES[0]) ** 2, rel=0.03)


def test_steel_poles_drop_out_between_poles_where_blades_do_not(blades, poles):
    # A fact of the trade (common practice, no source): a string bent away from its pole screw
    # loses output, a blade keeps it. Pushed 5 mm (half the pole spacing) towards the treble side,
    # the middle string's output falls by more than 2 dB over screws and by less than 0.5 dB over a blade.
    # The same towards the bass side (−5 mm), where a bend pushes strings 1–3.
    for side in (5 * MM, -5 * MM):
        five = int(np.flatnonzero(np.isclose(poles.coil_a[1].lateral, side))[0])
        for p, b in ((poles.coil_a[1], blades.coil_a[1]), (poles.coil_b[1], blades.coil_b[1])):
            assert p.lateral_db[five] < -2.0
            assert abs(b.lateral_db[five]) < 0.5
            assert p.lateral_db[five] < b.lateral_db[five] - 1.5


def test_the_pushed_figures_are_the_flux_tables_slope_on_both_sides(blades, poles):
    # The dropout comes from the sensing function integrated along the string displaced sideways; the flux
    # table holds the same string's flux on the same lines: its central difference over ±0.5 mm vertically
    # (error h²/6 times the third derivative, Press et al., Numerical Recipes, 3rd ed., 2007, §5.7) must give
    # the same dB towards either side. Measured up to 0.18 dB on the three shipped demos (both sides,
    # 0.5–6 mm); bound 0.3 dB.
    for coil in (*poles.coil_a, *poles.coil_b, *blades.coil_a):
        up, down = (int(np.flatnonzero(np.isclose(coil.dz, d))[0]) for d in (0.5 * MM, -0.5 * MM))
        slope = (coil.flux[:, up] - coil.flux[:, down]) / (1 * MM)
        at = {round(float(d) * 1e4): slope[i] for i, d in enumerate(coil.dy)}
        ref = 20 * np.log10(np.abs([at[round(float(o) * 1e4)] for o in coil.lateral]) / abs(at[0]))
        assert coil.lateral.min() == pytest.approx(-6 * MM) and coil.lateral.max() == pytest.approx(6 * MM)
        np.testing.assert_allclose(coil.lateral_db, ref, atol=0.3)


def test_humbucker_symmetry_and_reversed_field(blades):
    # Two equal coils, the bar magnet's poles one under each: coil_b's view is coil_a's mirrored,
    # its field reversed, so every sensitivity is equal and opposite (a consequence of the
    # build's mirror symmetry; checks the placing of the parts).
    for a, b in zip(blades.coil_a, blades.coil_b):
        assert b.sensitivity_z == pytest.approx(-a.sensitivity_z, rel=1e-6)
        np.testing.assert_allclose(b.along_z, -a.along_z[::-1], atol=1e-6 * np.abs(a.along_z).max())
    assert blades.coil_a[1].sensitivity_z > 0  # coil_a's flux rises as a string moves up (module docstring)


def test_sensitivity_is_the_slope_of_the_flux_table(poles):
    # Two routes to dΦ/dz at rest: the sensing function (fields' z-derivatives from the spectrum,
    # summed along the string) and the flux table at its heights (fields at each height, the
    # string magnetised anew). They agree to the table's interpolation (cubic, 0.5 mm steps).
    for s in (*poles.coil_a, *poles.coil_b):
        row = s.flux[int(np.flatnonzero(s.dy == 0)[0])]
        slope = CubicSpline(s.dz, row)(0.0, 1)
        assert slope == pytest.approx(s.sensitivity_z, rel=0.01)


def test_cache_arrays_round_trip(poles):
    back = PickupSensing.from_arrays(poles.to_arrays())
    assert back.digest == poles.digest and back.positions == poles.positions
    for a, b in zip(back.coil_a + back.coil_b, poles.coil_a + poles.coil_b):
        assert a.string == b.string and a.h2_db == b.h2_db
        np.testing.assert_array_equal(a.flux, b.flux)
        np.testing.assert_array_equal(a.along_z, b.along_z)
