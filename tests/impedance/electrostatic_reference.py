"""GetDP and gmsh as the finite-element reference for the capacitance between enamelled round wires.

A plane (2-D) electrostatic model of a winding's cross-section, written here
as a gmsh ``.geo`` and a GetDP ``.pro`` file in a temporary folder and run
with Debian's command-line programs (packages ``gmsh`` and ``getdp``). Each
wire is a bare conductor of radius r_c (not meshed: its boundary is held at
a fixed potential) in an enamel annulus r_c < r < r_o of relative
permittivity ε_r, in air.

The unknown is the scalar potential v in nodal (first-order) elements, the
weak form ∫ ε_r·grad v·grad v' dA = 0 with v = 1 V on one conductor and 0 on
the other (GetDP reference manual, Dular & Geuzaine, getdp.info: ``Form0``,
``BF_Node``). The capacitance per unit length is the field energy's,
C' = 2W/V² = ε0·∫ ε_r·|grad v|² dA over the whole section. A plane section's
C' depends on its shape alone, not its size, so the model is drawn in units
of r_o. A Dirichlet solve's energy bounds C' from above and the first-order
error falls as the mesh's element size squared.

Three sections, each cut along its mirror lines (a mirror line crossing the
field is a natural, zero-flux boundary and costs nothing):

* ``pair``: two wires side by side, the plane between them at 0 V (its
  antisymmetry line) and the line of centres a mirror; an outer arc at
  ``far``·r_o, zero-flux.
* ``groove``: one wire at 1 V in the groove of two touching wires at 0 V
  below it (orthocyclic packing), the vertical through its centre a mirror;
  the outer arc zero-flux, so all of its charge ends on the two.
* ``rows``: an endless row of wires at 1 V lying in the grooves of an endless
  row at 0 V: the periodic cell between the vertical through a top wire's
  centre and the one through the next bottom wire's centre (both mirrors),
  cut ``depth``·r_o above and below the rows where the field has died away
  (it falls as exp(−π·y/r_o) beyond a row of equipotential wires).

Touching enamel surfaces meet at a point, which a mesh cannot follow; the
model leaves a gap of ``gap``·r_o there (and between the wires of one row,
which are at one potential).

Only the test suite uses this module.
"""

from __future__ import annotations

import math
import tempfile
from dataclasses import dataclass
from pathlib import Path

from magnetics.getdp_reference import GETDP, GMSH, node_count, require_getdp_gmsh, run_tool
from scipy.constants import epsilon_0


@dataclass(frozen=True)
class Section:
    """One solve: the capacitance per unit length between the conductors at 1 V and 0 V (F/m)."""

    capacitance: float
    nodes: int


PRO = """Group {{
  Air = Region[1]; Enamel = Region[2]; Domain = Region[{{Air, Enamel}}];
  High = Region[10]; Low = Region[11];
}}
Function {{ epsr[Air] = {air!r}; epsr[Enamel] = {enamel!r}; }}
Constraint {{ {{ Name v; Case {{ {{ Region High; Value 1.0; }} {{ Region Low; Value 0.0; }} }} }} }}
Jacobian {{ {{ Name Vol; Case {{ {{ Region All; Jacobian Vol; }} }} }} }}
Integration {{ {{ Name Int; Case {{ {{ Type Gauss; Case {{ {{ GeoElement Triangle; NumberOfPoints 4; }} }} }} }} }} }}
FunctionSpace {{
  {{ Name H1; Type Form0;
    BasisFunction {{ {{ Name sn; NameOfCoef vn; Function BF_Node; Support Domain; Entity NodesOf[All]; }} }}
    Constraint {{ {{ NameOfCoef vn; EntityType NodesOf; NameOfConstraint v; }} }} }}
}}
Formulation {{
  {{ Name ES; Type FemEquation; Quantity {{ {{ Name v; Type Local; NameOfSpace H1; }} }}
    Equation {{ Integral {{ [ epsr[] * Dof{{d v}}, {{d v}} ]; In Domain; Jacobian Vol; Integration Int; }} }} }}
}}
Resolution {{ {{ Name ES; System {{ {{ Name A; NameOfFormulation ES; }} }} Operation {{ Generate[A]; Solve[A]; PostOperation[out]; }} }} }}
PostProcessing {{
  {{ Name ES; NameOfFormulation ES; Quantity {{
      {{ Name energy; Value {{ Integral {{ [ epsr[] * SquNorm[{{d v}}] ]; In Domain; Jacobian Vol; Integration Int; }} }} }}
  }} }}
}}
PostOperation {{ {{ Name out; NameOfPostProcessing ES; Operation {{ Print[ energy[Domain], OnGlobal, Format Table, File > "energy.txt" ]; }} }} }}
"""


