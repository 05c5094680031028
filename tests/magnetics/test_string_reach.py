"""Outer strings beyond the pole pieces' ends across the strings: a plausibility warning, not a refusal.

The reference is the layout's arithmetic from the design's own values: n strings at ``string_spacing``
centred on the pickup's middle sit at ±(n − 1)/2 · spacing (the construction's own rule, README "The
[construction] table"); a blade reaches half its length each side of the middle, a row of screws its
outer screw's axis, (poles − 1)/2 · pole_spacing, plus half a diameter.
"""

from __future__ import annotations

import copy
from pathlib import Path

import pytest
from click.testing import CliRunner
from magnetics.reference import require_material_response

from render.analysis.sense import construction_warnings, sense_record
from render.cli import main
from render.design import load_design
from render.design.construction import read_construction
from render.io.toml import read_toml

ROOT = Path(__file__).resolve().parents[2]
DEMOS = ("slipway-steel-blades", "slipway-steel-poles", "slipway-magnet-blades")
BEYOND = "beyond the pole pieces' ends"


def _construction(name, **changes):
    data, _ = read_toml(ROOT / "models" / f"{name}.toml")
    table = copy.deepcopy(data["construction"])
    table.update(changes)
    return read_construction(table, source="x.toml")


def _wide_blades(tmp_path) -> Path:
    text = (ROOT / "models" / "slipway-steel-blades.toml").read_text(encoding="utf-8")
    assert text.count('string_spacing = "10.4mm"') == 1
    path = tmp_path / "wide.toml"
    path.write_text(text.replace('string_spacing = "10.4mm"', 'string_spacing = "14mm"'), encoding="utf-8")
    return path


def test_blades_with_the_strings_spread_to_14_mm_warn(tmp_path):
    # six strings 14 mm apart sit at ±2.5 × 14 = ±35 mm; the 56 mm blades end at ±28 mm: strings 1 and 6 lie
    # 7 mm beyond. The fixes: string_spacing at most 2 × 28 / 5 = 11.2 mm, or blades 70 mm long (the
    # windows are 58 mm long, so the coils too)
    require_material_response()
    path = _wide_blades(tmp_path)
    lines = [w for w in construction_warnings(load_design(path)) if BEYOND in w]
    assert lines == [
        "[construction] strings 1 and 6 lie 7 mm beyond the pole pieces' ends across the strings (the steel blades reach 28 mm each side of the middle,"
        " from steel_length; string_spacing 14 mm puts the outer strings at 35 mm): they are sensed only by the pole pieces' fringe field;"
        " give string_spacing at most 11.2 mm, or steel_length at least 70 mm, in a window at least that long (window_length 58 mm)"
    ]
    for command in ("check", "sense"):
        res = CliRunner().invoke(main, [command, str(path)])
        assert res.exit_code == 0 and res.output.count(BEYOND) == 1, res.output
    # what the line is about (the README's figures, from the model, measured): the outer strings' balance falls
    # from −14.9 dB (string 1) and 0.0 dB (string 6) at 10.4 mm to −42.9 and −23.1 dB
    for design, expected in ((path, {1: -42.9, 6: -23.1}), (ROOT / "models" / "slipway-steel-blades.toml", {1: -14.9, 6: 0.0})):
        rows = {r["string"]: r["balance_db"] for r in sense_record(load_design(design))["coils"]["coil_a"]}
        assert {k: round(rows[k], 1) for k in expected} == expected


def test_the_demos_do_not_warn():
    # 10.4 mm apart the outer strings sit at ±26 mm: inside the 56 mm blades (±28 mm), the magnet blades
    # (56 mm: ±28 mm) and the outer screws' edges (2.5 × 10.4 + 4.2 / 2 = 28.1 mm)
    require_material_response()
    for name in DEMOS:
        assert not [w for w in construction_warnings(load_design(ROOT / "models" / f"{name}.toml")) if BEYOND in w], name


@pytest.mark.parametrize(
    "name, changes, expected",
    [
        # screws 8 mm apart: the outer screw's edge at 2.5 × 8 + 2.1 = 22.1 mm, the strings at 26 mm (3.9 mm beyond);
        # string_spacing at most 2 × 22.1 / 5 = 8.84 mm, or pole_spacing at least 2 × (26 − 2.1) / 5 = 9.56 mm
        (
            "slipway-steel-poles",
            {"pole_spacing": "8mm"},
            "strings 1 and 6 lie 3.9 mm beyond the pole pieces' ends across the strings (the outer screws' edges lie 22.1 mm each side of the middle,"
            " from poles, pole_spacing and steel_width; string_spacing 10.4 mm puts the outer strings at 26 mm): they are sensed only by the pole"
            " pieces' fringe field; give string_spacing at most 8.84 mm, or pole_spacing at least 9.56 mm",
        ),
        # 28 mm magnet blades end at ±14 mm: strings 1 and 6 (at ±26 mm) lie 12 mm beyond, 2 and 5 (±15.6 mm) 1.6 mm
        (
            "slipway-magnet-blades",
            {"magnet_length": "28mm"},
            "strings 1, 2, 5 and 6 lie up to 12 mm beyond the pole pieces' ends across the strings (the magnet blades reach 14 mm each side of the"
            " middle, from magnet_length; string_spacing 10.4 mm puts the outer strings at 26 mm): they are sensed only by the pole pieces'"
            " fringe field; give string_spacing at most 5.6 mm, or magnet_length at least 52 mm",
        ),
    ],
    ids=["screws-8mm-apart", "magnet-blades-28mm"],
)
def test_each_kind_measures_its_own_ends(name, changes, expected):
    assert _construction(name, **changes).reach_warning() == f"[construction] {expected}"


def test_a_string_over_the_end_itself_is_not_beyond_it():
    # blades exactly as long as the strings' spread (5 × 10.4 = 52 mm): the outer strings over the blades' ends
    assert _construction("slipway-steel-blades", steel_length="52mm").reach_warning() is None
    assert _construction("slipway-steel-blades", steel_length="51.8mm").reach_warning() is not None
