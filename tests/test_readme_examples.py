"""Every ``$ render …`` example in README.md runs, in order, and prints what the README shows.

The README is the contract here (no outside source): its examples are run in
a fresh copy of the shipped ``models/``, ``dry_signals/`` and ``rigs/`` in a temporary
folder, one after another, so that later examples use earlier ones' files.
Each must exit 0 and print, on standard output, the lines shown under it.

The notation, as the README's "Reading the examples" paragraph documents it:

- a code block without a language whose lines start with ``$ render`` holds
  examples; the lines after a ``$`` line, up to the next one, are its output
  (blank lines at the end left out);
- a line ``...`` (or ``…``) alone stands for any number of lines;
- ``<!-- example: vary TEXT=KIND[, TEXT=KIND] -->`` on the line before a block:
  TEXT in the outputs stands for any value of KIND (``timestamp``: 8 digits, a
  dash, 6 digits; ``port``: a whole number; ``id``: letters, digits, ``-`` and
  ``_``), the same value wherever it appears again in one command's output;
- ``<!-- example: not run: REASON -->`` on the line before a block: its
  commands are not run (a placeholder path, or a server that runs until
  stopped); they are parsed by the command line, so that every option they
  use exists, and reported as skipped with the reason.
"""

from __future__ import annotations

import difflib
import os
import re
import shlex
import shutil
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path

import click
import pytest

ROOT = Path(__file__).resolve().parents[1]
README = ROOT / "README.md"
KINDS = {"timestamp": r"\d{8}-\d{6}", "port": r"\d{1,5}", "id": r"[A-Za-z0-9_-]+"}
ELLIPSIS = ("...", "…")


@dataclass
class Example:
    line: int  # of the $ line in README.md
    command: str  # after "$ "
    expected: list[str]
    vary: dict[str, str] = field(default_factory=dict)  # text -> kind
    not_run: str | None = None  # the reason

    @property
    def id(self) -> str:
        words = self.command.split()
        return f"L{self.line}-{'-'.join(words[1:3])}"


def parse_readme(text: str) -> list[Example]:
    """The examples of ``text`` in order, with their notation applied."""
    lines = text.split("\n")
    out: list[Example] = []
    i = 0
    while i < len(lines):
        if not lines[i].startswith("```"):
            i += 1
            continue
        info, start = lines[i][3:].strip(), i
        j = i + 1
        while j < len(lines) and not lines[j].startswith("```"):
            j += 1
        body = lines[start + 1 : j]
        i = j + 1
        if info or not any(b.startswith("$ render ") for b in body):
            continue
        meta = lines[start - 1].strip() if start > 0 else ""
        vary, not_run = {}, None
        m = re.fullmatch(r"<!-- example: (.*) -->", meta)
        if m:
            spec = m.group(1).strip()
            if spec.startswith("not run:"):
                not_run = spec[len("not run:") :].strip()
            elif spec.startswith("vary "):
                for item in spec[len("vary ") :].split(","):
                    value, _, kind = item.strip().rpartition("=")
                    assert kind in KINDS and value, f"README.md line {start}: bad vary item {item!r}"
                    vary[value] = kind
            else:
                raise AssertionError(f"README.md line {start}: unknown example note {spec!r}")
        current: Example | None = None
        for k, b in enumerate(body):
            if b.startswith("$ "):
                assert b.startswith("$ render "), f"README.md line {start + 2 + k}: only render commands are examples"
                current = Example(start + 2 + k, b[2:], [], vary, not_run)
                out.append(current)
            elif current is not None:
                current.expected.append(b.rstrip())
            else:
                raise AssertionError(f"README.md line {start + 2 + k}: output before the first $ line")
    for ex in out:
        while ex.expected and not ex.expected[-1]:
            ex.expected.pop()
    return out


