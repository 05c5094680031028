"""A passive pickup named as a design: the refusal offers only what the command has."""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
PASSIVE = str(ROOT / "models" / "compare" / "workshop-passive.toml")
DESIGN = str(ROOT / "models" / "ember-dark.toml")


def _error(args: list[str]) -> str:
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1, res.output
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"Error: {PASSIVE}: a passive pickup"), res.stderr
    return lines[0]


@pytest.mark.parametrize("command", ["check", "clips", "hum", "noise", "response"])
def test_a_command_with_compare_names_it(command):
    assert _error([command, PASSIVE]).endswith(f"; name it with --compare {PASSIVE} instead")


@pytest.mark.parametrize(
    ("args", "shown"),
    [
        (["watch", PASSIVE, "--no-browser"], "render watch"),
        (["bias", PASSIVE, "--no-clips"], "render bias"),
        (["blind", PASSIVE, DESIGN], "render blind"),
        (["netlist", PASSIVE], "render netlist"),
        (["sense", PASSIVE], "render sense"),
    ],
)
def test_a_command_without_compare_points_elsewhere(args, shown):
    line = _error(args)
    assert f"and {shown} takes designs with one only; give a design with a preamp here" in line, line
    assert line.endswith("(render check, clips, hum, noise and response take a passive pickup with --compare FILE)"), line
    assert f"--compare {PASSIVE}" not in line


def test_render_coil_takes_a_passive_file():
    # its coils' impedances are what a comparison pickup has (tests/cli/test_coil.py checks the figures)
    res = CliRunner().invoke(main, ["coil", PASSIVE])
    assert res.exit_code == 0 and "coil_a  typed values" in res.output
