"""GetDP and gmsh as the finite-element reference for a saturating steel body in a uniform axial field.

An axisymmetric magnetostatic model, written as a gmsh ``.geo`` and a GetDP
``.pro`` file in a temporary folder and run with Debian's command-line
programs, as :mod:`magnetics.getdp_reference` does for a coil: a body of
revolution about z (a rod [0, r] × [−l/2, l/2], or a sphere of radius r)
in air, in the uniform applied field B0·ẑ.

The unknown is the reaction's vector potential, a = a_φ·φ̂ (GetDP's
``BF_PerpendicularEdge`` with the axisymmetric Jacobian ``VolAxiSqu``, and
the shell transformation ``VolAxiSquSphShell`` for the open boundary, a = 0
on the axis and at infinity: Dular, Geuzaine et al., the GetDP reference
manual, getdp.info; Henrotte et al., IEEE Trans. Magn. 35(3), 1999). The
total field is B = B0 + curl a, and with no currents ∫ H(B)·curl a' dV = 0
for every test function a'. Since ∫ ν0·B0·curl a' dV = 0 over all space
(B0 uniform, a' vanishing at infinity), this is

    ∫ ν0·curl a·curl a' dV (air) + ∫ (H(B) − ν0·B0)·curl a' dV (steel) = 0,

the reduced-field form, with H(B) = ν(|B|)·B in the steel.

The steel follows the Fröhlich–Kennelly relation M = Ms·H/(Hk + |H|)
(Bozorth, *Ferromagnetism*, 1951; Jiles, *Introduction to Magnetism and
Magnetic Materials*, 1998), Hk = Ms/χ. With b = |B|/µ0 = H + M, H ≥ 0 is
the positive root of H² + (Hk + Ms − b)·H − b·Hk = 0, so ν(B) = H/|B| in
closed form. Newton's method in GetDP's ``IterativeLoop`` takes the
Jacobian dH/dB = ν·I + (dH/d|B| − ν)·B⊗B/|B|² (the ``JacNL`` term carries
the second part), dH/d|B| = 1/(µ0·(1 + dM/dH)), dM/dH = Ms·Hk/(Hk + H)².

Read back: B_z at points on the axis, and the body's moment
m = ∫ M_z dV = ∫ (B_z/µ0 − H_z) dV.

Only the test suite uses this module.
"""

from __future__ import annotations

import tempfile
from dataclasses import dataclass
from pathlib import Path

from magnetics.getdp_reference import GETDP, node_count, require_getdp_gmsh, run_tool
from scipy.constants import mu_0

ROD_GEO = """// a rod [0, rc] x [-lc/2, lc/2] in air; (x, y) = (r, z)
rc = {rc!r}; lc = {lc!r}; Rint = {rint!r}; Rext = {rext!r}; s = {s!r}; se = {se!r}; sf = {sf!r};
Point(1) = {{0, -Rext, 0, sf}}; Point(2) = {{0, -Rint, 0, sf}};
Point(3) = {{0, -lc/2, 0, se}}; Point(4) = {{rc, -lc/2, 0, se}}; Point(5) = {{rc, lc/2, 0, se}}; Point(6) = {{0, lc/2, 0, se}};
Point(7) = {{0, Rint, 0, sf}}; Point(8) = {{0, Rext, 0, sf}};
Point(9) = {{Rint, 0, 0, sf}}; Point(10) = {{Rext, 0, 0, sf}}; Point(11) = {{0, 0, 0, s}}; Point(12) = {{rc, 0, 0, s}};
Line(1) = {{1, 2}}; Line(2) = {{2, 3}}; Line(3) = {{3, 4}}; Line(4) = {{4, 12}}; Line(14) = {{12, 5}}; Line(5) = {{5, 6}};
Line(6) = {{6, 11}}; Line(16) = {{11, 3}};
Line(7) = {{6, 7}}; Line(8) = {{7, 8}};
Circle(9) = {{8, 11, 10}}; Circle(10) = {{10, 11, 1}}; Circle(11) = {{7, 11, 9}}; Circle(12) = {{9, 11, 2}};
Curve Loop(1) = {{3, 4, 14, 5, 6, 16}}; Plane Surface(1) = {{1}};
Curve Loop(3) = {{2, 3, 4, 14, 5, 7, 11, 12}}; Plane Surface(3) = {{3}};
Curve Loop(4) = {{8, 9, 10, 1, -12, -11}}; Plane Surface(4) = {{4}};
Physical Surface(1) = {{1}};  // steel
Physical Surface(3) = {{3}};  // air
Physical Surface(4) = {{4}};  // shell to infinity
Physical Curve(10) = {{1, 2, 6, 16, 7, 8}};  // the axis
Physical Curve(11) = {{9, 10}};  // the shell's outer face
"""

