"""A ``render fit --render`` folder stays marked incomplete until the clips after the fit are written.

The marker (INCOMPLETE.txt, render.io.folders.run_folder) is the project's own contract for stopped
runs (README, "Stopping a run"): a folder without it holds a finished run.
"""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

import render.runs.clips as clips_run
from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"


def test_a_stop_while_the_clips_render_leaves_the_fit_folder_marked(tmp_path, monkeypatch):
    def stopped(*args, **kwargs):
        raise KeyboardInterrupt  # what Ctrl-C, SIGTERM and SIGHUP become in the command

    monkeypatch.setattr(clips_run, "render_clips", stopped)
    out = tmp_path / "fit"
    res = CliRunner().invoke(main, ["fit", str(FIT), "--top", "1", "--render", "--out", str(out)])
    assert res.exit_code == 1
    names = sorted(p.name for p in out.iterdir())
    assert "fit.json" in names and "INCOMPLETE.txt" in names, names


def test_a_finished_fit_folder_is_not_marked(tmp_path):
    out = tmp_path / "fit"
    res = CliRunner().invoke(main, ["fit", str(FIT), "--top", "1", "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert "INCOMPLETE.txt" not in [p.name for p in out.iterdir()]
