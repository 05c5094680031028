"""Excerpts of files that README.md shows are what the commands before them write.

The README is the contract here (no outside source). A block marked
``<!-- example: file PATH -->`` on the line before it shows lines of the file
PATH (relative to the folder the examples run in) as the last ``$ render …``
example above it that names PATH's folder writes it. The example is run in a
fresh copy of the shipped ``models/``, ``dry_signals/`` and ``rigs/``, and the
block's lines must appear in the file, in order and one after another (a line
``...`` alone stands for any number of lines), with trailing spaces ignored.
"""

from __future__ import annotations

import os
import re
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
MARK = re.compile(r"^<!-- example: file (\S+) -->\n```[a-z]*\n(.*?)\n```", re.S | re.M)


def excerpts(text: str) -> list[tuple[int, str, list[str], str]]:
    """(line, path, the block's lines, the command that writes it) for every marked block of ``text``."""
    out = []
    for m in MARK.finditer(text):
        line = text.count("\n", 0, m.start()) + 1
        path = m.group(1)
        folder = str(Path(path).parent)
        commands = [c for c in re.findall(r"^\$ (render .*)$", text[: m.start()], re.M) if folder in shlex.split(c)]
        assert commands, f"README.md line {line}: no `$ render` example above writes {folder}/"
        out.append((line, path, m.group(2).split("\n"), commands[-1]))
    return out


def contains(lines: list[str], block: list[str]) -> bool:
    """Whether ``block`` (with ``...`` for any lines) appears in ``lines`` as a run of consecutive lines."""
    parts = []
    for b in block:
        parts.append(r"(?:[^\n]*\n)*?" if b.strip() in ("...", "…") else re.escape(b.rstrip()) + r"\n")
    return re.search("".join(parts), "".join(x.rstrip() + "\n" for x in lines)) is not None


EXCERPTS = excerpts(README.read_text(encoding="utf-8"))


def test_the_readme_marks_file_excerpts():
    assert any(p.endswith("summary.md") for _, p, _, _ in EXCERPTS)


def test_the_matching_works_as_documented():
    assert contains(["a", "b", "c", "d"], ["b", "c"]) and contains(["a", "b", "c", "d"], ["a", "...", "d"])
    assert not contains(["a", "b", "c"], ["a", "c"]) and not contains(["a", "b"], ["b", "a"])


@pytest.mark.parametrize(("line", "path", "block", "command"), EXCERPTS, ids=[f"L{e[0]}" for e in EXCERPTS])
def test_readme_file_excerpt(tmp_path, line, path, block, command):
    for name in ("models", "dry_signals", "rigs"):
        shutil.copytree(ROOT / name, tmp_path / name)
    env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
    res = subprocess.run([sys.executable, "-m", "render", *shlex.split(command)[1:], "--no-plots"], cwd=tmp_path, capture_output=True, text=True, timeout=600, env=env)
    assert res.returncode == 0, res.stderr[-2000:]
    written = (tmp_path / path).read_text(encoding="utf-8").splitlines()
    assert contains(written, block), f"README.md line {line}: {path} as `{command}` writes it:\n" + "\n".join(written)
