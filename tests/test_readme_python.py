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


def test_the_python_example_prints_the_peak_render_check_prints():
    # the example's first line is the resonance `render check` prints for the same design, to its digits
    from click.testing import CliRunner

    from render.cli import main

    text = (ROOT / "README.md").read_text(encoding="utf-8")
    printed = re.search(r"<!-- /python-example -->\n\nprints\n\n```\n(.*?)\n", text).group(1)
    res = CliRunner().invoke(main, ["check", str(ROOT / "models" / "studio-reference.toml")])
    assert res.exit_code == 0, res.output
    check = re.search(r"loaded resonance\s+peak (\d+ Hz), ([+-][\d.]+) dB", res.output)
    assert printed == f"studio-reference: peak at {check.group(1)}, {check.group(2)} dB above its 1 kHz level"
    level = re.search(r"gain at 1 kHz\s+([+-][\d.]+ dB re 1 V per m/s)", res.output).group(1)
    assert f"\n{level} at 1 kHz\n" in text


def test_the_hum_block_gives_the_figures_its_comments_state():
    # the README's "From Python" block under hum sources: run as written, then each figure in its comments
    # (rounded as printed there) against the objects it made
    code = _block("hum")
    scope: dict = {}
    cwd = os.getcwd()
    os.chdir(ROOT)
    try:
        exec(compile(code, "README.md", "exec"), scope)
    finally:
        os.chdir(cwd)
    said = re.findall(r"# ([\d.]+) \(dB at 50 Hz\)|(\w)\.summary\(\)\[0\]: median ([\d.]+) dB, 5th percentile ([\d.]+) dB", code)
    assert said[0][0] == f"{scope['h'].harmonics[0].rejection_db:.1f}"
    summaries = [(name, med, p5) for _, name, med, p5 in said[1:]]
    assert [n for n, _, _ in summaries] == ["p", "t"]
    for name, med, p5 in summaries:
        row = scope[name].summary()[0]
        assert (med, p5) == (f"{row['median_db']:.1f}", f"{row['p5_db']:.1f}"), name
    assert scope["placed"].coil_a.geometry == scope["d"].coil_a.geometry


def _block(name: str) -> str:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(rf"<!-- python-{name} -->\n```python\n(.*?)```\n<!-- /python-{name} -->", text, re.S)
    assert m, f"README.md: the python-{name} block"
    return m.group(1)


def test_the_coil_block_prints_what_the_readme_says():
    # the fit's figures are those `render coil fit` prints for the same file (README, "A measured coil, step by step")
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    expected = re.search(r"<!-- /python-coil -->\n\nprints\n\n```\n(.*?)```", text, re.S).group(1)
    out = subprocess.run([sys.executable, "-c", _block("coil")], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stderr
    assert out.stdout == expected


def test_the_blind_block_builds_a_session_that_scores(tmp_path):
    # run in a copy of the demo files; the listener's answers are given through the library between the
    # block's two halves, as the listening page records them
    import shutil

    from render.listening.answers import AnswerLog
    from render.listening.layout import SessionPaths, load_plan

    code = _block("blind")
    before, after = code.split("# ... listen with", 1)
    shutil.copytree(ROOT / "models", tmp_path / "models")
    scope: dict = {}
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        exec(compile(before, "README.md", "exec"), scope)
        assert len(scope["session"].loudness.gains_db) == 2
        paths = SessionPaths(tmp_path / "outputs" / "bright-vs-reference")
        plan = load_plan(paths)
        with AnswerLog(paths, plan) as log:
            for i in range(len(plan["trials"])):
                log.record({"trial": i, "answer": "A", "comment": ""})
        p = eval(compile(after.split("then:", 1)[1].strip(), "README.md", "eval"), scope)
    finally:
        os.chdir(cwd)
    assert 0.0 <= p <= 1.0
