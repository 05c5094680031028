"""A coil's inductance rise from a steel rod: render's soft-steel solver against a finite-element solve (GetDP, gmsh).

The coil is Brooks's coil (a round coil of square section c × c at mean
radius 3c/2; Brooks & Turner, Bull. Bur. Standards, 1912, as given by Grover,
*Inductance Calculations*, 1946, ch. 13: L = 1.6994e-6·a·N² H, a in m; from
memory, and checked against the package's Neumann sum in
tests/impedance/test_inductance.py), c = 4 mm, 1000 turns. A coaxial rod of
6 mm diameter and 12 mm length, centred on the coil, raises its inductance.

The finite-element model (:mod:`magnetics.getdp_reference`: axisymmetric a_φ,
open boundary by a shell transformation) is first checked in air against
Brooks's formula and Jackson's vector potential of a ring; then the rod's
rise ΔL at µr = 10 and 100 is compared with render's: the rod cut as the
designs cut a round screw (:func:`render.magnetics.construction.round_pole`:
twelve square columns of the circle's area in the top 3 mm, a square prism of
the same area below), solved by :func:`render.magnetics.steel.solve_many` in
the coil's field and summed by eq. (1) of
:mod:`render.impedance.construction_core`. Equal areas are what the designs'
screws use, so the check measures the designs' path; a square prism cannot be
modelled axisymmetrically, and for a rod magnetised along its axis the
rise depends on its section mainly through its area.

The FE model's mesh convergence (measured 2026-12-02 by tests/bench/bench_core_fe.py; element size s near the
coil and rod, s/4 at the rod's edges, 16·s far away):

| s | nodes | air L vs Brooks | ΔL at µr = 10 | ΔL at µr = 100 |
|---|---|---|---|---|
| 0.6 mm | 1417 | −0.78 % | 7.0902 mH | 12.1518 mH |
| 0.3 mm (this test) | 4963 | −0.23 % | 7.1365 mH | 12.2619 mH |
| 0.15 mm | 18204 | −0.062 % | 7.1517 mH | 12.2998 mH |
| 0.075 mm | 72956 | −0.017 % | 7.1561 mH | 12.3112 mH |

so the air inductance converges as s² to Brooks's (within 0.002 % by
Richardson), and the rise to about 7.158 and 12.316 mH: the test's mesh reads
the rise 0.30 % and 0.44 % low. Against those limits the designs' cut below
reads −4.4 % and −6.1 %.

render's rise against that mesh's (measured 2026-12-02), with the designs'
cut (72 cells) and the cut refined (``refine`` 2: 504 cells; 3: 1604 cells,
not in the test: 25 s):

| µr | shipped cut | refine 2 | refine 3 |
|---|---|---|---|
| 10 | 6.846 mH, −4.1 % | 7.073 mH, −0.89 % | 7.177 mH, +0.56 % |
| 100 | 11.561 mH, −5.7 % | 12.239 mH, −0.19 % | 12.513 mH, +2.0 % |

The designs' cut reads the rise 4–6 % low, as README's "Mesh error,
measured" finds for the designs' screws; refined, render's rise passes the
finite-element one and keeps rising at µr = 100 (as the sphere at µr = 100
reads 4–7 % high in tests/magnetics/test_steel.py).
"""

from __future__ import annotations

import numpy as np
import pytest
from magnetics.getdp_reference import RoundCoilWithRod, solve
from magnetics.reference import loop_field, loop_vector_potential, require_material_response

from render.impedance.construction_core import cell_linkage
from render.impedance.inductance import round_winding_inductance
from render.magnetics.construction import round_pole
from render.magnetics.steel import Excitation, solve_many

MM = 1e-3
C = 4 * MM
COIL = RoundCoilWithRod(turns=1000, inner_radius=C, outer_radius=2 * C, height=C, rod_radius=3 * MM, rod_length=12 * MM)
MESH = 0.3 * MM  # the convergence table above
POINTS = ((6 * MM, 10 * MM), (12 * MM, 0.0), (2 * MM, 0.0))  # where a_φ is checked (air coil)
PERMEABILITIES = (1.0, 10.0, 100.0)


