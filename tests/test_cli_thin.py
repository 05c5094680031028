"""The command line only parses, calls the library and prints: no module of ``render/cli`` over 150 lines,
no click and no printing outside it. The project's own layout rule (DEVELOPERS.md); no outside source."""

from __future__ import annotations

import re
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "render"


def test_no_cli_module_over_150_lines():
    long = {p.name: n for p in sorted((PACKAGE / "cli").glob("*.py")) if (n := len(p.read_text(encoding="utf-8").splitlines())) > 150}
    assert not long, f"render/cli modules over 150 lines: {long}; move the work into the library"


def test_click_and_printing_stay_in_the_cli():
    found = []
    for p in sorted(PACKAGE.rglob("*.py")):
        if "cli" in p.relative_to(PACKAGE).parts:
            continue
        text = p.read_text(encoding="utf-8")
        if re.search(r"^\s*(import click|from click)", text, re.M) or re.search(r"^\s*print\(", text, re.M):
            found.append(str(p.relative_to(PACKAGE)))
    assert not found, f"click or print() outside render/cli: {found}"


def test_audio_files_are_read_only_in_render_io():
    """One home for reading audio (render/io: its checks, refusals and streamed reads): no soundfile import elsewhere."""
    found = [
        str(p.relative_to(PACKAGE))
        for p in sorted(PACKAGE.rglob("*.py"))
        if p.relative_to(PACKAGE).parts[0] != "io" and re.search(r"^\s*(import soundfile|from soundfile)", p.read_text(encoding="utf-8"), re.M)
    ]
    assert not found, f"soundfile imported outside render/io: {found}"


def test_hashes_are_taken_only_in_render_io_hashing():
    """One home for SHA-256 (render/io/hashing.py), whether of a file or of a cache key's bytes."""
    found = [
        str(p.relative_to(PACKAGE))
        for p in sorted(PACKAGE.rglob("*.py"))
        if p.relative_to(PACKAGE).as_posix() != "io/hashing.py" and re.search(r"^\s*(import hashlib|from hashlib)", p.read_text(encoding="utf-8"), re.M)
    ]
    assert not found, f"hashlib imported outside render/io/hashing.py: {found}"
