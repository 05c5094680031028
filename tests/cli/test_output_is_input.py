"""An output named as an input is refused before any work: one line naming both, exit 1, the input untouched.

The project's rule for bad input (one line, exit 1, nothing half-written; common practice for
command-line tools, no source): --overwrite replaces an earlier result, never the file being read.
"""

from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main
from render.io.folders import same_file

ROOT = Path(__file__).resolve().parents[2]
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
REF = ROOT / "models" / "studio-reference.toml"


def _digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.mark.parametrize(
    ("source", "args", "names"),
    [
        (CSV, ["coil", "fit", "m.csv", "--out", "m.csv", "--overwrite"], ("--out m.csv", "MEASUREMENT m.csv")),
        (CSV, ["coil", "fit", "m.csv", "--json", "./m.csv", "--overwrite"], ("--json ./m.csv", "MEASUREMENT m.csv")),
        (CSV, ["coil", "fit", "m.csv", "--out", "sub/../m.csv"], ("--out sub/../m.csv", "MEASUREMENT m.csv")),
        (REF, ["netlist", "m.csv", "--out", "m.csv", "--overwrite"], ("--out m.csv", "MODEL m.csv")),
    ],
)
def test_an_output_that_is_the_input_is_refused_and_the_input_kept(tmp_path, monkeypatch, source, args, names):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "sub").mkdir()
    shutil.copy(source, tmp_path / "m.csv")
    before = _digest(tmp_path / "m.csv")
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1, res.output
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ") and "same file" in lines[0], res.stderr
    assert all(n in lines[0] for n in names), lines[0]
    assert res.stdout == ""  # refused before the fit or the design was read
    assert _digest(tmp_path / "m.csv") == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["m.csv", "sub"]


def test_same_file_sees_a_link_and_a_path_not_yet_written(tmp_path):
    a = tmp_path / "a.csv"
    a.write_text("x\n")
    (tmp_path / "b.csv").symlink_to(a)
    assert same_file(tmp_path / "b.csv", a)
    assert same_file(tmp_path / "." / "a.csv", a)
    assert not same_file(tmp_path / "c.csv", a)  # not written yet, another name
