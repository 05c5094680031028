"""The finite-element core check's figures (run by hand: ``python tests/bench/bench_core_fe.py``; under a minute).

Prints the two tables of ``tests/magnetics/test_core_fe.py``'s docstring: the
GetDP model's mesh convergence (air inductance against Brooks's coil, the
rod's rise at µr = 10 and 100, nodes, wall time) and render's rise for the
same rod at ``refine`` 1, 2 and 3, over the FE rise at the test's mesh. The
FE rise's limit is a Richardson estimate from the three finest meshes
(Richardson, Phil. Trans. R. Soc. A 210, 307–357, 1911). Needs gmsh and GetDP
(Debian packages) and magpylib-material-response. Not collected by pytest.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from magnetics.getdp_reference import solve  # noqa: E402
from magnetics.test_core_fe import COIL, MESH, _render_rise  # noqa: E402

BROOKS = 1.6994e-6 * 1.5 * COIL.inner_radius * COIL.turns**2  # Grover 1946 ch. 13 (c = inner radius)


def main() -> None:
    rises = {10.0: [], 100.0: []}
    at_test = {}
    print("mesh s   nodes   air L vs Brooks   ΔL µr=10    ΔL µr=100   seconds")
    for s in (0.6e-3, 0.3e-3, 0.15e-3, 0.075e-3):
        t = time.perf_counter()
        air, r10, r100 = solve(COIL, (1.0, 10.0, 100.0), mesh=s, corner=0.25, far=16 * s)
        dt = time.perf_counter() - t
        d10, d100 = r10.inductance - air.inductance, r100.inductance - air.inductance
        rises[10.0].append(d10)
        rises[100.0].append(d100)
        if math.isclose(s, MESH):
            at_test = {10.0: d10, 100.0: d100}
        print(f"{s * 1e3:5.3f} mm {air.nodes:7d}   {air.inductance / BROOKS - 1:+.4%}        {d10 * 1e3:.4f} mH  {d100 * 1e3:.4f} mH  {dt:.1f}")
    for mur, r in rises.items():
        a, b, c = r[-3:]
        limit = c + (c - b) ** 2 / ((b - a) - (c - b))  # Aitken's form of Richardson's step, meshes halving
        print(f"µr = {mur:g}: FE rise limit ≈ {limit * 1e3:.4f} mH; the test's mesh reads {at_test[mur] / limit - 1:+.2%}")
    print("render's rise over the FE's at the test's mesh:")
    for mur in (10.0, 100.0):
        for refine in (1.0, 2.0, 3.0):
            t = time.perf_counter()
            rise = _render_rise(mur, refine)
            print(f"  µr = {mur:g}, refine {refine:g}: {rise * 1e3:.3f} mH, {rise / at_test[mur]:.4f} ({time.perf_counter() - t:.1f} s)")


if __name__ == "__main__":
    main()
