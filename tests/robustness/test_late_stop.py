"""A stop that comes once the command's work is done (while the process ends) is a stop, not death by signal.

Python's own exit restores the signals' default actions before it tears its modules down, so a
SIGTERM there used to end ``render unvoice`` (and every command) with status -15 and no word.
README ("Stopping a run") gives the contract, this project's own (no outside source): SIGTERM and
SIGHUP end a command as Ctrl-C does, ``Aborted!`` and code 1, and no file under a final name is
partial. The stop is made to land in the exit deterministically: an ``atexit`` function registered
before the command runs (so it runs during the exit's work) sends it.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from .conftest import REF, ROOT

LATE_STOP = """
import atexit, os, signal, sys, time
sig = int(sys.argv.pop(1))
if sig:
    atexit.register(lambda: (os.kill(os.getpid(), sig), time.sleep(0.2)))  # runs last, as the process ends
sys.argv[0] = "render"
from render.cli import run
run()
"""


def _run(sig: int, args, cwd: Path):
    env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    return subprocess.run([sys.executable, "-c", LATE_STOP, str(sig), *map(str, args)], cwd=cwd, env=env, capture_output=True, text=True, timeout=300)


@pytest.fixture(scope="module")
def di(tmp_path_factory) -> Path:
    import soundfile as sf

    path = tmp_path_factory.mktemp("di") / "di.wav"
    sf.write(path, 0.05 * np.random.default_rng(7).standard_normal(48000), 48000, subtype="FLOAT")  # 1 s of noise
    return path


def test_unvoice_stopped_as_it_ends_says_aborted_and_exits_1(tmp_path, di):
    res = _run(signal.SIGTERM, ["unvoice", di, REF, "--out", tmp_path / "v.wav"], tmp_path)
    assert res.returncode == 1, (res.returncode, res.stderr)
    assert res.stderr.splitlines()[-1] == "Aborted!" and "Traceback" not in res.stderr and "Exception ignored" not in res.stderr, res.stderr
    # the work was done before the stop: every file whole under its final name, no temporary left
    names = sorted(p.name for p in tmp_path.iterdir())
    assert names == ["v-spectra.png", "v.json", "v.wav"], names
    import soundfile as sf

    assert sf.info(str(tmp_path / "v.wav")).frames == 48000
    assert json.loads((tmp_path / "v.json").read_text())["di"]["sample_rate"] == 48000


def test_sighup_as_a_command_ends_is_a_stop_too(tmp_path):
    res = _run(signal.SIGHUP, ["response", REF], tmp_path)
    assert res.returncode == 1 and res.stderr == "Aborted!\n" and res.stdout.startswith("studio-reference"), (res.returncode, res.stderr)


def test_without_a_stop_the_command_keeps_its_own_code(tmp_path):
    res = _run(0, ["response", REF], tmp_path)
    assert res.returncode == 0 and res.stderr == "", res.stderr
    res = _run(0, ["check", tmp_path / "no-such.toml"], tmp_path)  # a refusal: its one line and code 1, as before
    assert res.returncode == 1 and res.stderr.startswith("Error: ") and res.stderr.count("\n") == 1, res.stderr
