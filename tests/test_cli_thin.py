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


def _defines_a_command(tree) -> bool:
    """The module defines a click command or group (a function decorated with ``@click.command``/``@click.group``)."""
    import ast

    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef):
            for d in node.decorator_list:
                f = d.func if isinstance(d, ast.Call) else d
                if isinstance(f, ast.Attribute) and f.attr in ("command", "group"):
                    return True
    return False


def command_imports(cli: Path) -> list[str]:
    """Every import (module-level or inside a function) from one ``cli`` command module of another: "a -> b"."""
    import ast

    trees = {p.stem: ast.parse(p.read_text(encoding="utf-8")) for p in sorted(cli.glob("*.py"))}
    commands = {m for m, t in trees.items() if _defines_a_command(t)}
    found = []
    for m in sorted(commands):
        for node in ast.walk(trees[m]):
            if isinstance(node, ast.ImportFrom) and node.level == 1:  # from .x import y / from . import x
                names = [node.module] if node.module else [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("render.cli."):
                names = [node.module[len("render.cli.") :]]
            elif isinstance(node, ast.Import):
                names = [a.name[len("render.cli.") :] for a in node.names if a.name.startswith("render.cli.")]
            else:
                continue
            found += [f"{m} -> {n.split('.')[0]}" for n in names if n.split(".")[0] in commands - {m, "__init__"}]
    return found


def test_no_command_invokes_another():
    assert "hum" in {p.stem for p in (PACKAGE / "cli").glob("*.py")}  # the walk sees the command modules
    found = command_imports(PACKAGE / "cli")
    assert not found, f"a command module imports another (move what they share into a *_print or options module): {found}"
    assert "ctx.invoke" not in "".join(p.read_text(encoding="utf-8") for p in (PACKAGE / "cli").glob("*.py"))


def test_the_command_import_check_finds_one(tmp_path):
    (tmp_path / "a.py").write_text("import click\n\n@click.command('a')\ndef a():\n    from .b import helper\n", encoding="utf-8")
    (tmp_path / "b.py").write_text("import click\n\ndef helper():\n    pass\n\n@click.command('b')\ndef b():\n    pass\n", encoding="utf-8")
    (tmp_path / "b_print.py").write_text("def shown():\n    pass\n", encoding="utf-8")
    assert command_imports(tmp_path) == ["a -> b"]


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