def pattern(ex: Example) -> re.Pattern:
    """A regex for the whole output: literal lines, ``...`` for any lines, the varying parts."""
    groups: dict[str, str] = {}
    parts = []
    for line in ex.expected:
        if line.strip() in ELLIPSIS:
            parts.append(r"(?:[^\n]*\n)*?")
            continue
        piece = re.escape(line)
        for text, kind in ex.vary.items():
            esc = re.escape(text)
            while esc in piece:
                if text in groups:
                    piece = piece.replace(esc, f"(?P={groups[text]})", 1)
                else:
                    groups[text] = f"v{len(groups)}"
                    piece = piece.replace(esc, f"(?P<{groups[text]}>{KINDS[kind]})", 1)
        parts.append(piece + r"\n")
    return re.compile("".join(parts))


EXAMPLES = parse_readme(README.read_text(encoding="utf-8"))


class Workspace:
    """A fresh copy of the demo files; examples run in README order, each once."""

    def __init__(self, folder: Path):
        self.folder = folder
        for name in ("models", "dry_signals", "rigs"):
            shutil.copytree(ROOT / name, folder / name)
        self.results: dict[int, subprocess.CompletedProcess] = {}

    def run_through(self, index: int) -> subprocess.CompletedProcess:
        for i in range(index + 1):
            ex = EXAMPLES[i]
            if ex.not_run is None and i not in self.results:
                env = {**os.environ, "MPLBACKEND": "Agg", "PYTHONPATH": os.pathsep.join(filter(None, [str(ROOT), os.environ.get("PYTHONPATH")]))}
                argv = [sys.executable, "-m", "render", *shlex.split(ex.command)[1:]]
                self.results[i] = subprocess.run(argv, cwd=self.folder, capture_output=True, text=True, timeout=600, env=env)
        return self.results[index]


@pytest.fixture(scope="module")
def workspace(tmp_path_factory):
    return Workspace(tmp_path_factory.mktemp("readme"))


def test_the_readme_has_examples_and_the_notation_is_used():
    assert len(EXAMPLES) >= 15
    assert any(ex.vary for ex in EXAMPLES) and any(ex.not_run for ex in EXAMPLES)
    assert any(line.strip() in ELLIPSIS for ex in EXAMPLES for line in ex.expected)


def test_the_notation_matches_as_documented():
    ex = Example(1, "render x", ["a outputs/clips-20261201-183015/ b", "...", "c outputs/clips-20261201-183015/"], {"20261201-183015": "timestamp"})
    p = pattern(ex)
    assert p.fullmatch("a outputs/clips-20270101-000000/ b\nc outputs/clips-20270101-000000/\n")
    assert p.fullmatch("a outputs/clips-20270101-000000/ b\nx\ny\nc outputs/clips-20270101-000000/\n")
    assert not p.fullmatch("a outputs/clips-20270101-000000/ b\nc outputs/clips-20270101-000001/\n")  # the same value again
    assert not p.fullmatch("a outputs/clips-2027/ b\nc outputs/clips-2027/\n")


@pytest.mark.parametrize("index", range(len(EXAMPLES)), ids=[ex.id for ex in EXAMPLES])
def test_readme_example(workspace, index):
    ex = EXAMPLES[index]
    if ex.not_run is not None:
        from render.cli import main

        args = shlex.split(ex.command)[1:]
        command = main.get_command(click.Context(main), args[0])
        assert command is not None, f"README.md line {ex.line}: no command {args[0]!r}"
        command.make_context(args[0], args[1:])  # the options and arguments exist (click refuses unknown ones)
        pytest.skip(f"README.md line {ex.line}: `{ex.command}` not run: {ex.not_run}")
    res = workspace.run_through(index)
    assert res.returncode == 0, f"README.md line {ex.line}: `{ex.command}` exited {res.returncode}:\n{res.stderr[-2000:]}"
    got = "".join(line.rstrip() + "\n" for line in res.stdout.splitlines())
    if not pattern(ex).fullmatch(got):
        diff = "\n".join(difflib.unified_diff(ex.expected, got.splitlines(), "README.md", "printed", lineterm=""))
        pytest.fail(f"README.md line {ex.line}: `{ex.command}` printed something else ('...' stands for any lines):\n{diff}")
