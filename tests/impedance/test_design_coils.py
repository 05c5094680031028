"""A coil's impedance from the design file: derived from its winding and core, fitted to a
measurement, or a typed ladder; the refusals; the measurement's hash in a render's record."""

from __future__ import annotations

import copy
import hashlib
import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from magnetics.reference import require_material_response
from scipy.constants import mu_0

from render.cli import main
from render.design import load_design, parse_design
from render.errors import InputError
from render.io.toml import read_toml

ROOT = Path(__file__).resolve().parents[2]
REF_DOC, _ = read_toml(ROOT / "models" / "studio-reference.toml")
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
GEOMETRY = {"turns": 5000, "length": "68mm", "width": "13mm", "window_length": "58mm", "window_width": "3mm", "height": "9mm"}


def _doc(**coil):
    doc = copy.deepcopy(REF_DOC)
    for t in ("coil_a", "coil_b"):
        for k in ("inductance", "resistance", "capacitance", "eddy_resistance"):
            doc[t].pop(k)
        doc[t].update(copy.deepcopy(coil))
    return doc


def test_air_core_coil_from_wire_and_geometry():
    # without [construction] the core is air: the inductance is the Neumann sum of the rectangular
    # winding (render.impedance.inductance, checked against Grover's and Rosa's formulas there), R_dc
    # is IEC 60028's annealed copper (0.017241 Ω·mm²/m at 20 °C) over turns × mean turn, and the
    # bare diameter of AWG 42 is ASTM B258's 0.005 in × 92^(−6/39)
    from render.impedance.inductance import winding_inductance
    from render.magnetics.coil import CoilGeometry

    d = parse_design(_doc(wire=42, geometry=GEOMETRY), source="<test>")
    c = d.coil_a
    bare = 0.005 * 0.0254 * 92 ** (-6 / 39)
    length = 5000 * (0.068 + 0.058 + 0.013 + 0.003)
    assert c.resistance == pytest.approx(0.017241e-6 * length / (math.pi * bare**2 / 4), rel=1e-12)
    assert c.inductance == pytest.approx(winding_inductance(CoilGeometry(5000, 0.068, 0.013, 0.058, 0.003, 0.009)), rel=1e-9)
    assert c.impedance_from.core == "air" and c.ladder.inductances == ()
    assert c.impedance_from.ladder_error_loss is None and c.impedance_from.ladder_error_loss_reason.startswith("no core loss")  # air has none
    assert 10e-12 < c.capacitance < 1e-9


@pytest.mark.parametrize(
    "coil, fragment",
    [
        ({"wire": 42, "geometry": GEOMETRY, "inductance": "1H"}, "inductance given as well as wire"),
        ({"wire": 42}, "wire needs [coil_a.geometry]"),
        ({"wire": 42, "geometry": GEOMETRY, "measured": "x.csv"}, "measured and wire both given"),
        ({"measured": "x.csv", "inductance": "2H"}, "inductance given as well as measured"),  # resistance and capacitance beside it are held in the fit
        ({"measured": "no-such.csv"}, "no such file"),
        ({"wire": 42, "wire_outer": "0.05mm", "geometry": GEOMETRY}, "not above the bare wire"),
        ({"resistance": "4k", "capacitance": "90p", "inductance": "1H", "ladder": {"series_inductance": "1H"}}, "inductance given as well as [coil_a.ladder]"),
        ({"resistance": "4k", "capacitance": "90p", "ladder": {"series_inductance": "1H", "inductances": ["1H"]}}, "1 inductances but 0 resistances"),
    ],
)
def test_giving_the_coil_twice_is_one_line_with_a_fix(coil, fragment):
    with pytest.raises(InputError) as exc:
        parse_design(_doc(**coil), source="x.toml")
    msg = str(exc.value)
    assert fragment in msg and "\n" not in msg and msg.startswith("x.toml: [coil_a")


def test_measured_coil_is_relative_to_the_design_and_hashed_in_every_render(tmp_path):
    folder = tmp_path / "designs"
    (folder / "coils").mkdir(parents=True)
    (folder / "coils" / "c.csv").write_bytes(CSV.read_bytes())
    text = (ROOT / "models" / "measured-blade.toml").read_text().replace("coils/harbour-blade-coil.synthetic.csv", "coils/c.csv")
    (folder / "m.toml").write_text(text)
    res = CliRunner().invoke(main, ["clips", str(folder / "m.toml"), "--seconds", "1", "--no-plots", "--no-hum", "--out", str(tmp_path / "out")])
    assert res.exit_code == 0, res.output
    rec = json.loads((tmp_path / "out" / "m.json").read_text())
    sha = hashlib.sha256(CSV.read_bytes()).hexdigest()
    assert rec["coil_measurements"] == [{"coil": "coil_a", "file": "coils/c.csv", "sha256": sha}, {"coil": "coil_b", "file": "coils/c.csv", "sha256": sha}]
    assert rec["design_values"]["coil_a"]["impedance_from"]["sha256"] == sha


