"""Python 3.10 (the lowest pyproject.toml allows) has no ``tomllib``: only render.io.toml may import it,
with tomli as its fallback, so that the package and its tests run there (Python docs, "tomllib", new in 3.11)."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DIRECT = re.compile(r"^\s*(import tomllib|from tomllib import)", re.MULTILINE)


def test_only_the_toml_module_imports_tomllib():
    found = [str(p.relative_to(ROOT)) for folder in ("render", "tests") for p in (ROOT / folder).rglob("*.py") if DIRECT.search(p.read_text(encoding="utf-8"))]
    assert found == ["render/io/toml.py"]
