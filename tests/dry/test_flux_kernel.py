"""The compiled flux-table slopes against scipy's own spline evaluation (FITPACK; Dierckx 1993)."""

from __future__ import annotations

import numpy as np
from scipy.interpolate import RectBivariateSpline

from render.dry._flux_kernel import slope_tables, slopes


def test_slopes_equal_scipys_derivatives_of_the_same_spline():
    # scipy.interpolate.RectBivariateSpline.ev(y, z, dx=1) / (dy=1) is the reference: the same
    # bicubic spline's partial derivatives. Uneven grids, points inside, on the knots and on the edges.
    # The table is synthetic (any smooth field serves an equivalence check); the tolerance is float64 rounding.
    rng = np.random.default_rng(7)
    y = np.sort(np.r_[-8e-3, rng.uniform(-8e-3, 8e-3, 30), 8e-3])
    z = np.sort(np.r_[-1.5e-3, rng.uniform(-1.5e-3, 2e-3, 12), 2e-3])
    flux = np.sin(300 * y)[:, None] * np.cos(900 * z)[None, :] + 40 * y[:, None] * z[None, :]
    spline = RectBivariateSpline(y, z, flux, kx=3, ky=3)
    py = np.r_[rng.uniform(y[0], y[-1], 5000), y, y[0], y[-1], y[-1]]
    pz = np.r_[rng.uniform(z[0], z[-1], 5000), rng.choice(z, y.size), z[-1], z[0], z[-1]]
    gy, gz = slopes(slope_tables(spline.tck), py, pz)
    want_y, want_z = spline.ev(py, pz, dx=1), spline.ev(py, pz, dy=1)
    np.testing.assert_allclose(gy, want_y, rtol=0, atol=1e-12 * np.abs(want_y).max())
    np.testing.assert_allclose(gz, want_z, rtol=0, atol=1e-12 * np.abs(want_z).max())


def test_add_emf_is_the_slopes_times_the_velocity_where_the_string_moves():
    # the same step written with scipy: motion = scale·moving + fixed; where it is not all zero, (y, z)
    # held inside the table (np.clip), EMF += sign·(F_y·v_y + F_z·v_z) with scipy's spline derivatives
    from render.dry._flux_kernel import add_emf

    rng = np.random.default_rng(11)
    y = np.linspace(-6e-3, 6e-3, 25)
    z = np.linspace(-1e-3, 1.5e-3, 11)
    flux = np.cos(400 * y)[:, None] * np.exp(-800 * z)[None, :]
    spline = RectBivariateSpline(y, z, flux, kx=3, ky=3)
    n = 4000
    moving = np.vstack([rng.uniform(-8e-3, 8e-3, n), rng.uniform(-1.2e-3, 1.8e-3, n), rng.normal(0, 0.3, (2, n))]).astype(np.float32)
    moving[:, 100:400] = 0.0  # a silence: no EMF added there
    fixed = np.zeros((4, n))
    fixed[0, 2000:2500] = 1e-3  # a bend's sideways offset, not scaled
    fixed[2, 2000:2500] = 0.05
    for scale, fix, sign in ((1.0, None, 1.0), (2.5, fixed, -1.0)):
        out = np.full(n, 0.25)  # added to, not overwritten
        held = add_emf(slope_tables(spline.tck), (y[0], y[-1], z[0], z[-1]), moving, out, scale=scale, fixed=fix, sign=sign)
        m = scale * moving.astype(float) + (0.0 if fix is None else fix)
        live = np.any(m != 0.0, axis=0)
        py, pz = np.clip(m[0], y[0], y[-1]), np.clip(m[1], z[0], z[-1])
        want = np.full(n, 0.25)
        want[live] += sign * (spline.ev(py, pz, dx=1) * m[2] + spline.ev(py, pz, dy=1) * m[3])[live]
        np.testing.assert_allclose(out, want, rtol=0, atol=1e-12 * np.abs(want).max())
        assert held and np.array_equal(out[100:400], np.full(300, 0.25))
    inside = moving * 0.01
    assert not add_emf(slope_tables(spline.tck), (y[0], y[-1], z[0], z[-1]), inside, np.zeros(n))


def test_warming_compiles_the_kernel_for_the_arrays_the_sensing_passes():
    # render clips loads the kernel once before forking its workers (render.runs.clips.import_for_workers): that
    # only helps if the workers then call it with the same array types, and numba loads nothing more
    from render.dry._flux_kernel import _add_emf, add_emf, warm
    from render.dry.construction import ROWS

    warm()
    before = set(_add_emf.signatures)
    t = np.r_[np.zeros(4), np.ones(4)]
    tables = slope_tables((t, t, np.zeros(16)))
    chans = np.zeros((2, ROWS, 50))  # render.dry.construction: a string's motion at both coils, float64 as synthesised
    kept = np.zeros((2, ROWS, 50), np.float32)  # and kept (PhraseMotion.moving), with a bend's fixed part
    emf = np.zeros((2, 50))
    add_emf(tables, (0.0, 1.0, 0.0, 1.0), chans[1, :4], emf[1])  # its first four rows, as _add_string_emf passes them
    add_emf(tables, (0.0, 1.0, 0.0, 1.0), kept[1, :4], emf[1], scale=2.0, fixed=chans[0, :4])
    assert set(_add_emf.signatures) == before and len(before) >= 2