def test_core_rise_of_a_small_cube_by_reciprocity():
    # Eq. (1) of render.impedance.construction_core against the closed form for a small, weakly
    # permeable cube at a coil's centre: its moment is V·χ/(1 + χ·N)·B/μ0 with the cube's
    # demagnetising factor N = 1/3 (by symmetry; Aharoni, J. Appl. Phys. 83, 1998), so
    # ΔL = V·χ/(1 + χ/3)·|B₁|²/μ0 in the coil's nearly uniform field at 1 A. The cube's
    # non-uniform magnetisation and the field's curvature over 2 mm are below 1e-3 here.
    require_material_response()
    from render.impedance.construction_core import cell_linkage
    from render.magnetics.coil import CoilGeometry, placed_coil
    from render.magnetics.steel import Excitation, Part, solve_many

    coil = placed_coil(CoilGeometry(1000, 0.068, 0.04, 0.058, 0.03, 0.009), centre=(0.0, 0.0, 0.0), nodes=(8, 8))
    chi, side = 0.05, 2e-3
    centre = np.array([0.0, 0.0, -0.0045])
    part = Part("cube", tuple(centre - side / 2), tuple(centre + side / 2), chi, cells=(4, 4, 4))
    (cells,) = solve_many([part], [Excitation(coil.field_per_amp, False)])
    got = cell_linkage(cells, coil.field_per_amp).sum()
    b1 = coil.field_per_amp(centre[None, :])[0]
    want = side**3 * chi / (1 + chi / 3) * float(b1 @ b1) / mu_0
    assert got == pytest.approx(want, rel=2e-3)


def test_derived_and_measured_designs_load_with_their_ladders():
    d = load_design(ROOT / "models" / "measured-blade.toml")
    assert d.coil_a.impedance_from.kind == "measured" and len(d.coil_a.ladder.inductances) >= 1
    assert d.coil_a.inductance == pytest.approx(d.coil_a.ladder.dc_inductance, rel=1e-12)


def test_core_rise_from_the_sensing_solve_equals_its_own_solve():
    # The rise reuses the construction's sensing solve (the cells' answer to each coil's field at
    # 1 A) instead of solving the same system again: the same parts and excitations, so the same
    # rises to rounding. A check of the reuse, not of the physics (that is the cube above).
    require_material_response()
    from render.design.construction import sensing
    from render.impedance.construction_core import part_rises

    d = load_design(ROOT / "models" / "slipway-steel-poles.toml")
    b = d.construction
    kw = dict(position_a=d.coil_a.position, position_b=d.coil_b.position)
    own = part_rises(b.construction, b.geometry_a, b.geometry_b, **kw)
    shared = part_rises(b.construction, b.geometry_a, b.geometry_b, **kw, solved=sensing(d).steel)
    for coil in ("coil_a", "coil_b"):
        assert [p.name for p in shared[coil]] == [p.name for p in own[coil]]
        for p, q in zip(shared[coil], own[coil]):
            assert p.rise == pytest.approx(q.rise, rel=1e-9, abs=1e-15), (coil, p.name)


def test_a_thin_conducting_bar_magnet_loads_with_its_loss_along_its_flux(tmp_path):
    # The shared bar lies flat under both coils' steel and carries a coil's flux along x. Along z a
    # 0.6 × 30 × 64 mm bar's demagnetising factor is near 1 (Aharoni, J. Appl. Phys. 83, 1998), which
    # asked a fill above 1 of it and made the design unloadable; along x it is small. Its DC share is
    # eq. (1)'s rise whatever the axis (fill·(μ_app(0) − 1)·L_air = ΔL), so only the loss's shape moves.
    require_material_response()
    from render.impedance.eddy import prism_demagnetising_factor

    text = (ROOT / "models" / "slipway-steel-blades.toml").read_text()
    for old, new in (('magnet_grade = "ceramic8"', 'magnet_grade = "alnico2"'), ('magnet_height = "3.2mm"', 'magnet_height = "0.6mm"'), ('magnet_width = "20mm"', 'magnet_width = "30mm"')):
        assert old in text
        text = text.replace(old, new, 1)
    (tmp_path / "thin-alnico.toml").write_text(text)
    design = load_design(tmp_path / "thin-alnico.toml")
    bar = [p for p in design.coil_a.impedance_from.parts if p.name == "bar magnet"]
    assert bar and 0 < bar[0].fill <= 1
    assert prism_demagnetising_factor(30e-3, 64e-3, 0.6e-3) > 0.9 > 0.1 > prism_demagnetising_factor(64e-3, 0.6e-3, 30e-3)