SPHERE_GEO = """// a sphere of radius rc in air; (x, y) = (r, z)
rc = {rc!r}; Rint = {rint!r}; Rext = {rext!r}; s = {s!r}; sf = {sf!r};
Point(1) = {{0, -Rext, 0, sf}}; Point(2) = {{0, -Rint, 0, sf}}; Point(3) = {{0, -rc, 0, s}}; Point(4) = {{rc, 0, 0, s}};
Point(5) = {{0, rc, 0, s}}; Point(7) = {{0, Rint, 0, sf}}; Point(8) = {{0, Rext, 0, sf}};
Point(9) = {{Rint, 0, 0, sf}}; Point(10) = {{Rext, 0, 0, sf}}; Point(11) = {{0, 0, 0, s}};
Line(1) = {{1, 2}}; Line(2) = {{2, 3}}; Circle(3) = {{3, 11, 4}}; Circle(4) = {{4, 11, 5}}; Line(5) = {{5, 11}}; Line(6) = {{11, 3}};
Line(7) = {{5, 7}}; Line(8) = {{7, 8}};
Circle(9) = {{8, 11, 10}}; Circle(10) = {{10, 11, 1}}; Circle(11) = {{7, 11, 9}}; Circle(12) = {{9, 11, 2}};
Curve Loop(1) = {{3, 4, 5, 6}}; Plane Surface(1) = {{1}};
Curve Loop(3) = {{2, 3, 4, 7, 11, 12}}; Plane Surface(3) = {{3}};
Curve Loop(4) = {{8, 9, 10, 1, -12, -11}}; Plane Surface(4) = {{4}};
Physical Surface(1) = {{1}};
Physical Surface(3) = {{3}};
Physical Surface(4) = {{4}};
Physical Curve(10) = {{1, 2, 5, 6, 7, 8}};
Physical Curve(11) = {{9, 10}};
"""

PRO = """DefineConstant[ Rint = {rint!r}, Rext = {rext!r} ];
Group {{
  Steel = Region[1]; Air = Region[{{3, 4}}]; Shell = Region[4];
  Axis = Region[10]; Outer = Region[11];
  Domain = Region[{{1, 3, 4}}];
}}
Function {{
  mu0 = {mu0!r}; Ms = {ms!r}; Hk = {hk!r};
  b0[] = Vector[0, {b0!r}, 0];
  // |B|/mu0 -> H on the Frohlich-Kennelly curve: the positive root of H^2 + (Hk + Ms - b) H - b Hk = 0
  bn[] = Norm[$1] / mu0 + 1e-30;
  hn[] = (-(Hk + Ms - bn[$1]) + Sqrt[(Hk + Ms - bn[$1])^2 + 4 * bn[$1] * Hk]) / 2;
  nu[] = hn[$1] / (mu0 * bn[$1]);
  dhdb[] = 1 / (mu0 * (1 + Ms * Hk / (Hk + hn[$1])^2));
  dhdb_NL[] = (dhdb[$1] - nu[$1]) * SquDyadicProduct[$1] / (SquNorm[$1] + 1e-60);
}}
Jacobian {{
  {{ Name Vol; Case {{ {{ Region Shell; Jacobian VolAxiSquSphShell{{Rint, Rext}}; }} {{ Region All; Jacobian VolAxiSqu; }} }} }}
}}
Integration {{ {{ Name Int; Case {{ {{ Type Gauss; Case {{ {{ GeoElement Triangle; NumberOfPoints 4; }} {{ GeoElement Line; NumberOfPoints 3; }} }} }} }} }} }}
Constraint {{ {{ Name a; Case {{ {{ Region Axis; Value 0; }} {{ Region Outer; Value 0; }} }} }} }}
FunctionSpace {{
  {{ Name Hcurl_a; Type Form1P;
    BasisFunction {{ {{ Name se; NameOfCoef ae; Function BF_PerpendicularEdge; Support Domain; Entity NodesOf[All]; }} }}
    Constraint {{ {{ NameOfCoef ae; EntityType NodesOf; NameOfConstraint a; }} }} }}
}}
Formulation {{
  {{ Name MS; Type FemEquation; Quantity {{ {{ Name a; Type Local; NameOfSpace Hcurl_a; }} }}
    Equation {{
      Integral {{ [ 1 / mu0 * Dof{{d a}}, {{d a}} ]; In Air; Jacobian Vol; Integration Int; }}
      Integral {{ [ nu[{{d a}} + b0[]] * Dof{{d a}}, {{d a}} ]; In Steel; Jacobian Vol; Integration Int; }}
      Integral {{ JacNL[ dhdb_NL[{{d a}} + b0[]] * Dof{{d a}}, {{d a}} ]; In Steel; Jacobian Vol; Integration Int; }}
      Integral {{ [ (nu[{{d a}} + b0[]] - 1 / mu0) * b0[], {{d a}} ]; In Steel; Jacobian Vol; Integration Int; }}
    }} }}
}}
Resolution {{ {{ Name MS; System {{ {{ Name A; NameOfFormulation MS; }} }}
  Operation {{ InitSolution[A]; IterativeLoop[60, 1e-10, 1] {{ GenerateJac[A]; SolveJac[A]; }} PostOperation[out]; }} }} }}
PostProcessing {{
  {{ Name MS; NameOfFormulation MS; Quantity {{
      {{ Name bz; Value {{ Local {{ [ CompY[{{d a}} + b0[]] ]; In Domain; Jacobian Vol; }} }} }}
      {{ Name moment; Value {{ Integral {{ [ CompY[({{d a}} + b0[]) / mu0 - nu[{{d a}} + b0[]] * ({{d a}} + b0[])] ]; In Steel; Jacobian Vol; Integration Int; }} }} }}
      {{ Name volume; Value {{ Integral {{ [ 1 ]; In Steel; Jacobian Vol; Integration Int; }} }} }}
  }} }}
}}
PostOperation {{ {{ Name out; NameOfPostProcessing MS; Operation {{
  Print[ moment[Steel], OnGlobal, Format Table, File > "moment.txt" ];
  Print[ volume[Steel], OnGlobal, Format Table, File > "volume.txt" ];
  {points}
}} }} }}
"""