@pytest.fixture(scope="module")
def fe():
    """The FE solves: air, µr = 10 and µr = 100, on one mesh."""
    return dict(zip(PERMEABILITIES, solve(COIL, PERMEABILITIES, mesh=MESH, corner=0.25, far=16 * MESH, points=POINTS)))


def _gauss(n=16):
    """Gauss–Legendre nodes over the winding's section: radii, heights and weights summing to 1."""
    x, w = np.polynomial.legendre.leggauss(n)
    r = COIL.inner_radius + (x + 1) / 2 * (COIL.outer_radius - COIL.inner_radius)
    z = (x - 0.0) / 2 * COIL.height
    return r, z, w / 2


def coil_field(points):
    """The coil's field per ampere (T/A) at ``points`` (n, 3): rings of the section summed (the loop's closed form)."""
    p = np.asarray(points, float)
    rho = np.hypot(p[:, 0], p[:, 1])
    safe = np.where(rho > 0, rho, 1.0)
    cos, sin = np.where(rho > 0, p[:, 0] / safe, 0.0), np.where(rho > 0, p[:, 1] / safe, 0.0)
    r, z, w = _gauss()
    out = np.zeros_like(p)
    for ri, wi in zip(r, w):
        for zj, wj in zip(z, w):
            br, bz = loop_field(ri, rho, p[:, 2] - zj)
            k = COIL.turns * wi * wj
            out += k * np.stack([br * cos, br * sin, bz], axis=-1)
    return out


def test_the_fe_model_in_air_against_brooks_and_jackson(fe):
    air = fe[1.0]
    # Brooks & Turner 1912 via Grover 1946 ch. 13 (module docstring): measured −0.23 % at this mesh
    # (converging as s² to within 0.002 %); bound 0.4 %
    brooks = 1.6994e-6 * 1.5 * C * COIL.turns**2
    assert air.inductance == pytest.approx(brooks, rel=4e-3)
    # the package's Neumann sum over rings (Grover 1946 ch. 2 and 11), itself within 0.01 % of Brooks:
    # measured −0.22 %; bound 0.4 %
    neumann = round_winding_inductance(turns=COIL.turns, inner_radius=C, outer_radius=2 * C, height=C, layers=24, slices=24)
    assert air.inductance == pytest.approx(neumann, rel=4e-3)
    # a_φ off the winding, from Jackson's ring (Classical Electrodynamics, 3rd ed., eq. 5.37) summed over
    # the section: measured 0.08–0.21 % low at these points (0.05–0.08 % at s = 0.075 mm); bound 0.5 %
    r, z, w = _gauss()
    for (rp, zp), got in zip(POINTS, air.vector_potential):
        ref = sum(COIL.turns * wi * wj * loop_vector_potential(ri, rp, zp - zj) for ri, wi in zip(r, w) for zj, wj in zip(z, w))
        assert got == pytest.approx(ref, rel=5e-3)


def _render_rise(mur: float, refine: float) -> float:
    """render's ΔL (H): the rod cut as a round screw, solved in the coil's field, eq. (1) of construction_core."""
    parts = round_pole("rod", 0.0, 0.0, 2 * COIL.rod_radius, COIL.rod_length / 2, COIL.rod_length, mur - 1.0, (0.0, 0.0, 0.0), refine)
    cells = solve_many(parts, [Excitation(coil_field, False)])[0]
    return float(cell_linkage(cells, coil_field).sum())


# render's ΔL over the FE's at this mesh, measured 2026-12-02 (module docstring's table); the test
# holds each to ±1.5 points, so a change in either solver, or a fix of the cut, shows here
@pytest.mark.parametrize(
    "mur,refine,measured",
    [
        (10.0, 1.0, 0.959),  # the designs' cut: 4.1 % low
        (100.0, 1.0, 0.943),  # the designs' cut: 5.7 % low
        (100.0, 2.0, 0.998),  # refined twice along each side of the section
    ],
)
def test_the_rods_rise_against_the_fe_solve(fe, mur, refine, measured):
    require_material_response()
    fe_rise = fe[mur].inductance - fe[1.0].inductance
    ratio = _render_rise(mur, refine) / fe_rise
    assert ratio == pytest.approx(measured, abs=0.015)
