"""The comparison page a run writes: its two files, what they carry, and that they are the same bytes for the same inputs.

The checks are against the run's own files, read independently: each clip on
the page decodes (by libsndfile) to its WAV within the copy's 16-bit dither
(1.5 LSB, as in test_assets), each loudness on the page is the JSON's
``loudness_lufs_1v_full_scale``, and the page is the same bytes from two
runs of the same inputs (in one process or two).
"""

from __future__ import annotations

import base64
import io
import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import soundfile as sf
from click.testing import CliRunner

from render.cli import main
from render.compare.assets import PCM_FULL_SCALE
from render.compare.page import CLIPS_FILE, PAGE_FILE, STATIC_NAMES, PageClip, PageText, page_data, page_html

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
DARK = ROOT / "models" / "ember-dark.toml"
BRIGHT = ROOT / "models" / "glasswing-bright.toml"
DRY = ROOT / "dry_signals" / "chug_riff.toml"
EDGE = ROOT / "tests" / "smoke" / "designs" / "edge-reversed-same-point.toml"  # coils wired against each other at one sensing point


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def page_of(folder: Path) -> tuple[dict, dict[str, bytes]]:
    """(the page's data, key -> WAV bytes of its clips), read from the two files as a browser would find them."""
    html = (folder / PAGE_FILE).read_text(encoding="utf-8")
    m = re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S)
    data = json.loads(m.group(1))
    clips = {}
    for line in (folder / CLIPS_FILE).read_text(encoding="ascii").splitlines():
        c = re.match(r'window\.renderPageClips\[(".*?")\] = "([A-Za-z0-9+/=]*)";$', line)
        if c:
            clips[json.loads(c.group(1))] = base64.b64decode(c.group(2))
    return data, clips


def test_a_clips_run_writes_its_page_and_the_page_holds_every_clip(tmp_path):
    out = tmp_path / "run"
    res = run("clips", REF, DARK, BRIGHT, "--dry", DRY, "--seconds", 1.5, "--no-plots", "--out", out)
    assert res.exit_code == 0, res.output
    assert (out / PAGE_FILE).is_file() and (out / CLIPS_FILE).is_file() and not (out / "INCOMPLETE.txt").exists()
    data, clips = page_of(out)
    assert [d["key"] for d in data["designs"]] == ["studio-reference", "ember-dark", "glasswing-bright"]
    for d in data["designs"]:
        rec = json.loads((out / f"{d['key']}.json").read_text())
        assert d["loudness"] == round(rec["measurements"]["loudness_lufs_1v_full_scale"], 3)
        assert d["name"] == rec["design"] and d["file"] == rec["design_file"]
        volts = sf.read(out / f"{d['key']}.wav")[0] * rec["volts_full_scale"]
        copy, fs = sf.read(io.BytesIO(clips[d["clip"]]), dtype="float64")
        assert fs == 48000 and copy.size == volts.size
        assert np.max(np.abs(copy * d["unit_v"] - volts)) <= 1.5 * d["unit_v"] / PCM_FULL_SCALE
        assert d["strip"].startswith("data:image/png;base64,")
        assert len(d["cells"]) == len(data["columns"]) and d["values"]
    assert data["volts_full_scale"] == rec["volts_full_scale"] and data["ceiling_dbtp"] == -1.0
    html = (out / PAGE_FILE).read_text(encoding="utf-8")
    assert "http://" not in html.replace("http://www.w3.org/2000/svg", "") and "https://" not in html  # nothing from the network
    assert "volume" in html and "down" in html and 'value="-20"' in html


def test_the_page_is_the_same_bytes_for_the_same_inputs(tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    assert run("clips", REF, DARK, "--dry", DRY, "--seconds", 1.0, "--no-plots", "--out", a).exit_code == 0
    assert run("clips", REF, DARK, "--dry", DRY, "--seconds", 1.0, "--no-plots", "--out", b, "--jobs", "2").exit_code == 0
    for name in (PAGE_FILE, CLIPS_FILE):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def test_a_bias_run_writes_a_page_of_its_settings(tmp_path):
    out = tmp_path / "bias"
    res = run("bias", REF, "--ratios", "0.3,0.5", "--dry", DRY, "--seconds", 1.0, "--out", out)
    assert res.exit_code == 0, res.output
    data, clips = page_of(out)
    assert [d["key"] for d in data["designs"]] == ["studio-reference-r0p300-9V", "studio-reference-r0p500-9V"]
    assert set(clips) == {d["clip"] for d in data["designs"]}
    values = [dict(d["values"]) for d in data["designs"]]
    assert values[0]["input_b.bias_top"] != values[1]["input_b.bias_top"]  # the setting shows in the values
    assert not (out / "INCOMPLETE.txt").exists()


def test_a_fit_with_render_writes_a_page_in_its_clips_folder(tmp_path):
    out = tmp_path / "fit"
    res = run("fit", ROOT / "models" / "fits" / "brighter-reference.toml", "--top", 1, "--render", "--out", out)
    assert res.exit_code == 0, res.output
    data, clips = page_of(out / "clips")
    assert len(data["designs"]) == 2 and len(clips) == 2


def test_a_response_that_is_exactly_zero_is_a_gap_on_the_page(tmp_path):
    # two like coils sensing the string at one point, wired against each other, give V_A + V_B = 0 at every frequency
    # (arithmetic): the level is no number, so the page holds null (a gap), never a made-up floor such as -600 dB that
    # would stretch the overlay's axis; a design that does respond keeps every point. Project rule, no outside source.
    out = tmp_path / "run"
    res = run("clips", REF, EDGE, "--dry", DRY, "--seconds", 1.0, "--no-plots", "--out", out)
    assert res.exit_code == 0, res.output
    data, _ = page_of(out)
    ref, edge = data["designs"]
    for curve in (edge["response"], edge["passive"]):
        assert len(curve[0]) == 200 and curve[1] == [None] * 200
    for curve in (ref["response"], ref["passive"]):
        assert all(v is not None and -300.0 < v < 100.0 for v in curve[1])


def test_a_name_cannot_break_out_of_the_page():
    fs = 8000
    x = 0.1 * np.sin(2 * np.pi * 440 * np.arange(fs) / fs)
    evil = '</script><script>alert(1)</script> & "quotes"'
    clips = [PageClip(key="a", name=evil, volts=x, sample_rate=fs, loudness_lufs_1v_full_scale=-30.0)]
    data, _ = page_data(PageText(title=evil), clips, volts_full_scale=1.0)
    html = page_html(data).decode("utf-8")
    assert "<script>alert(1)" not in html and html.count("</script>") == html.count("<script")
    m = re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S)
    assert json.loads(m.group(1))["designs"][0]["name"] == evil


