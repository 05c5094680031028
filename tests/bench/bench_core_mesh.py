"""Mesh convergence of the core's inductance rise (run by hand: ``python tests/bench/bench_core_mesh.py``; minutes).

For the two steel slipway designs, eq. (1) of
:mod:`render.impedance.construction_core` (ΔL = Σ m_i·B₁(r_i)) is solved on
the shipped cells and on cells cut finer across each part's section (x for a
blade, x and y for a screw and the bar magnet), then along the other sides,
and printed with the cell count and the time. The last two section
refinements give a Richardson estimate of the converged rise,

    ΔL∞ ≈ ΔL_n + (ΔL_n − ΔL_{n−1}) / ((n/(n−1))^p − 1),

with the order p fitted to the last three (ΔL = ΔL∞ − a·h^p, h = 1/n);
Richardson, Phil. Trans. R. Soc. A 210, 307–357, 1911. What is printed is
the figure the README's "The core, from the construction" quotes.
Not collected by pytest (no unit test is timed).
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.optimize import brentq

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))


def _rise(design, refine_xyz) -> tuple[float, int, float]:
    """(coil_a's total rise H, cells, seconds) with each part's cell count along x, y, z multiplied by ``refine_xyz``."""
    import render.magnetics.construction as C
    from render.impedance.construction_core import part_rises
    from render.magnetics.coil import coil_centres

    original = C._count
    C._count = lambda size, cell, refine: tuple(max(1, int(math.ceil(s / c * q - 1e-9))) for s, c, q in zip(size, cell, refine_xyz))
    try:
        b = design.construction
        ca, cb = coil_centres(design.coil_a.position, design.coil_b.position)
        cells = sum(int(np.prod(p.cells)) for p in b.construction.parts(ca, cb, b.geometry_a, b.geometry_b))
        t = time.process_time()
        rises = part_rises(b.construction, b.geometry_a, b.geometry_b, position_a=design.coil_a.position, position_b=design.coil_b.position)
        return sum(p.rise for p in rises["coil_a"]), cells, time.process_time() - t
    finally:
        C._count = original


def main() -> None:
    from render.design import load_design

    studies = {
        "slipway-steel-blades": [(1, 1, 1), (2, 1, 1), (3, 1, 1), (4, 1, 1), (1, 2, 1), (1, 1, 2)],
        "slipway-steel-poles": [(1, 1, 1), (2, 2, 1), (3, 3, 1), (1, 1, 2)],
    }
    for stem, refinements in studies.items():
        design = load_design(ROOT / "models" / f"{stem}.toml")
        print(f"{stem}: coil_a's core rise by cells (x, y, z multiplied)")
        section = []
        for r in refinements:
            rise, cells, cpu = _rise(design, r)
            print(f"  {r}  {cells:5d} cells  {rise * 1e3:7.3f} mH  {cpu:6.1f} s CPU", flush=True)
            if r[2] == 1 and (r[1] == 1 or r[1] == r[0]):
                section.append((r[0], rise))
        if len(section) >= 3:
            (n1, a), (n2, b), (n3, c) = section[-3:]
            ratio = (b - a) / (c - b)
            p = brentq(lambda q: (n1**-q - n2**-q) / (n2**-q - n3**-q) - ratio, 0.2, 4.0)
            limit = c + (c - b) / ((n3 / n2) ** p - 1)
            base = section[0][1]
            print(f"  order p {p:.2f}; across the section, converged ≈ {limit * 1e3:.2f} mH: the shipped cells give {100 * (base / limit - 1):+.1f} %")


if __name__ == "__main__":
    main()
