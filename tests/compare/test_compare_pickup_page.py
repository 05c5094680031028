"""The comparison pickup (``render clips --compare``) beside the designs, and the page's reference.

References:
- band levels of the passive pickup recomputed from its analog zeros, poles
  and gain with scipy.signal.freqs_zpk and integrated with scipy.integrate.quad
  (the definition in :mod:`render.analysis.brightness`);
- the loudness-matched difference is the band level difference once both clips
  play at one integrated loudness (ITU-R BS.1770-4, the loudness each JSON
  records): (P − L) − (P_ref − L_ref);
- the browser checks measure sound the page renders through an
  OfflineAudioContext (as tests/compare/test_browser.py), against the WAVs as
  written (libsndfile), and the page's table against the run's own figures.
Needs Debian's chromium and Playwright for Python for the browser tests; without
them those skip, under CI=true they fail.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from scipy.integrate import quad
from scipy.signal import freqs_zpk

from .test_browser import chromium, locate, open_page, render_offline  # noqa: F401 (a fixture)

ROOT = Path(__file__).resolve().parents[2]
MODELS = ["studio-reference", "ember-dark", "glasswing-bright"]
COMPARE = ROOT / "models" / "compare" / "workshop-passive.toml"
PHRASE = ROOT / "dry_signals" / "chug_riff.toml"
KEYS = MODELS + ["workshop-passive"]


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    """(folder, records by stem) of a clips run of three demo designs and the passive comparison pickup."""
    from click.testing import CliRunner

    from render.cli import main

    out = tmp_path_factory.mktemp("with-compare") / "run"
    args = ["clips", *(str(ROOT / "models" / f"{m}.toml") for m in MODELS), "--compare", str(COMPARE), "--dry", str(PHRASE), "--seconds", "2", "--no-plots", "--out", str(out)]
    res = CliRunner().invoke(main, args, catch_exceptions=False)
    assert res.exit_code == 0, res.output
    return out, {k: json.loads((out / f"{k}.json").read_text()) for k in KEYS}


def _band_power_db(z, p, k, band):
    def power(f):
        return float(np.abs(freqs_zpk(z, p, k, worN=[2 * np.pi * f])[1][0]) ** 2)

    f1, f2 = band
    mean = quad(lambda u: power(np.exp(u)), np.log(f1), np.log(f2), epsabs=0, epsrel=1e-10)[0] / np.log(f2 / f1)
    return 10 * np.log10(mean), 10 * np.log10(power(1000.0))


def test_the_comparison_pickup_gets_the_designs_figures_in_its_json_and_the_summary(run):
    from render.circuit.engine import design_responses
    from render.design import load_designs
    from render.design.passive import carrier, load_passive

    out, recs = run
    m = recs["workshop-passive"]["measurements"]
    ref = recs["studio-reference"]["measurements"]
    assert m["reference_design"] == "studio-reference" and m["is_reference"] is False
    zc = design_responses([carrier(load_passive(COMPARE))]).passive_velocity().zpk(0)
    zr = design_responses(load_designs([ROOT / "models" / "studio-reference.toml"])[0]).velocity().zpk(0)
    for key, band in (("2k_4k", (2000.0, 4000.0)), ("4k_8k", (4000.0, 8000.0))):
        pc, c1k = _band_power_db(*zc, band)
        pr, _ = _band_power_db(*zr, band)
        assert m[f"band_{key}_re_1k_db"] == pytest.approx(pc - c1k, abs=1e-3)
        want = (pc - m["loudness_lufs_1v_full_scale"]) - (pr - ref["loudness_lufs_1v_full_scale"])
        assert m[f"matched_diff_{key}_db"] == pytest.approx(want, abs=1e-3)
    assert m["level_1k_db"] == pytest.approx(c1k, abs=1e-3)
    summary = (out / "summary.md").read_text(encoding="utf-8")
    row = next(line for line in summary.splitlines() if line.startswith("| workshop-passive (comparison pickup, passive) |"))
    cells = [c.strip() for c in row.strip("|").split("|")]
    assert cells[-1] == f"{m['matched_diff_2k_4k_db']:+.1f} / {m['matched_diff_4k_8k_db']:+.1f} dB"
    assert cells[-3] == f"{m['band_2k_4k_re_1k_db']:+.1f} dB" and cells[-4] == "no preamp"
    from render.report.clips import CLIPS_COLUMNS

    assert cells[1 + CLIPS_COLUMNS.index("loudness (1 V full scale)")] == f"{m['loudness_lufs_1v_full_scale']:.1f} LUFS"
    assert cells[1 + CLIPS_COLUMNS.index("margin (played) up / down")] == cells[1 + CLIPS_COLUMNS.index("limit reached at")] == "no preamp"


def test_the_page_carries_the_comparison_pickup(run):
    out, _ = run
    html = (out / "index.html").read_text(encoding="utf-8")
    data = json.loads(re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S).group(1))
    entry = data["designs"][-1]
    assert entry["key"] == "workshop-passive" and entry["role"] == "compare" and entry["response"] is not None
    assert "comparison pickup" in entry["name"] and len(entry["matched_level_db"]) == 2
    assert 'window.renderPageClips["workshop-passive"]' in (out / "index-clips.js").read_text(encoding="ascii")


def _summary_column(page, col):
    return page.eval_on_selector_all("#summary tbody tr", f"rows => rows.map(r => r.children[{col}].textContent)")


def test_in_the_browser_the_comparison_pickup_plays_beside_every_design(chromium, run):  # noqa: F811
    out, recs = run
    page, errors = open_page(chromium, (out / "index.html").as_uri())
    assert page.get_attribute("body", "data-decoded") == str(len(KEYS))
    assert page.eval_on_selector_all(".row", "rows => rows.map(r => r.classList.contains('compare'))") == [False] * 3 + [True]
    assert "passive comparison pickup" in page.inner_text('.row[data-index="3"]')
    assert "workshop-passive (comparison pickup, passive)" in _summary_column(page, 1)[3]
    assert page.locator("#responses path.compare-curve").count() == 1  # in the overlay while a design is heard
    volts = {k: sf.read(out / f"{k}.wav", dtype="float64")[0] * recs[k]["volts_full_scale"] for k in ("studio-reference", "workshop-passive")}
    y, fs = render_offline(page, [{"at": 0.01, "volume": 0}, {"at": 0.02, "key": " "}, {"at": 0.7, "key": "c"}], 1.5)  # C: the comparison pickup's own key
    lag0, g0 = locate(y, volts["studio-reference"], int(0.1 * fs), int(0.6 * fs), range(0, int(0.2 * fs)))
    lag1, g1 = locate(y, volts["workshop-passive"], int(0.8 * fs), int(1.45 * fs), range(lag0 - 5, lag0 + 6))
    assert lag1 == lag0  # the same playhead
    loud = {k: recs[k]["loudness_lufs_1v_full_scale"] if k == "workshop-passive" else recs[k]["measurements"]["loudness_lufs_1v_full_scale"] for k in volts}
    assert abs((20 * math.log10(g1) - 20 * math.log10(g0)) - (loud["studio-reference"] - loud["workshop-passive"])) < 0.1  # matched as the designs are
    assert page.get_attribute("body", "data-heard") == "workshop-passive"
    assert errors == []


def _python_matched_cells(recs, reference):
    """The brightness column against ``reference`` (a stem), from the run's own figures: python's definition and format."""
    from render.analysis.brightness import band_power_db, loudness_matched_difference_db
    from render.analysis.comparison import compare_response
    from render.circuit.engine import responses
    from render.circuit.params import from_designs
    from render.design import load_designs
    from render.design.passive import load_passive

    designs = load_designs([ROOT / "models" / f"{m}.toml" for m in MODELS])[0]
    vel = responses(from_designs(designs)).velocity()
    p = load_passive(COMPARE)
    bands = ((2000.0, 4000.0), (4000.0, 8000.0))
    power = {m: [band_power_db(vel, b)[i] for b in bands] for i, m in enumerate(MODELS)}
    power["workshop-passive"] = [band_power_db(lambda f: compare_response(p, f)[None, :], b)[0] for b in bands]
    loud = {k: (recs[k].get("measurements") or recs[k])["loudness_lufs_1v_full_scale"] for k in KEYS}
    out = []
    for k in KEYS:
        if k == reference:
            out.append("reference")
            continue
        d = [loudness_matched_difference_db(power[k][j], power[reference][j], gain_db=-loud[k], reference_gain_db=-loud[reference]) for j in range(2)]
        out.append(" / ".join(f"{float(x):+.1f}" for x in d) + " dB")
    return out


def test_the_brightness_column_follows_the_reference_chosen_on_the_page(chromium, run):  # noqa: F811
    out, recs = run
    page, errors = open_page(chromium, (out / "index.html").as_uri())
    col = 1 + len(page.eval_on_selector_all("#summary thead th", "t => t.map(x => x.textContent)")[2:-2])  # the last of the run's columns
    assert "vs reference, loudness-matched" in page.eval_on_selector_all("#summary thead th", "t => t.map(x => x.textContent)")[col]
    summary = (out / "summary.md").read_text(encoding="utf-8").splitlines()
    as_written = [next(line for line in summary if line.startswith(f"| {k} |") or line.startswith(f"| {k} (")).strip("|").split("|")[-1].strip() for k in KEYS]
    assert _summary_column(page, col) == as_written  # the run's reference, as summary.md writes it
    for reference in ("ember-dark", "workshop-passive", "glasswing-bright"):
        page.select_option("#reference", str(KEYS.index(reference)))
        assert page.get_attribute("body", "data-reference") == str(KEYS.index(reference))
        got = _summary_column(page, col)
        want = _python_matched_cells(recs, reference)
        for k, g, w in zip(KEYS, got, want):
            if w == "reference":
                assert g == "reference"
                continue
            assert g == w, (reference, k, g, w)
    assert errors == []


def test_values_that_differ_from_the_reference_are_highlighted(chromium, run):  # noqa: F811
    from render.compare.page import design_values
    from render.design import load_designs

    out, _ = run
    designs = load_designs([ROOT / "models" / f"{m}.toml" for m in MODELS])[0]
    vals = {m: dict(design_values(d)) for m, d in zip(MODELS, designs)}
    page, errors = open_page(chromium, (out / "index.html").as_uri())
    page.keyboard.press("2")  # ember-dark heard, studio-reference the reference
    rows = page.eval_on_selector_all("#values tbody tr", "rows => rows.map(r => [r.children[0].textContent, r.classList.contains('differs')])")
    want = {k: v != vals["studio-reference"].get(k, "absent") for k, v in vals["ember-dark"].items()}
    assert dict(rows) == want and any(want.values()) and not all(want.values())
    assert page.get_attribute("#values", "data-differ") == str(sum(want.values()))
    page.check("#only-differ")
    shown = page.eval_on_selector_all("#values tbody tr", "rows => rows.map(r => r.children[0].textContent)")
    assert shown == [k for k, d in want.items() if d]
    page.select_option("#reference", "1")  # against itself: nothing differs
    assert page.get_attribute("#values", "data-differ") == "0" and page.locator("#values tbody tr").count() == 0
    page.select_option("#reference", "2")
    want2 = sum(v != vals["glasswing-bright"].get(k, "absent") for k, v in vals["ember-dark"].items())
    assert page.get_attribute("#values", "data-differ") == str(want2) and want2 > 0
    assert errors == []
