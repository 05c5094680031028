"""`render hum`'s table keeps its columns, and shows very large and very small hum with a prefix that shows it.

A formatting check, no physics: the printed figure must equal the JSON's figure (the same
report) in the unit printed, and every row's columns must line up with the header's.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
RIG = """
[hum]
mains = "50Hz"
harmonics = [1.0, 0.05, 0.3]

[[hum.source]]
kind = "dipole"
moment = {moment}
at = ["{x}", "0m", "0m"]
axis = [0, 0, 1]
"""
PREFIX = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "µ": 1e-6, "m": 1e-3, "": 1.0}


def _hum(tmp_path, moment: float, x: str):
    rig = tmp_path / "rig.toml"
    rig.write_text(RIG.format(moment=moment, x=x))
    js = tmp_path / "hum.json"
    res = CliRunner().invoke(main, ["hum", str(ROOT / "models" / "odd-pair.toml"), "--rig", str(rig), "--json", str(js)])
    assert res.exit_code == 0, res.output
    return res.output, json.loads(js.read_text())


def _volts(text: str) -> float:
    value, unit = re.fullmatch(r"\s*([-+0-9.e]+) ([fpnµm]?)V", text).groups()
    return float(value) * PREFIX[unit]


@pytest.mark.parametrize(("moment", "x", "unit"), [(500.0, "0.12m", "V"), (1e-9, "3m", "fV")])
def test_large_and_small_hum_keep_the_columns(tmp_path, moment, x, unit):
    out, rec = _hum(tmp_path, moment, x)
    lines = out.splitlines()
    head = next(i for i, line in enumerate(lines) if line.lstrip().startswith("harmonic"))
    rows = lines[head + 1 : head + 4]
    # every row ends its three voltage cells where the header's rows end theirs: same length
    assert len({len(r) for r in rows}) == 1, rows
    h1 = rec["harmonics"][0] if "harmonics" in rec else rec["designs"][0]["harmonics"][0]
    cell = re.split(r"\s{2,}", rows[0].strip())[3]  # harmonic, frequency, rejection, then the amp input
    assert cell.endswith(" " + unit)
    assert _volts(cell) == pytest.approx(h1["output_v"], rel=1e-3)
    total = re.search(r"total hum (.+?) rms", out).group(1)
    assert total.endswith(" " + unit) and _volts(total) > 0
    scale = next(line for line in lines if line.lstrip().startswith("hum  "))
    assert "e+" not in scale and "e-" not in scale  # the one-scale table's hum in a prefix, not an exponent
