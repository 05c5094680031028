"""The README's Python example runs, from the project folder, and prints what the README shows.

The expected lines are the README's own (a contract between the README and the
code, no outside source).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_the_python_example_prints_what_the_readme_says():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(r"<!-- python-example -->\n```python\n(.*?)```\n<!-- /python-example -->\n\nprints\n\n```\n(.*?)```", text, re.S)
    assert m, "README.md: the python-example block and its printed lines"
    code, expected = m.group(1), m.group(2)
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=300, env={**os.environ, "MPLBACKEND": "Agg"})
    assert out.returncode == 0, out.stderr
    assert out.stdout == expected
