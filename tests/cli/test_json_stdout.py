"""``--json -``: standard output is the JSON alone, for every command that has --json.

The human lines go to standard error meanwhile, so ``render CMD … --json - | jq``
works (a pipe's reader gets one JSON document: RFC 8259).
"""

from __future__ import annotations

import json
from pathlib import Path

import click
import pytest
from click.testing import CliRunner

from render.cli import COMMANDS, main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def _json_commands() -> set[str]:
    """Every command path with a --json option (a group's subcommands included)."""
    found = set()
    for name in COMMANDS:
        cmd = main.get_command(click.Context(main), name)
        subs = [(f"{name} {s}", cmd.get_command(click.Context(cmd), s)) for s in cmd.list_commands(click.Context(cmd))] if isinstance(cmd, click.Group) else [(name, cmd)]
        found |= {path for path, c in subs if any("--json" in p.opts for p in c.params)}
    return found


def _session(tmp_path: Path) -> Path:
    """A finished two-trial ABX session (every trial answered)."""
    from render.listening.answers import AnswerLog
    from render.listening.build import build_session
    from render.listening.layout import load_plan
    from render.listening.loudness import match_loudness
    from tests.listening.conftest import MODELS, design_record, synthetic_pair

    signals, match = match_loudness(synthetic_pair(16000, 1.0), sample_rate=16000, names=["a", "b"])
    paths = build_session(
        tmp_path / "session", signals, sample_rate=16000, method="abx", trials=2, seed=3, designs=[design_record(p) for p in MODELS], record={"rig": None, "loudness": match.record()}
    )
    with AnswerLog(paths, load_plan(paths)) as log:
        for i in range(2):
            log.record({"trial": i, "answer": "A", "comment": ""})
    return paths.root


CASES = {
    "check": lambda tmp: ["check", str(REF)],
    "bias": lambda tmp: ["bias", str(REF), "--ratios", "0.5", "--no-clips"],
    "coil show": lambda tmp: ["coil", "show", str(REF)],
    "coil fit": lambda tmp: ["coil", "fit", str(ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"), "--out", str(tmp / "coil.toml")],
    "hum": lambda tmp: ["hum", str(REF), "--tolerance", "1%", "--trials", "50"],
    "noise": lambda tmp: ["noise", str(REF)],
    "sense": lambda tmp: ["sense", str(ROOT / "models" / "slipway-steel-poles.toml")],
    "score": lambda tmp: ["score", str(_session(tmp))],
}


def test_every_json_command_is_covered():
    assert _json_commands() == set(CASES)


@pytest.mark.parametrize("name", sorted(CASES))
def test_stdout_is_json_alone(tmp_path, name):
    res = CliRunner().invoke(main, [*CASES[name](tmp_path), "--json", "-"])
    assert res.exit_code == 0, res.output
    json.loads(res.stdout)  # the whole of stdout is one JSON document
    assert res.stderr.strip()  # and the printed table went to standard error, not away


def test_bias_table_goes_to_stderr():
    res = CliRunner().invoke(main, [*CASES["bias"](None), "--json", "-"])
    assert json.loads(res.stdout)["design"] == "studio-reference"
    assert "headroom up/down" in res.stderr and "ratio 0.50" in res.stderr
