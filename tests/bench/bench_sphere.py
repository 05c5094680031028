"""A permeable sphere at µr = 100 against its closed form, cell size to zero (run by hand: ``python tests/bench/bench_sphere.py [n_max]``; minutes).

The staircase sphere of tests/magnetics/shapes.py (n cubes across, each kept
if its centre lies inside) in a uniform field B0 along z, solved by the
lattice solve of tests/magnetics/lattice.py (render's system, the
package's FFT operator; equal to render's dense solve to 1e-9 of the largest
J, checked in tests/magnetics/test_steel.py), for every n from 8 to n_max
(48 by default, about 6 minutes and 0.4 GB here). Prints per n the cells,
the mean J over the closed form J = 3χ/(3 + χ)·B0 (Jackson, Classical
Electrodynamics, 3rd ed., §5.11) minus one, n times that error, and the wall
time; then least-squares lines in 1/n (Richardson's extrapolation to zero
cell size at first order; Richardson, Phil. Trans. R. Soc. A 210, 307–357,
1911) over n = 16–32 every 4 (the test's levels), 16–n_max and 24–n_max, and
the order between n = 16 and 32.

Measured on 2026-12-03 (2 cores of an Intel Xeon, shared with other work):
the error falls from +7.45 % (n = 8, 280 cells) through +4.99 % (16, 2176),
+2.51 % (32, 17256) to +1.67 % (48, 57856); n·error settles at 0.78–0.82
from n = 24 on; the lines meet 1/n = 0 at −0.06 % (the test's levels),
+0.18 % (16–48) and +0.17 % (24–48); order 0.99 from 16 to 32. The table
is in the docstring of test_permeable_sphere_at_mu_r_100_converges_to_the_closed_form.
Not collected by pytest (no unit test is timed).
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from magnetics.lattice import lattice_sphere  # noqa: E402


def line(ns, err):
    """(limit, slope) of the least-squares line err = limit + slope/n."""
    return np.linalg.lstsq(np.c_[np.ones(len(ns)), 1.0 / np.asarray(ns)], err, rcond=None)[0]


def main(n_max: int = 48) -> None:
    chi, b0, radius = 99.0, 0.01, 5e-3
    closed = 3 * chi / (3 + chi) * b0
    err = {}
    print(f"{'n':>3} {'cells':>6} {'J/J_closed - 1':>15} {'n*error':>8} {'s':>6}")
    for n in range(8, n_max + 1):
        t = time.perf_counter()
        j = lattice_sphere(radius, n, chi, b0)
        err[n] = j[:, 2].mean() / closed - 1
        print(f"{n:3d} {len(j):6d} {err[n]:+15.4%} {n * err[n]:8.3f} {time.perf_counter() - t:6.1f}", flush=True)
    for lo, hi, step in ((16, 32, 4), (16, n_max, 1), (24, n_max, 1)):
        ns = [n for n in range(lo, hi + 1, step) if n in err]
        if len(ns) >= 3:
            limit, slope = line(ns, np.array([err[n] for n in ns]))
            print(f"line over n = {lo}-{hi} every {step}: limit {limit:+.2%}, slope {slope:.3f}")
    if 32 in err:
        print(f"order from n = 16 to 32: {np.log(err[16] / err[32]) / np.log(2):.2f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 48)
