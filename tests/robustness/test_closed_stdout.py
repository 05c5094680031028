"""Standard output closed under a command (``render ... | head -1``, the reader gone): a stop, said as one.

Before, click ended such a run with code 1 and not a word, its files unwritten: indistinguishable
from a refusal that forgot its line (found by a sweep of the real command line, stdout a pipe
whose reader had closed). The contract is this project's own (README: "Stopping a run"): the run
stops as for a closed terminal, ``Aborted!`` on standard error, code 1, no traceback and no
"Exception ignored" noise, no partial file under a final name and no temporary file left.
Each command runs as a real process (the exit goes through :func:`render.cli.ending.end`).
"""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from .conftest import REF, ROOT, check_outputs


def _with_stdout_closed(args, cwd) -> subprocess.CompletedProcess:
    """``render ARGS`` with standard output a pipe whose reading end is already closed."""
    env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    read, write = os.pipe()
    os.close(read)
    try:
        return subprocess.run([sys.executable, "-m", "render", *map(str, args)], stdout=write, stderr=subprocess.PIPE, text=True, cwd=cwd, env=env, timeout=300)
    finally:
        os.close(write)


def _stopped(res) -> None:
    assert res.returncode == 1, (res.returncode, res.stderr)
    assert res.stderr.splitlines()[-1:] == ["Aborted!"], res.stderr
    assert "Traceback" not in res.stderr and "Exception ignored" not in res.stderr, res.stderr


@pytest.mark.parametrize("args", [["check", REF], ["hum", REF, "--json", "-"], ["check", "--help"]], ids=["check", "hum --json -", "check --help"])
def test_a_printing_command_whose_reader_left_says_aborted(tmp_path, args):
    res = _with_stdout_closed(args, tmp_path)
    _stopped(res)
    if "--json" not in args:  # (with --json - the printed table goes to stderr, before the stop)
        assert res.stderr == "Aborted!\n"  # nothing else: the report's lines went nowhere, not to stderr
    assert list(tmp_path.iterdir()) == []


def test_a_command_whose_reader_left_writes_no_partial_file(tmp_path):
    res = _with_stdout_closed(["response", REF, "--csv", "r.csv", "--png", "r.png"], tmp_path)
    _stopped(res)
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".tmp-")] == []
    check_outputs(tmp_path)  # whatever has a final name reads whole


def test_a_run_whose_reader_left_leaves_whole_files_and_no_temporary(tmp_path):
    out = tmp_path / "run"
    res = _with_stdout_closed(["clips", REF, "--seconds", "0.5", "--no-plots", "--out", out], tmp_path)
    _stopped(res)
    assert [p.name for p in tmp_path.rglob(".tmp-*")] == []
    if out.exists():
        check_outputs(out, frames=24000)  # 0.5 s at 48 kHz


def _render(args, cwd, **how) -> subprocess.CompletedProcess:
    env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    return subprocess.run([sys.executable, "-m", "render", *map(str, args)], stderr=subprocess.PIPE, text=True, cwd=cwd, env=env, timeout=300, **how)


@pytest.mark.skipif(not os.path.exists("/dev/full"), reason="/dev/full (a device that is always full) is Linux's")
@pytest.mark.parametrize("args", [["check", REF], ["hum", REF, "--json", "-"]], ids=["check", "hum --json -"])
def test_standard_output_to_a_full_disk_is_one_line(tmp_path, args):
    # before: an OSError traceback (Errno 28), as `render check DESIGN > out.txt` on a full disk would end
    with open("/dev/full", "w") as full:
        res = _render(args, tmp_path, stdout=full)
    assert res.returncode == 1 and "Traceback" not in res.stderr, res.stderr
    assert res.stderr.splitlines()[-1] == "Error: cannot write to standard output (No space left on device); free some disk space or send it elsewhere", res.stderr


@pytest.mark.parametrize("args", [["check", REF], ["check", REF, "--json", "-"]], ids=["check", "check --json -"])
def test_no_standard_output_at_all_is_no_crash(tmp_path, args):
    # `render check DESIGN >&-`: Python's sys.stdout is None; before, the exit's flush (and --json -) raised AttributeError
    res = _render(args, tmp_path, preexec_fn=lambda: os.close(1))
    assert res.returncode == 0 and "Traceback" not in res.stderr, res.stderr
    if "--json" not in args:  # (with --json - the printed table goes to stderr)
        assert res.stderr == "", res.stderr
