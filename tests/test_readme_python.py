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


# What a complete signature in the README's table of public names leaves out, and why.
LEFT_OUT = {
    ("synthesize", "pickup"): "a design's construction for its field solve; render.load_dry and render_clips pass it",
    ("render_clip", "resampler"): "a batch's shared resampler: speed only, the samples do not depend on it",
}


def _split_arguments(text: str) -> list[str]:
    """The arguments of a call as written, split at the commas outside brackets."""
    out, depth, word = [], 0, ""
    for c in text:
        depth += c in "([{"
        depth -= c in ")]}"
        if c == "," and depth == 0:
            out.append(word.strip())
            word = ""
        else:
            word += c
    return out + [word.strip()] if word.strip() else out


def test_the_readme_table_of_public_names_gives_their_signatures_as_the_code_has_them():
    # each `name(...)` in the table names only real parameters, with their real defaults; one written whole
    # (with a `*,` and no `…`) names every parameter but those LEFT_OUT, so a new keyword (passive=) cannot go unsaid
    import inspect

    import render

    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text[text.index("## Using render from Python") :]
    rows = [line.split(" | ")[0] for line in section.splitlines() if line.startswith("| `")]
    calls = [c for row in rows for c in re.findall(r"`(\w+)\(([^`]*)\)`", row)]
    assert {"render_clip", "synthesize", "response"} <= {name for name, _ in calls}
    for name, written in calls:
        params = inspect.signature(getattr(render, name)).parameters
        words = _split_arguments(written)
        whole = "*" in words and "…" not in written
        keyword = False
        named = set()
        positional = [p for p in params.values() if p.kind is not inspect.Parameter.KEYWORD_ONLY]
        for i, word in enumerate(words):
            if word == "*":
                keyword = True
                continue
            if word == "…":
                continue
            key, _, default = word.partition("=")
            if not key.isidentifier():  # an example value ({"table.key": value}) in a positional place
                assert not keyword and i < len(positional), (name, word)
                named.add(positional[i].name)
                continue
            assert key in params or not whole, f"README: {name}({written}): no parameter {key}"
            if key not in params:
                continue  # a shortened row's own word for a positional argument (di for di_path)
            named.add(key)
            assert (params[key].kind is inspect.Parameter.KEYWORD_ONLY) == keyword or not whole, (name, key)
            if default and default != "…":
                assert default == repr(params[key].default), f"README: {name}: {key}={default}, the code's default is {params[key].default!r}"
        if whole:
            unsaid = {p for p in params if p not in named and (name, p) not in LEFT_OUT}
            assert not unsaid, f"README: {name}({written}) leaves out {sorted(unsaid)}"
