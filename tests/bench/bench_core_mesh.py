"""Mesh convergence of the core's inductance rise (run by hand: ``python tests/bench/bench_core_mesh.py``; minutes).

For the two steel slipway designs, eq. (1) of
:mod:`render.impedance.construction_core` (ΔL = Σ m_i·B₁(r_i)) is solved for
coil_a's field on the shipped cells and on the steel's cells multiplied
(x, y, z) in each pole piece's top slab and body, and printed with the cell
count and the wall time of the one solve. The bar magnet (recoil µr 1.05)
keeps its cells. Each part's cells are multiplied, not recut, so every level
nests the shipped cells (a screw's twelve top columns are each split too).

The last three levels of one refinement (a blade's top and body across x; a
screw's body across x and y) give a Richardson estimate of its limit,

    ΔL∞ ≈ ΔL_n + (ΔL_n − ΔL_{n−1}) / ((n/(n−1))^p − 1),

with the order p fitted to the last three (ΔL = ΔL∞ − a·h^p, h = 1/n);
Richardson, Phil. Trans. R. Soc. A 210, 307–357, 1911. The other sides are
refined twice once each, to show what they add on top. What is printed is
the table of the README's "The core, from the construction" (paragraph "Mesh
error, measured"). Not collected by pytest (no unit test is timed).

Measured on 2026-12-02 (coil_a; wall seconds of one solve on a shared 2-core
machine, scattering by up to a factor of two):

- slipway-steel-blades: shipped 42.23 mH (816 cells, 4.5 s); top and body
  across x 2×, 3×, 4×: 44.84, 45.51, 45.78 mH (1376, 1936, 2496 cells; 14, 9,
  21 s); p 1.65, ≈ 46.22 mH, shipped −8.6 %. Body alone 2×, 3×, 4×: 44.29,
  44.95, 45.03 mH (928, 1040, 1152 cells; 2–4 s). With the body 2×, y 2× adds
  0.18 mH, z 2× 0.04 mH.
- slipway-steel-poles: shipped 32.72 mH (928 cells, 1.9 s); body across x
  and y 2×, 3×, 4×: 34.42, 35.21, 35.61 mH (1216, 1696, 2368 cells; 4, 8,
  17 s); p 0.98, ≈ 36.84 mH, shipped −11.2 %. With the body 2×, each top
  column split in four adds 0.53 mH (2944 cells, 25 s), z 2× 0.75 mH (2176
  cells, 17 s): the full limit is about 38 mH or more.
"""

from __future__ import annotations

import os
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
from scipy.optimize import brentq

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
os.environ.setdefault("RENDER_CACHE_DIR", "off")

# (top slab's multipliers, body's multipliers) per level; the levels marked True form the Richardson sequence (n = its x multiplier)
STUDIES = {
    "slipway-steel-blades": [
        (((1, 1, 1), (1, 1, 1)), True),
        (((2, 1, 1), (2, 1, 1)), True),
        (((3, 1, 1), (3, 1, 1)), True),
        (((4, 1, 1), (4, 1, 1)), True),
        (((1, 1, 1), (2, 1, 1)), False),
        (((1, 1, 1), (3, 1, 1)), False),
        (((1, 1, 1), (4, 1, 1)), False),
        (((1, 2, 1), (2, 2, 1)), False),
        (((1, 1, 2), (2, 1, 2)), False),
    ],
    "slipway-steel-poles": [
        (((1, 1, 1), (1, 1, 1)), True),
        (((1, 1, 1), (2, 2, 1)), True),
        (((1, 1, 1), (3, 3, 1)), True),
        (((1, 1, 1), (4, 4, 1)), True),
        (((2, 2, 1), (2, 2, 1)), False),
        (((1, 1, 2), (2, 2, 2)), False),
    ],
}


def _rise(design, top, body) -> tuple[float, int, float]:
    """(coil_a's rise from coil_a's own field, H; cells; seconds) with the steel's cells multiplied."""
    from render.impedance.construction_core import cell_linkage
    from render.magnetics.coil import coil_centres, placed_coil
    from render.magnetics.sensing import APPLIED_NODES
    from render.magnetics.steel import solve

    b = design.construction
    ca, cb = coil_centres(design.coil_a.position, design.coil_b.position)
    parts = []
    for p in b.construction.parts(ca, cb, b.geometry_a, b.geometry_b):
        q = top if p.name.endswith(" top") else body if p.name.endswith(" body") else (1, 1, 1)
        parts.append(replace(p, cells=tuple(n * k for n, k in zip(p.cells, q))))
    coil = placed_coil(b.geometry_a, centre=ca, nodes=APPLIED_NODES)
    t = time.perf_counter()
    cells = solve(parts, applied=coil.field_per_amp, remanence=False)
    seconds = time.perf_counter() - t
    return float(cell_linkage(cells, coil.field_per_amp).sum()), sum(int(np.prod(p.cells)) for p in parts), seconds


def main() -> None:
    from render.design import load_design

    for stem, levels in STUDIES.items():
        design = load_design(ROOT / "models" / f"{stem}.toml")
        print(f"{stem}: coil_a's core rise, the steel's cells multiplied (top slab x, y, z; body x, y, z)")
        sequence = []
        for (top, body), richardson in levels:
            rise, cells, seconds = _rise(design, top, body)
            print(f"  top {top} body {body}  {cells:5d} cells  {rise * 1e3:7.3f} mH  {seconds:6.1f} s", flush=True)
            if richardson:
                sequence.append((body[0], rise))
        (n1, a), (n2, b), (n3, c) = sequence[-3:]
        p = brentq(lambda q: (n1**-q - n2**-q) / (n2**-q - n3**-q) - (b - a) / (c - b), 0.05, 8.0)
        limit = c + (c - b) / ((n3 / n2) ** p - 1)
        base = sequence[0][1]
        print(f"  order p {p:.2f}; converged along that refinement ≈ {limit * 1e3:.2f} mH: the shipped cells give {100 * (base / limit - 1):+.1f} %")


if __name__ == "__main__":
    main()
