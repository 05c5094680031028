"""The listening page ships as package data: found through importlib.resources, installed or zipped.

The reference is setuptools itself (the project's build backend, ``pyproject.toml``):
its ``build_py`` step copies exactly the modules and package data that a wheel, and so a
non-editable install, carries. The copy is then imported on its own, as a folder and as a
zip (Python's zipimport), with nothing of the source tree on the path.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

from render.listening.page import PAGE_FILE_NAMES, read_page

ROOT = Path(__file__).resolve().parents[2]
STATIC = ROOT / "render" / "listening" / "static"

# run in a fresh interpreter with only the built copy on its path: the page's files, by name, as hex
PROBE = """
import hashlib, sys
import render
from render.listening.page import PAGE_FILE_NAMES, page_file
print(render.__file__)
for name in PAGE_FILE_NAMES:
    print(name, hashlib.sha256(page_file(name)).hexdigest())
"""


def test_the_page_is_read_from_its_files():
    page = read_page()
    assert (page.html, page.css, page.js) == tuple((STATIC / n).read_bytes() for n in PAGE_FILE_NAMES)
    text = page.html.decode("utf-8")
    assert '<link rel="stylesheet" href="/page.css">' in text and '<script src="/page.js" defer></script>' in text


def _probe(path_entry: Path, cwd: Path) -> list[str]:
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    env["PYTHONPATH"] = str(path_entry)
    done = subprocess.run([sys.executable, "-c", PROBE], cwd=cwd, env=env, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    return done.stdout.splitlines()


def test_an_installed_copy_carries_the_page(tmp_path):
    import hashlib

    source = tmp_path / "source"
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, source / name)
    shutil.copytree(ROOT / "render", source / "render", ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    lib = tmp_path / "lib"
    build = subprocess.run(
        [sys.executable, "-c", "from setuptools import setup; setup()", "-q", "build_py", "--build-lib", str(lib)],
        cwd=source,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert build.returncode == 0, build.stderr
    expected = [f"{n} {hashlib.sha256((STATIC / n).read_bytes()).hexdigest()}" for n in PAGE_FILE_NAMES]
    elsewhere = tmp_path / "elsewhere"  # the working folder: neither the source nor the copy
    elsewhere.mkdir()

    lines = _probe(lib, elsewhere)
    assert Path(lines[0]).resolve() == (lib / "render" / "__init__.py").resolve()
    assert lines[1:] == expected

    zipped = tmp_path / "render.zip"
    with zipfile.ZipFile(zipped, "w") as zf:
        for p in sorted(lib.rglob("*")):
            if p.is_file():
                zf.write(p, p.relative_to(lib).as_posix())
    lines = _probe(zipped, elsewhere)
    assert lines[0] == str(zipped / "render" / "__init__.py")
    assert lines[1:] == expected
