"""Option values that cannot be read get the hint for that option, not another's.

The pluck strength is written in mm throughout (help, README, printed tables), so
a bare number most likely means mm (common practice, no source): it is refused
with the value it likely means.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

REF = Path(__file__).resolve().parents[2] / "models" / "studio-reference.toml"


def _error(args: list[str]) -> str:
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1, res.output
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), res.stderr
    return lines[0]


@pytest.mark.parametrize("command", [["clips", str(REF), "--no-plots"], ["bias", str(REF), "--no-clips"]], ids=["clips", "bias"])
@pytest.mark.parametrize(
    ("value", "fragment"),
    [
        ("abc", "cannot read it as a length; give the strongest pluck's displacement with its unit, like 2mm"),
        ("2", "needs its unit; did you mean 2mm? (bare, it would be 2 m = 2000 mm)"),
        ("0.5", "did you mean 0.5mm?"),
        ("0.002", "did you mean 2mm? (0.002 read as metres)"),
        ("80", "give it like 2mm (above 0, at most 50 mm)"),
        ("2mm,3mm", "like 2mm"),
        ("1e9mm", "cannot read it as a length; use an exponent or a prefix, not both; give"),
    ],
)
def test_strength_hints(tmp_path, command, value, fragment):
    line = _error([*command, "--out", str(tmp_path / "o"), "--strength", value])
    assert fragment in line and "comma-separated" not in line, line
    assert not (tmp_path / "o").exists()  # refused before any work


@pytest.mark.parametrize(
    ("args", "fragment"),
    [
        (["--ratios", "0.3,x"], "like 0.3,0.5,0.7"),
        (["--battery", "9,x"], "like 9,8,7"),
        (["--top", "10q", "--bottom", "100k"], "like 100k,220k"),
        (["--bottom", "1x", "--top", "100k"], "like 100k,220k"),
    ],
)
def test_bias_list_hints_match_the_option(args, fragment):
    assert fragment in _error(["bias", str(REF), "--no-clips", *args])