@dataclass(frozen=True)
class SaturatedBody:
    """One nonlinear solve: B_z (T) at the points asked, the body's moment (A·m²) and its volume as integrated (m³)."""

    bz: tuple
    moment: float
    volume: float
    nodes: int


def solve_body(
    *, shape: str, radius: float, length: float = 0.0, applied: float, susceptibility: float, saturation: float, mesh: float, end_mesh: float | None = None, far: float, points=()
) -> SaturatedBody:
    """The nonlinear magnetostatic solve of a steel rod (``shape`` "rod") or sphere ("sphere") in B0·ẑ.

    radius, length : m, the body's size (length: the rod's)
    applied : T, B0
    susceptibility : χ, the curve's initial slope; saturation : A/m, Ms
    mesh : m, element size in and near the body (``end_mesh`` at the rod's end faces); far : m, near the shell
    points : ((r, z), ...) m, where to read B_z
    """
    require_getdp_gmsh()
    size = max(radius, length / 2)
    rint, rext = 6.0 * size, 7.5 * size
    if shape == "rod":
        geo = ROD_GEO.format(rc=radius, lc=length, rint=rint, rext=rext, s=mesh, se=end_mesh or mesh, sf=far)
    else:
        geo = SPHERE_GEO.format(rc=radius, rint=rint, rext=rext, s=mesh, sf=far)
    prints = " ".join(f'Print[ bz, OnPoint {{{r!r}, {z!r}, 0}}, Format Table, File >> "bz.txt" ];' for r, z in points)
    pro = PRO.format(rint=rint, rext=rext, mu0=mu_0, ms=float(saturation), hk=float(saturation / susceptibility), b0=float(applied), points=prints)
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        (d / "body.geo").write_text(geo)
        from magnetics.getdp_reference import GMSH

        run_tool([GMSH, "-2", "-format", "msh22", "-v", "1", "body.geo", "-o", "body.msh"], d)
        nodes = node_count(d / "body.msh")
        (d / "body.pro").write_text(pro)
        run_tool([GETDP, "body.pro", "-msh", "body.msh", "-solve", "MS", "-v", "1"], d)
        moment = float((d / "moment.txt").read_text().split()[-1])
        volume = float((d / "volume.txt").read_text().split()[-1])
        bz = tuple(float(line.split()[-1]) for line in (d / "bz.txt").read_text().splitlines() if line.strip()) if points else ()
    return SaturatedBody(bz, moment, volume, nodes)
