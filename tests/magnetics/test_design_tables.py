"""[coil_x.geometry] and [[hum.source]] in design and rig files: what they load to, and one-line refusals.

Outside references: the sum of the turns' areas of a winding that fills the
ring between a rectangular window and outline evenly (elementary geometry:
the integral of (W_w + u·ΔW)(L_w + u·ΔL) over u from 0 to 1), worked by hand
below; the winding-to-geometry mapping keeps the mean turn (its definition:
width + window_width + length + window_length).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main
from render.design import load_design, load_rig
from render.errors import InputError

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
WOUND = ROOT / "models" / "bench-wound.toml"
BOBBIN = ROOT / "models" / "bobbins" / "studio-bobbin.toml"
GEOMETRY = '\n[coil_a.geometry]\nturns = 1200\nlength = "68mm"\nwidth = "13mm"\nwindow_length = "58mm"\nwindow_width = "3mm"\nheight = "9mm"\n'


def variant(tmp_path, base, old, new, name="v.toml"):
    text = base.read_text()
    assert old in text, old
    path = tmp_path / name
    path.write_text(text.replace(old, new, 1))
    return path


def with_geometry(tmp_path, table=GEOMETRY, base=REF, name="g.toml"):
    return variant(tmp_path, base, "[coil_b]", table.strip() + "\n\n[coil_b]", name)


def test_geometry_replaces_turns_area_and_keeps_the_entered_one(tmp_path):
    d = load_design(with_geometry(tmp_path))
    # by hand: 1200 × [3·58 + (3·10 + 58·10)/2 + 10·10/3] mm² = 1200 × 512.33 mm² = 0.6148 m²
    assert d.coil_a.turns_area == pytest.approx(0.6148, rel=1e-12)
    assert d.coil_a.entered_turns_area == 0.36 and d.coil_a.geometry.mean_turn == pytest.approx(0.142, rel=1e-12)
    assert d.coil_b.geometry is None and d.coil_b.turns_area == 0.36
    # turns_area may be left out when the geometry is there
    d2 = load_design(variant(tmp_path, with_geometry(tmp_path, name="g2.toml"), "turns_area = 0.36   # m²: 1200 turns × 3 cm², for hum\n", "", "g3.toml"))
    assert d2.coil_a.entered_turns_area is None and d2.coil_a.turns_area == d.coil_a.turns_area
    # the same as placing the geometry from a script
    assert load_design(REF).with_geometry(coil_a=d.coil_a.geometry).coil_a == d.coil_a


def test_a_winding_maps_onto_the_geometry_keeping_its_mean_turn(tmp_path):
    path = variant(tmp_path, WOUND, "[coil_b]", '[coil_a.geometry]\nwindow_width = "3mm"\n\n[coil_b]')
    d = load_design(path)
    g = d.coil_a.geometry
    assert g.turns == 1400 and g.height == pytest.approx(0.009) and g.mean_turn == pytest.approx(0.150, rel=1e-12)
    assert g.width == pytest.approx(0.003 + 2 * 0.003) and d.coil_a.inductance == load_design(WOUND).coil_a.inductance
    res = CliRunner().invoke(main, ["check", str(path)])
    assert "(from its winding)" in res.output and "mean turn 150 mm" in res.output


@pytest.mark.parametrize(
    "table, message",
    [
        ('[coil_a.geometry]\nturns = 1400\nwindow_width = "3mm"\n', "turns given here and in the coil's winding table"),
        ('[coil_a.geometry]\nwindow_width = "3mm"\nheight = "9mm"\n', "height given with a winding table"),
    ],
)
def test_geometry_with_a_winding_refusals_are_one_line(tmp_path, table, message):
    path = variant(tmp_path, WOUND, "[coil_b]", table + "\n[coil_b]")
    with pytest.raises(InputError) as e:
        load_design(path)
    assert message in str(e.value) and "\n" not in str(e.value) and "[coil_a.geometry]" in str(e.value)


@pytest.mark.parametrize(
    "old, new, message",
    [
        ('window_length = "58mm"', 'window_length = "70mm"', "window_length=70mm: must be smaller than length=68mm"),
        ('height = "9mm"', 'hieght = "9mm"', "unknown key 'hieght'; did you mean 'height'?"),
        ("turns = 1200", "turns = 0.5", "turns=0.5"),
    ],
)
def test_geometry_refusals_are_one_line(tmp_path, old, new, message):
    path = with_geometry(tmp_path, GEOMETRY.replace(old, new))
    res = CliRunner().invoke(main, ["check", str(path)])
    assert res.exit_code == 1 and message in res.stderr
    assert res.stderr.count("\n") == 1 and res.stderr.startswith("Error: ")


SOURCE = '[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["0.5m", "0m", "0m"]\n'


@pytest.mark.parametrize(
    "text, message",
    [
        ('[hum]\nfield = "1uT"\n' + SOURCE, "field='1uT' given as well as [[hum.source]]"),
        ("[hum]\n" + SOURCE.replace('"dipole"', '"loop"'), 'kind=\'loop\': expected "dipole" or "uniform"'),
        ("[hum]\n" + SOURCE.replace('at = ["0.5m", "0m", "0m"]\n', ""), "missing required key 'at'"),
        ("[hum]\n" + SOURCE.replace('"0m"]', '"0m", "1m"]'), "expected three values [x, y, z]"),
        ("[hum]\nharmonics = [1.0, 0.3]\n" + SOURCE + "harmonics = [1.0]\n", "harmonics: 1 values, but the [hum] profile has 2"),
        ("[hum]\n" + SOURCE + "strength = 2\n", "unknown key 'strength' for a dipole source"),
        ('[hum]\n[hum.sources]\nkind = "dipole"\n', "unknown key 'sources'; write each source as its own [[hum.source]] table"),
        ("[hum]\n" + SOURCE.replace("moment = 0.05", "moment = -1"), "moment=-1"),
    ],
)
def test_source_refusals_are_one_line(tmp_path, text, message):
    path = tmp_path / "rig.toml"
    path.write_text(text)
    with pytest.raises(InputError) as e:
        load_rig(path)
    assert message in str(e.value) and "\n" not in str(e.value) and str(path) in str(e.value)
    res = CliRunner().invoke(main, ["hum", str(REF), "--rig", str(path)])
    assert res.exit_code == 1 and res.stderr.count("\n") == 1 and message in res.stderr


def test_a_dipole_inside_a_winding_is_refused_in_one_line(tmp_path):
    # coil_a's centre sits at x = 38 mm − 47 mm = −9 mm; its winding fills z from −9 mm to 0
    path = tmp_path / "rig.toml"
    path.write_text('[hum]\n[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["-9mm", "30mm", "-4mm"]\n')
    res = CliRunner().invoke(main, ["hum", str(BOBBIN), "--rig", str(path)])
    assert res.exit_code == 1 and "lies within coil_a's winding" in res.stderr and res.stderr.count("\n") == 1


def test_sources_in_a_designs_own_hum_table(tmp_path):
    path = variant(tmp_path, BOBBIN, "[supply]", "[hum]\n" + SOURCE + "\n[supply]")
    d = load_design(path)
    assert d.hum.sources[0].at == (0.5, 0.0, 0.0) and d.hum.sources[0].axis == (0.0, 0.0, 1.0)
    res = CliRunner().invoke(main, ["hum", str(path)])
    assert res.exit_code == 0 and "1 hum source" in res.output and "19.8 dB" in res.output
    from render.design import design_to_dict

    rec = design_to_dict(d)
    assert rec["hum"]["sources"][0]["kind"] == "dipole" and rec["coil_a"]["geometry"]["turns"] == 1200
