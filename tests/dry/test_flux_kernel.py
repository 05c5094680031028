"""The compiled flux-table slopes against scipy's own spline evaluation (FITPACK; Dierckx 1993)."""

from __future__ import annotations

import numpy as np
from scipy.interpolate import RectBivariateSpline

from render.dry._flux_kernel import slope_tables, slopes


def test_slopes_equal_scipys_derivatives_of_the_same_spline():
    # scipy.interpolate.RectBivariateSpline.ev(y, z, dx=1) / (dy=1) is the reference: the same
    # bicubic spline's partial derivatives. Uneven grids, points inside, on the knots and on the edges.
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
