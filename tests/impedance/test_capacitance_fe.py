"""Turn-to-turn and layer capacitance: Massarini & Kazimierczuk's eq. (1) against a 2-D electrostatic finite-element solve (GetDP, gmsh).

render's winding capacitance (:mod:`render.impedance.capacitance`) takes
C_tt between two touching enamelled wires from Massarini & Kazimierczuk's
closed form (IEEE Trans. Power Electron. 12(4), 671–676, 1997, eq. (1) there
as in the module), and two adjacent orderly layers as C_ll = 2·n_t·C_tt: each
turn lies in the groove of two turns below. Eq. (1) is an approximation: it
splits each field line at θ* into an insulation-only and an air-only path
and stops at the next neighbour, π/6 from the line of centres. This test
measures its error against the field itself.

The reference: a plane electrostatic solve of the cross-section
(:mod:`impedance.electrostatic_reference`: nodal elements, C' = ε0∫ε_r|grad v|²
for 1 V between the conductors), first checked against the exact capacitance
of two parallel cylinders, C' = πε/arcosh(d/2a) for centres d apart and radius
a (the line-charge images' closed form, e.g. Smythe, *Static and Dynamic
Electricity*, 1968; from memory for the book, the formula computed here).
Then three sections of touching wires, ε_r = 3.7 (the module's enamel):

* pair: two wires alone, the case eq. (1) describes;
* groove: one wire in the groove of two touching wires (orthocyclic packing),
  against 2·C_tt;
* rows: an endless row of wires in the grooves of another (the periodic
  cell), per turn against 2·C_tt: the case of the module's layer rule.

The FE model's own convergence (measured 2026-12-04 by
tests/bench/bench_capacitance_fe.py; C'/ε0 for the heavy-build AWG 42 wire):

| model | pair | groove | rows | nodes (pair/groove/rows) |
|---|---|---|---|---|
| this test's | 12.7701 | 22.2644 | 19.0505 | 1990/5107/2720 |
| elements 2× finer | 12.7659 | 22.2545 | 19.0419 | 5157/13490/6945 |
| elements 4× finer | 12.7652 | 22.2529 | 19.0407 | 16449/43638/22462 |
| gap 1e-3·r_o | 12.6711 | 22.0701 | 18.8596 | |
| gap 1e-5·r_o | 12.7799 | 22.2833 | 19.0691 | |
| outer arc 80·r_o, rows cut 8·r_o | 12.7718 | 22.2676 | 19.0506 | |

C' falls linearly with the gap (by 0.8 % per 1e-3·r_o for the pair, 1 % for
the rows), so the touching wires' limit lies 0.1 % above the test's gap; the
mesh reads 0.05 % high.

So the test's model (elements of a third of the enamel's thickness near the
wires, a gap of 1e-4·r_o at the contact, the outer arc at 40·r_o, the rows
cut 4·r_o away) reads within 0.15 % of its limits, and each solve takes
under a second.

Against eq. (1) (measured 2026-12-04, ε_r = 3.7; C' in pF/m):

| bare mm | outer mm | r_o/r_c | eq. (1) | FE pair | eq. (1)/FE | FE groove | 2·eq. (1)/FE | FE rows, per turn | 2·eq. (1)/FE |
|---|---|---|---|---|---|---|---|---|---|
| 0.0633 | 0.067 | 1.058 | 169.96 | 160.24 | 1.061 | 290.38 | 1.171 | 260.87 | 1.303 |
| 0.0633 | 0.071 | 1.121 | 109.17 | 113.07 | 0.965 | 197.13 | 1.108 | 168.68 | 1.294 |
| 0.0633 | 0.080 | 1.263 | 66.12 | 79.80 | 0.829 | 132.43 | 0.999 | 105.78 | 1.250 |

So for two wires alone eq. (1) reads within 17 % of the field (its cut at
π/6 drops the far paths, which the split's overestimate near the contact
about makes up for the heavy build). Packed, the neighbours take those far
paths away, and 2·C_tt overstates a wire in a groove by up to 17 % and a
row against a row, the layer rule's own case, by 25–30 %. The test holds
the measured ratios to ±0.02, so a change of the formula, or of the model,
shows here.
"""

from __future__ import annotations

import math

import pytest
from impedance.electrostatic_reference import groove, pair, rows
from scipy.constants import epsilon_0

from render.circuit.winding import awg_diameter
from render.impedance.capacitance import layered_winding_capacitance, turn_to_turn_capacitance