class _Geo:
    """A gmsh .geo in the built-in kernel, point by point (sizes come from the background field)."""

    def __init__(self) -> None:
        self.lines: list[str] = []
        self._points = 0
        self._curves = 0

    def point(self, x: float, y: float) -> int:
        self._points += 1
        self.lines.append(f"Point({self._points}) = {{{x!r}, {y!r}, 0}};")
        return self._points

    def line(self, a: int, b: int) -> int:
        self._curves += 1
        self.lines.append(f"Line({self._curves}) = {{{a}, {b}}};")
        return self._curves

    def arc(self, a: int, centre: int, b: int) -> int:
        self._curves += 1
        self.lines.append(f"Circle({self._curves}) = {{{a}, {centre}, {b}}};")
        return self._curves

    def half_wire(self, y: float, rho: float) -> dict:
        """The right half of a wire centred on (0, y), cut by the line x = 0: its points on the line and its arcs."""
        c, o1, k1, k2, o2 = (self.point(0.0, y + dy) for dy in (0.0, -1.0, -rho, rho, 1.0))
        om, km = self.point(1.0, y), self.point(rho, y)
        outer, bare = (self.arc(o1, c, om), self.arc(om, c, o2)), (self.arc(k1, c, km), self.arc(km, c, k2))
        enamel = (self.line(o1, k1), *bare, self.line(k2, o2), -outer[1], -outer[0])
        return {"o1": o1, "o2": o2, "outer": outer, "bare": bare, "enamel": ", ".join(map(str, enamel))}

    def sizes(self, contact: int, wires, *, wire: float, fine: float, coarse: float, reach: float) -> None:
        """Elements of size ``wire`` within 0.2 of the enamel's surface, ``fine`` at the contact, growing to ``coarse``."""
        curves = ", ".join(map(str, wires))
        self.lines += [
            f"Field[1] = Distance; Field[1].PointsList = {{{contact}}};",
            f"Field[2] = Threshold; Field[2].InField = 1; Field[2].SizeMin = {fine!r}; Field[2].SizeMax = {coarse!r}; Field[2].DistMin = {fine!r}; Field[2].DistMax = {4 * coarse!r};",
            f"Field[3] = Distance; Field[3].CurvesList = {{{curves}}}; Field[3].NumPointsPerCurve = 200;",
            f"Field[4] = Threshold; Field[4].InField = 3; Field[4].SizeMin = {wire!r}; Field[4].SizeMax = {coarse!r}; Field[4].DistMin = 0.2; Field[4].DistMax = {reach!r};",
            "Field[5] = Min; Field[5].FieldsList = {2, 4}; Background Field = 5;",
            "Mesh.MeshSizeExtendFromBoundary = 0; Mesh.MeshSizeFromPoints = 0; Mesh.MeshSizeFromCurvature = 0;",
        ]

    def contact(self, centre_a, centre_b, gap: float) -> int:
        """A mesh point in the air, midway across the gap between two wires' enamel."""
        (xa, ya), (xb, yb) = centre_a, centre_b
        d = math.hypot(xb - xa, yb - ya)
        s = (1.0 + gap / 2) / d
        p = self.point(xa + s * (xb - xa), ya + s * (yb - ya))
        self.lines.append(f"Point{{{p}}} In Surface{{1}};")
        return p

    def text(self) -> str:
        return "\n".join(self.lines) + "\n"


def _groups(g: _Geo, high, low) -> None:
    g.lines += [
        "Physical Surface(1) = {1};  // air",
        "Physical Surface(2) = {2, 3};  // enamel",
        f"Physical Curve(10) = {{{', '.join(map(str, high))}}};  // at 1 V",
        f"Physical Curve(11) = {{{', '.join(map(str, low))}}};  // at 0 V",
    ]


