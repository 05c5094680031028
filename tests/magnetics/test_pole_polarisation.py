"""The steel demos' pole pieces stay far below saturation: the README's 0.06–0.22 T (blades) and 0.07–0.36 T (screws).

The figures are the render's own bias solve (render.magnetics.steel), which
tests/magnetics/test_steel.py and test_coil_steel.py check against closed
forms and magpylib-material-response; this test holds the README's sentence to it.
Low-carbon steel saturates near 2 T (from memory), so a linear µr holds in the poles.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from magnetics.reference import require_material_response

from render.design import load_design
from render.magnetics.coil import coil_centres
from render.magnetics.steel import Excitation, solve_many

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.parametrize(("name", "low", "high"), [("slipway-steel-blades", 0.06, 0.22), ("slipway-steel-poles", 0.07, 0.36)])
def test_pole_pieces_polarisation_range(name, low, high):
    require_material_response()
    d = load_design(ROOT / "models" / f"{name}.toml")
    built = d.construction
    ca, cb = coil_centres(d.coil_a.position, d.coil_b.position)
    parts = built.construction.parts(ca, cb, built.geometry_a, built.geometry_b)
    (bias,) = solve_many(parts, [Excitation(None, True)])
    j = np.linalg.norm(bias.polarization, axis=1)
    owner = np.concatenate([[p.name] * int(np.prod(p.cells)) for p in parts])
    steel = j[np.array(["magnet" not in n for n in owner])]
    assert (round(steel.min(), 2), round(steel.max(), 2)) == (low, high)
