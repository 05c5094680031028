"""The finite-element winding-capacitance check's figures (run by hand: ``python tests/bench/bench_capacitance_fe.py``; under a minute).

Prints the tables of ``tests/impedance/test_capacitance_fe.py``'s docstring:
the GetDP model's convergence for the heavy-build AWG 42 wire (mesh, the gap
left at the contact, the outer boundary's distance and the rows' cut depth),
then each wire's FE capacitances against Massarini & Kazimierczuk's eq. (1)
(:func:`render.impedance.capacitance.turn_to_turn_capacitance`). Needs gmsh
and GetDP (Debian packages). Not collected by pytest.
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from impedance.electrostatic_reference import groove, pair, rows  # noqa: E402
from impedance.test_capacitance_fe import EPS, WIRES, mk_per_metre  # noqa: E402
from scipy.constants import epsilon_0  # noqa: E402


def _row(label: str, **kw) -> None:
    t = time.perf_counter()
    p, g, r = (f(bare_diameter=WIRES[1][0], outer_diameter=WIRES[1][1], permittivity=EPS, **kw) for f in (pair, groove, rows))
    dt = time.perf_counter() - t
    print(f"{label:28s} {p.capacitance / epsilon_0:8.4f} {g.capacitance / epsilon_0:8.4f} {r.capacitance / epsilon_0:8.4f}   nodes {p.nodes}/{g.nodes}/{r.nodes}  {dt:.1f} s")


def main() -> None:
    print(f"heavy AWG 42 ({WIRES[1][0] * 1e3:.4f} / {WIRES[1][1] * 1e3:.3f} mm), ε_r = {EPS}: C'/ε0 for pair, groove, rows")
    _row("test's model")
    for mesh in (1 / 6, 1 / 12):
        _row(f"mesh {mesh:.3f} t", mesh=mesh)
    for gap in (1e-3, 1e-5):
        _row(f"gap {gap:g} r_o", gap=gap)
    t = time.perf_counter()
    far = [f(bare_diameter=WIRES[1][0], outer_diameter=WIRES[1][1], permittivity=EPS, far=80.0).capacitance / epsilon_0 for f in (pair, groove)]
    deep = rows(bare_diameter=WIRES[1][0], outer_diameter=WIRES[1][1], permittivity=EPS, depth=8.0).capacitance / epsilon_0
    print(f"{'far 80 r_o, depth 8 r_o':28s} {far[0]:8.4f} {far[1]:8.4f} {deep:8.4f}   {time.perf_counter() - t:.1f} s")
    print()
    print("bare mm  outer mm  r_o/r_c   M&K C_tt   FE pair   M&K/FE   FE groove  2·M&K/FE   FE rows   2·M&K/FE   (C' in pF/m)")
    for bare, outer in WIRES:
        mk = mk_per_metre(bare, outer)
        p, g, r = (f(bare_diameter=bare, outer_diameter=outer, permittivity=EPS).capacitance for f in (pair, groove, rows))
        print(
            f"{bare * 1e3:7.4f}  {outer * 1e3:7.4f}   {outer / bare:6.4f}   {mk * 1e12:8.2f}  {p * 1e12:8.2f}   {mk / p:6.3f}   {g * 1e12:8.2f}   {2 * mk / g:6.3f}    {r * 1e12:8.2f}   {2 * mk / r:6.3f}"
        )


if __name__ == "__main__":
    main()