def _pair_geo(rho: float, gap: float, far: float, wire: float) -> str:
    # the wire at 1 V centred on (c, 0), the plane x = 0 at 0 V; the quarter y ≥ 0 (the x axis a mirror)
    g = _Geo()
    c = 1.0 + gap / 2
    origin, top, right, centre = g.point(0.0, 0.0), g.point(0.0, far), g.point(far, 0.0), g.point(c, 0.0)
    e1, e2, e3, e4 = (g.point(c + dx, 0.0) for dx in (-1.0, -rho, rho, 1.0))
    et, kt = g.point(c, 1.0), g.point(c, rho)
    axis_air, axis_en1, axis_en2, axis_far = g.line(origin, e1), g.line(e1, e2), g.line(e3, e4), g.line(e4, right)
    outer_arc, plane = g.arc(right, origin, top), g.line(top, origin)
    o1, o2, k1, k2 = g.arc(e4, centre, et), g.arc(et, centre, e1), g.arc(e3, centre, kt), g.arc(kt, centre, e2)
    g.lines += [
        f"Curve Loop(1) = {{{axis_air}, {-o2}, {-o1}, {axis_far}, {outer_arc}, {plane}}}; Plane Surface(1) = {{1}};",
        f"Curve Loop(2) = {{{axis_en1}, {-k2}, {-k1}, {axis_en2}, {o1}, {o2}}}; Plane Surface(2) = {{2}};",
        "Physical Surface(1) = {1};  // air",
        "Physical Surface(2) = {2};  // enamel",
        f"Physical Curve(10) = {{{k1}, {k2}}};  // at 1 V",
        f"Physical Curve(11) = {{{plane}}};  // at 0 V",
    ]
    g.sizes(e1, (o1, o2), wire=wire, fine=gap / 2, coarse=far / 10, reach=far / 2)
    return g.text()


def _packed(rho: float, gap: float) -> tuple[_Geo, float, float, dict]:
    """Orthocyclic packing, ``gap`` at each contact: a lower wire centred on (x, 0), x = 1 + gap/2 (its mirror
    image in x = 0 is the wire beside it), an upper wire centred on (0, a), 2 + gap from it; the upper wire's right half drawn."""
    g = _Geo()
    x = 1.0 + gap / 2
    a = math.sqrt((2.0 + gap) ** 2 - x * x)
    return g, x, a, g.half_wire(a, rho)


def _groove_geo(rho: float, gap: float, far: float, wire: float) -> str:
    # the wire at 1 V centred on (0, a) in the groove of wires at 0 V centred on (±b, 0); the half x ≥ 0
    g, b, a, top = _packed(rho, gap)
    cb = g.point(b, 0.0)
    quarter = [(math.cos(k * math.pi / 2), math.sin(k * math.pi / 2)) for k in range(4)]
    outer_pts = [g.point(b + x, y) for x, y in quarter]
    bare_pts = [g.point(b + rho * x, rho * y) for x, y in quarter]
    outer = [g.arc(outer_pts[k], cb, outer_pts[(k + 1) % 4]) for k in range(4)]
    bare = [g.arc(bare_pts[k], cb, bare_pts[(k + 1) % 4]) for k in range(4)]
    origin, bottom, right, up = g.point(0.0, 0.0), g.point(0.0, -far), g.point(far, 0.0), g.point(0.0, far)
    l_low, l_up = g.line(bottom, top["o1"]), g.line(top["o2"], up)
    f1, f2 = g.arc(up, origin, right), g.arc(right, origin, bottom)
    (o1, o2), (k1, k2) = top["outer"], top["bare"]
    g.lines += [
        f"Curve Loop(1) = {{{l_low}, {o1}, {o2}, {l_up}, {f1}, {f2}}};",
        f"Curve Loop(2) = {{{', '.join(map(str, outer))}}}; Curve Loop(3) = {{{', '.join(map(str, bare))}}};",
        f"Curve Loop(4) = {{{top['enamel']}}};",
        "Plane Surface(1) = {1, 2}; Plane Surface(2) = {2, 3}; Plane Surface(3) = {4};",
    ]
    _groups(g, (k1, k2), bare)
    g.sizes(g.contact((0.0, a), (b, 0.0), gap), (o1, o2, *outer), wire=wire, fine=gap / 2, coarse=far / 10, reach=far / 2)
    return g.text()


