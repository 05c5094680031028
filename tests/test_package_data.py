"""The default phrase and the demo rig ship inside the package, so every command finds them from any folder.

The project's dry_signals/default.toml and rigs/near-transformer.toml are the
user-facing copies and must stay byte-identical to the package's (a rule of
ours, no outside source).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from render.data import DEFAULT_PHRASE, DEMO_RIG, shipped

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"


@pytest.mark.parametrize("name,copy", [(DEFAULT_PHRASE, "dry_signals/default.toml"), (DEMO_RIG, "rigs/near-transformer.toml")])
def test_shipped_files_equal_the_user_facing_copies(name, copy):
    assert shipped(name).read_bytes() == (ROOT / copy).read_bytes()


def test_pyproject_ships_the_data():
    text = (ROOT / "pyproject.toml").read_text(encoding="utf-8")
    assert '"render.data" = ["*.toml"]' in text


def test_default_phrase_from_an_empty_folder_is_the_packaged_one(tmp_path, monkeypatch):
    from render.dry import default_dry_path

    monkeypatch.chdir(tmp_path)
    p = default_dry_path()
    assert p == shipped(DEFAULT_PHRASE) and p.is_file()


def _render(args, cwd):
    env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    return subprocess.run([sys.executable, "-m", "render", *args], cwd=cwd, capture_output=True, text=True, timeout=600, env=env)


@pytest.mark.parametrize(
    "args",
    [
        ["clips", str(REF), "--seconds", "0.5", "--no-plots", "--out", "c"],
        ["bias", str(REF), "--ratios", "0.5", "--seconds", "0.5", "--out", "b", "--json", "b.json"],
        ["blind", str(REF), str(REF), "--seconds", "0.5", "--trials", "2", "--out", "s"],
        ["hum", str(REF), "--rig", str(shipped(DEMO_RIG))],
    ],
    ids=["clips", "bias", "blind", "hum-with-the-shipped-rig"],
)
def test_commands_work_from_an_empty_folder(tmp_path, args):
    res = _render(args, tmp_path)
    assert res.returncode == 0, res.stderr[-2000:]
    if args[0] == "bias":
        data = json.loads((tmp_path / "b.json").read_text())
        assert Path(data["clips"]["dry"]) == shipped(DEFAULT_PHRASE)