EPS = 3.7  # render.impedance.capacitance.ENAMEL_PERMITTIVITY
BARE = awg_diameter(42)  # ASTM B258
# (bare, outer) diameters, m: a thin build (invented), AWG 42 heavy build (0.071 mm, from memory), a thick build (invented)
WIRES = ((BARE, 0.067e-3), (BARE, 0.071e-3), (BARE, 0.080e-3))


def mk_per_metre(bare: float, outer: float) -> float:
    """Eq. (1) per metre of turn (F/m)."""
    return turn_to_turn_capacitance(turn_length=1.0, bare_diameter=bare, outer_diameter=outer, permittivity=EPS)


@pytest.mark.parametrize("relative", [1.0, EPS])
def test_the_fe_model_against_two_parallel_cylinders(relative):
    # bare cylinders of radius 0.8 (the "enamel" given the air's permittivity), centres 2.05 apart:
    # C' = πε0ε_r/arcosh(d/2a), the image line charges' closed form. The outer arc at 40 radii
    # carries no flux, which lowers C' by about 0.1 %, and the mesh's error raises it: measured +0.05 %
    # for both permittivities (2026-12-04); bound 0.3 %.
    fe = pair(bare_diameter=0.8, outer_diameter=1.0, permittivity=relative, air=relative, gap=0.05)
    exact = math.pi * epsilon_0 * relative / math.acosh(2.05 / (2 * 0.8))
    assert fe.capacitance == pytest.approx(exact, rel=3e-3)


@pytest.fixture(scope="module")
def sections():
    out = {}
    for bare, outer in WIRES:
        kw = {"bare_diameter": bare, "outer_diameter": outer, "permittivity": EPS}
        out[outer] = (pair(**kw).capacitance, groove(**kw).capacitance, rows(**kw).capacitance)
    return out


def test_the_contact_gap_is_closed_enough():
    # the touching enamel is modelled with a gap of 1e-4·r_o; ten times smaller raises C' by 0.08 % (pair)
    # and 0.10 % (rows), measured 2026-12-04; bound 0.2 %
    kw = {"bare_diameter": WIRES[1][0], "outer_diameter": WIRES[1][1], "permittivity": EPS}
    assert pair(**kw, gap=1e-5).capacitance == pytest.approx(pair(**kw).capacitance, rel=2e-3)
    assert rows(**kw, gap=1e-5).capacitance == pytest.approx(rows(**kw).capacitance, rel=2e-3)


@pytest.mark.parametrize(
    "outer, pair_ratio, groove_ratio, rows_ratio",
    # measured (module docstring): eq. (1) over the FE pair, 2·eq. (1) over the FE groove and rows
    [(WIRES[0][1], 1.061, 1.171, 1.303), (WIRES[1][1], 0.965, 1.108, 1.294), (WIRES[2][1], 0.829, 0.999, 1.250)],
)
def test_massarini_kazimierczuk_against_the_fe_solve(sections, outer, pair_ratio, groove_ratio, rows_ratio):
    mk = mk_per_metre(BARE, outer)
    fe_pair, fe_groove, fe_rows = sections[outer]
    assert mk / fe_pair == pytest.approx(pair_ratio, abs=0.02)
    assert 2 * mk / fe_groove == pytest.approx(groove_ratio, abs=0.02)
    assert 2 * mk / fe_rows == pytest.approx(rows_ratio, abs=0.02)


def test_neighbours_shield_the_far_paths(sections):
    # the field's own finding, independent of eq. (1): a turn in a groove faces two turns but
    # holds less than two pairs' capacitance, and a turn between rows less again (measured: 1.66–1.81
    # and 1.33–1.63 pairs; the thicker the enamel, the more the far paths weigh)
    for fe_pair, fe_groove, fe_rows in sections.values():
        assert fe_rows < fe_groove < 2 * fe_pair


def test_the_readmes_winding_with_the_fe_layer_capacitance():
    # the README's worked winding (tests/impedance/test_capacitance.py: 5000 turns of AWG 42, outer
    # 1.12 × bare, 118.4 pF by eqs. (1)–(2)) with each layer pair's 2·C_tt replaced by the FE rows'
    # capacitance per turn: eq. (2) is linear in C_ll and the ratio is per metre, so the whole
    # estimate scales by FE/(2·eq. (1)). Measured 2026-12-04: 91.5 pF (the README's "91 pF")
    outer = 1.12 * BARE
    est = layered_winding_capacitance(turns=5000, height=0.009, window_length=0.058, window_width=0.003, bare_diameter=BARE, outer_diameter=outer)
    fe = rows(bare_diameter=BARE, outer_diameter=outer, permittivity=EPS).capacitance
    assert est.capacitance * fe / (2 * mk_per_metre(BARE, outer)) == pytest.approx(91.5e-12, abs=0.5e-12)