def _rows_geo(rho: float, gap: float, depth: float, wire: float) -> str:
    # the cell 0 ≤ x ≤ h: a top wire at 1 V centred on (0, a), a bottom wire at 0 V centred on (h, 0)
    g, h, a, top = _packed(rho, gap)
    cb = g.point(h, 0.0)
    b_o1, b_om, b_o2 = g.point(h, 1.0), g.point(h - 1.0, 0.0), g.point(h, -1.0)
    b_k1, b_km, b_k2 = g.point(h, rho), g.point(h - rho, 0.0), g.point(h, -rho)
    bo1, bo2, bk1, bk2 = g.arc(b_o1, cb, b_om), g.arc(b_om, cb, b_o2), g.arc(b_k1, cb, b_km), g.arc(b_km, cb, b_k2)
    c1, c2, c3, c4 = g.point(0.0, -depth), g.point(h, -depth), g.point(h, a + depth), g.point(0.0, a + depth)
    bottom, r_low, r_up, lid = g.line(c1, c2), g.line(c2, b_o2), g.line(b_o1, c3), g.line(c3, c4)
    l_up, l_low = g.line(c4, top["o2"]), g.line(top["o1"], c1)
    b_en1, b_en2 = g.line(b_o2, b_k2), g.line(b_k1, b_o1)
    (o1, o2), (k1, k2) = top["outer"], top["bare"]
    g.lines += [
        f"Curve Loop(1) = {{{bottom}, {r_low}, {-bo2}, {-bo1}, {r_up}, {lid}, {l_up}, {-o2}, {-o1}, {l_low}}};",
        f"Curve Loop(2) = {{{top['enamel']}}};",
        f"Curve Loop(3) = {{{b_en1}, {-bk2}, {-bk1}, {b_en2}, {bo1}, {bo2}}};",
        "Plane Surface(1) = {1}; Plane Surface(2) = {2}; Plane Surface(3) = {3};",
    ]
    _groups(g, (k1, k2), (bk1, bk2))
    g.sizes(g.contact((0.0, a), (h, 0.0), gap), (o1, o2, bo1, bo2), wire=wire, fine=gap / 2, coarse=0.3, reach=2.0)
    return g.text()


def _energy(geo: str, *, enamel: float, air: float) -> tuple[float, int]:
    """∫ ε_r·|grad v|² dA over the section (dimensionless), and the mesh's node count."""
    require_getdp_gmsh()
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        (d / "wires.geo").write_text(geo)
        run_tool([GMSH, "-2", "-format", "msh22", "-v", "1", "wires.geo", "-o", "wires.msh"], d)
        (d / "wires.pro").write_text(PRO.format(enamel=float(enamel), air=float(air)))
        run_tool([GETDP, "wires.pro", "-msh", "wires.msh", "-solve", "ES", "-v", "1"], d)
        return float((d / "energy.txt").read_text().split()[-1]), node_count(d / "wires.msh")


def _shape(bare_diameter: float, outer_diameter: float, mesh: float) -> tuple[float, float]:
    """r_c/r_o, and the element size near the wires in units of r_o (``mesh`` enamel thicknesses)."""
    rho = bare_diameter / outer_diameter
    return rho, mesh * (1.0 - rho)


def pair(*, bare_diameter: float, outer_diameter: float, permittivity: float, air: float = 1.0, gap: float = 1e-4, far: float = 40.0, mesh: float = 1 / 3) -> Section:
    """Two wires side by side, ``gap``·r_o apart (F/m between them).

    The quarter solved holds one wire at 1 V against the plane between the
    two at 0 V. The pair at ±½ V has the potential v/2 on that side and its
    mirror image on the other, so its energy is ½ε0 × 4 quarters × ¼ of the
    quarter's integral, and C' = 2W/(1 V)² = ε0 × the quarter's integral.
    ``air``: the air's relative permittivity (1; other values check the model).
    """
    rho, wire = _shape(bare_diameter, outer_diameter, mesh)
    integral, nodes = _energy(_pair_geo(rho, gap, far, wire), enamel=permittivity, air=air)
    return Section(epsilon_0 * integral, nodes)


def groove(*, bare_diameter: float, outer_diameter: float, permittivity: float, gap: float = 1e-4, far: float = 40.0, mesh: float = 1 / 3) -> Section:
    """A wire in the groove of two touching wires below it (F/m between it and the two)."""
    rho, wire = _shape(bare_diameter, outer_diameter, mesh)
    integral, nodes = _energy(_groove_geo(rho, gap, far, wire), enamel=permittivity, air=1.0)
    return Section(2 * epsilon_0 * integral, nodes)  # the half solved, doubled: C' = ε0 ∫ over both halves


def rows(*, bare_diameter: float, outer_diameter: float, permittivity: float, gap: float = 1e-4, depth: float = 4.0, mesh: float = 1 / 3) -> Section:
    """Row against row, orthocyclic: per top-row turn (F/m between the rows, one turn's share)."""
    rho, wire = _shape(bare_diameter, outer_diameter, mesh)
    integral, nodes = _energy(_rows_geo(rho, gap, depth, wire), enamel=permittivity, air=1.0)
    return Section(2 * epsilon_0 * integral, nodes)  # one period (one turn) is two mirrored cells