def test_the_page_files_ship_as_package_data(tmp_path):
    """setuptools' build_py (the build backend's own copy step, as for a wheel) carries the page's files."""
    source = tmp_path / "source"
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, source / name)
    shutil.copytree(ROOT / "render", source / "render", ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    lib = tmp_path / "lib"
    build = subprocess.run([sys.executable, "-c", "from setuptools import setup; setup()", "-q", "build_py", "--build-lib", str(lib)], cwd=source, capture_output=True, text=True, timeout=300)
    assert build.returncode == 0, build.stderr
    for name in STATIC_NAMES:
        assert (lib / "render" / "compare" / "static" / name).read_bytes() == (ROOT / "render" / "compare" / "static" / name).read_bytes()


def test_values_of_two_designs_share_one_key_set():
    # project rule, no outside source: the page compares a design's values with the reference's key by key, so a
    # table one design lacks (studio-reference has no [coil_a.winding]; bench-wound gives one) must carry the other's
    # keys, each "absent", and the count of differing values must not depend on which design is the reference
    from render.compare.page import aligned_values, design_values
    from render.design import load_designs

    ref, wound = (design_values(d) for d in load_designs([REF, ROOT / "models" / "bench-wound.toml"])[0])
    assert ("coil_a.winding", "absent") in ref and ("coil_a.winding.turns", "1400") in wound  # as each design alone gives them
    a, b = aligned_values([ref, wound])
    assert [k for k, _ in a] == [k for k, _ in b]
    assert dict(a)["coil_a.winding.turns"] == "absent" and "coil_a.winding" not in dict(a)
    assert [k for k, _ in b] == [k for k, _ in wound]  # the design with the table keeps its keys and their order
    differ = {k for (k, u), (_, v) in zip(a, b) if u != v}
    b2, a2 = aligned_values([wound, ref])
    assert differ == {k for (k, u), (_, v) in zip(a2, b2) if u != v}
    assert {f"coil_{c}.winding.{k}" for c in "ab" for k in ("turns", "wire_awg", "wire_length")} <= differ


def test_a_change_is_told_from_the_exact_values():
    # project rule, no outside source: 110 kΩ → 110.04 kΩ is a change even where four figures show both as 110 kΩ
    from dataclasses import replace

    from render.compare.page import design_values, value_changes
    from render.design import load_designs

    d = load_designs([REF])[0][0]
    e = replace(d, feedback=replace(d.feedback, r=110.04e3))
    assert dict(design_values(d))["feedback.r"] == dict(design_values(e))["feedback.r"] == "110 kΩ"
    assert value_changes(d, e) == [("feedback.r", "110 kΩ", "110.04 kΩ")]
    assert value_changes(d, d) == []


def test_the_page_carries_each_value_as_its_number(tmp_path):
    # project rule, no outside source: beside the four figures shown, each value's number (SI units, as the design
    # holds it) and the tolerance the page compares them within; 110.04k and 110k read alike but are different numbers
    from render.compare.page import VALUE_RTOL, design_numbers, design_values
    from render.design import load_design

    text = REF.read_text(encoding="utf-8")
    near = tmp_path / "near.toml"
    near.write_text(text.replace('r = "110k"', 'r = "110.04k"', 1), encoding="utf-8")
    a, b = load_design(REF), load_design(near)
    assert dict(design_values(a))["feedback.r"] == dict(design_values(b))["feedback.r"]
    assert dict(design_numbers(a))["feedback.r"] == 110e3 and dict(design_numbers(b))["feedback.r"] == 110.04e3
    assert [k for k, _ in design_numbers(a)] == [k for k, _ in design_values(a)]
    out = tmp_path / "run"
    assert run("clips", REF, near, "--dry", DRY, "--seconds", 0.5, "--no-plots", "--out", out).exit_code == 0
    data, _ = page_of(out)
    assert data["values_rtol"] == VALUE_RTOL == 1e-9
    for d in data["designs"]:
        assert [k for k, _ in d["numbers"]] == [k for k, _ in d["values"]]
    assert [dict(d["numbers"])["feedback.r"] for d in data["designs"]] == [110e3, 110.04e3]
