"""AlNiCo past its knee: the demagnetising factor behind the warning, and when it is given."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from magnetics.reference import require_magpylib, require_material_response

from render.cli import main
from render.design.construction import read_construction
from render.impedance.eddy import prism_demagnetising_factor
from render.io.toml import read_toml
from render.magnetics.magnets import COERCIVITY, GRADES, KNEE_SHARE, working_field

ROOT = Path(__file__).resolve().parents[2]
POLES = ROOT / "models" / "slipway-steel-poles.toml"
BLADES = ROOT / "models" / "slipway-magnet-blades.toml"


def _construction(path, **changes):
    data, _ = read_toml(path)
    table = copy.deepcopy(data["construction"])
    table.update(changes)
    return read_construction(table, source="x.toml")


@pytest.mark.parametrize("half", [(1.0, 1.0, 1.0), (10.0, 32.0, 1.6), (32.0, 1.6, 10.0), (0.8, 28.0, 4.0), (2.5, 2.5, 20.0)])
def test_the_demagnetising_factor_is_magpylibs_volume_average(half):
    """Aharoni's closed form against magpylib's field of a uniformly polarised cuboid (J = 1 T along z),
    −µ0·H_z averaged over a 48³ grid of cell centres inside it (midpoint rule, whose error near the edges
    halves as the grid doubles: measured within 1.1 % at 48³, 3.4 % at 24³)."""
    require_magpylib()
    import magpylib as magpy

    a, b, c = half
    cube = magpy.magnet.Cuboid(dimension=(2 * a, 2 * b, 2 * c), polarization=(0, 0, 1))
    n = 48
    grid = [((np.arange(n) + 0.5) / n * 2 - 1) * s for s in half]
    points = np.stack(np.meshgrid(*grid, indexing="ij"), -1).reshape(-1, 3)
    average = -float((cube.getH(points)[:, 2] * magpy.mu_0).mean())
    assert prism_demagnetising_factor(2 * a, 2 * b, 2 * c) == pytest.approx(average, rel=0.015)


def test_the_three_factors_sum_to_one():
    # N_x + N_y + N_z = 1 for any ellipsoid and any prism's magnetometric factors (Aharoni 1998)
    a, b, c = 10.0, 32.0, 1.6
    assert prism_demagnetising_factor(b, c, a) + prism_demagnetising_factor(c, a, b) + prism_demagnetising_factor(a, b, c) == pytest.approx(1.0, abs=1e-12)
    assert prism_demagnetising_factor(1.0, 1.0, 1.0) == pytest.approx(1 / 3, abs=1e-12)


def test_an_alnico_bar_is_warned_and_ferrite_or_a_measured_remanence_is_not():
    bar = _construction(POLES, magnet_grade="alnico5")
    note = bar.knee_warning()
    assert note is not None and "magnet_grade=alnico5" in note and "bar magnet" in note and "\n" not in note
    # the demo's bar, 20 × 64 × 3.2 mm along x: H = N·B_r/(µ0(1 + N·χ)), N = 0.156, B_r 1.25 T, µ_rec 3.5
    h = working_field(bar.magnet, 0, 1.25, 3.5)
    assert h == pytest.approx(0.156 * 1.25 / (4e-7 * np.pi * (1 + 0.156 * 2.5)), rel=0.01)
    assert h > COERCIVITY["alnico5"]  # past H_c itself, not only KNEE_SHARE of it
    assert "112 kA/m" in note
    assert _construction(POLES, magnet_grade="alnico2").knee_warning() is not None
    assert _construction(BLADES, magnet_grade="alnico5").knee_warning() is not None
    assert _construction(POLES).knee_warning() is None  # ceramic8: straight through its working points
    assert _construction(POLES, magnet_grade="alnico5", remanence="0.5T").knee_warning() is None  # measured: taken as it is


def test_only_a_long_alnico_rod_along_its_axis_stays_on_the_line():
    # the field inside falls with the length along the magnetisation: a 5 × 5 mm rod 40 mm long is still past
    # KNEE_SHARE·H_c of Alnico 5, one 100 mm long is below it
    g = GRADES["alnico5"]
    assert working_field((5e-3, 5e-3, 0.1), 2, g.remanence, g.recoil_permeability) < KNEE_SHARE * COERCIVITY["alnico5"]
    assert working_field((5e-3, 5e-3, 0.04), 2, g.remanence, g.recoil_permeability) > KNEE_SHARE * COERCIVITY["alnico5"]


def test_render_sense_prints_and_records_the_warning(tmp_path):
    require_material_response()
    data = POLES.read_text().replace('magnet_grade = "ceramic8"', 'magnet_grade = "alnico5"')
    assert 'magnet_grade = "alnico5"' in data
    design = tmp_path / "alnico.toml"
    design.write_text(data)
    res = CliRunner().invoke(main, ["sense", str(design), "--json", str(tmp_path / "s.json")], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    warned = [line for line in res.stderr.splitlines() if line.startswith("warning:") and "alnico5" in line]
    assert len(warned) == 1
    rec = json.loads((tmp_path / "s.json").read_text())
    assert any("alnico5" in w for w in rec["warnings"])
