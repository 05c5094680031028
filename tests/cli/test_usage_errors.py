"""Every command answers a usage error with one line on stderr and exit code 1.

One line naming what was wrong and where the help is, exit code 1: the project's
rule for bad input (common practice for command-line tools, no source).
"""

from __future__ import annotations

import click
import pytest
from click.testing import CliRunner

from render.cli import COMMANDS, main


def _command(name: str) -> click.Command:
    return main.get_command(click.Context(main), name)


def _paths() -> list[list[str]]:
    """Every command path: ``[name]``, plus ``[name, sub]`` for a group's subcommands."""
    paths = []
    for name in sorted(COMMANDS):
        cmd = _command(name)
        paths.append([name])
        if isinstance(cmd, click.Group):
            paths += [[name, sub] for sub in cmd.list_commands(click.Context(cmd))]
    return paths


def _one_line(args: list[str]) -> str:
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1, (args, res.output)
    assert res.stdout == "", (args, res.stdout)
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), (args, res.stderr)
    return lines[0]


@pytest.mark.parametrize("path", _paths(), ids=" ".join)
def test_an_unknown_option_is_one_line(path):
    line = _one_line([*path, "--no-such-option"])
    assert "No such option '--no-such-option'" in line
    shown = ["coil", "show"] if path == ["coil"] else path  # render coil MODEL is render coil show MODEL
    assert line.endswith(f"; see `render {' '.join(shown)} --help`"), line


def _required_arguments(path: list[str]) -> list[str]:
    cmd = _command(path[0])
    if len(path) > 1:
        cmd = cmd.get_command(click.Context(cmd), path[1])
    return [p.human_readable_name for p in cmd.params if isinstance(p, click.Argument) and p.required]


@pytest.mark.parametrize("path", [p for p in _paths() if _required_arguments(p)], ids=" ".join)
def test_a_missing_argument_is_one_line(path):
    line = _one_line(path)
    assert f"Missing argument '{_required_arguments(path)[0]}" in line, line


def test_bad_values_and_unknown_commands_are_one_line():
    line = _one_line(["clips", "--jobs", "0"])
    assert "'--jobs'" in line and line.endswith("see `render clips --help`")
    line = _one_line(["watch", "--compare", "x.toml"])  # watch takes no comparison pickup
    assert line == "Error: No such option '--compare'; see `render watch --help`"
    line = _one_line(["no-such-command"])
    assert line == "Error: No such command 'no-such-command'; see `render --help`"
    assert "(Did you mean" in _one_line(["clips", "--job", "2"])


def test_coil_alone_asks_for_its_model():
    assert "Missing argument 'MODEL'" in _one_line(["coil"])


def test_render_alone_prints_the_help():
    res = CliRunner().invoke(main, [])
    assert res.exit_code == 0 and "Commands:" in res.stdout
