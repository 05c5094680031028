"""What render clips, bias and blind print about headroom for what is played.

The figures are checked against first principles in tests/analysis/test_headroom.py;
here: they are printed, with units, and consistent with the JSON (a rule of ours).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def test_clips_prints_headroom_and_strength_scales_it(tmp_path):
    runs = {}
    for s in ("1mm", "2mm"):
        res = CliRunner().invoke(main, ["clips", str(REF), "--seconds", "2", "--no-plots", "--strength", s, "--out", str(tmp_path / s)])
        assert res.exit_code == 0, res.output
        assert f"strongest pluck {float(s[:-2]):.2f} mm" in res.output and "limit reached at" in res.output
        runs[s] = json.loads((tmp_path / s / "studio-reference.json").read_text())["measurements"]
    a, b = runs["1mm"], runs["2mm"]
    # twice the pluck: every excursion doubles (linear string), so the margin drops 20·log10(2) dB
    assert b["played_margin_up_db"] == pytest.approx(a["played_margin_up_db"] - 20 * math.log10(2), abs=0.01)
    assert b["limit_strength_m"] == pytest.approx(a["limit_strength_m"], rel=2e-3)
    summary = (tmp_path / "2mm" / "summary.md").read_text()
    assert "0.00 %" not in summary


def test_clips_strength_refuses_a_recording(tmp_path):
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(ROOT / "dry_signals" / "last_chord_2s.wav"), "--strength", "2mm", "--out", str(tmp_path / "x")])
    assert res.exit_code == 1 and "goes with a phrase file" in res.output


def test_bias_prints_the_phrase_at_each_setting(tmp_path):
    js = tmp_path / "b.json"
    res = CliRunner().invoke(main, ["bias", str(REF), "--ratios", "0.3,0.7", "--seconds", "1", "--strength", "3mm", "--out", str(tmp_path / "b"), "--json", str(js)])
    assert res.exit_code == 0, res.output
    assert "ratio 0.50 (own), 9 V" in res.output
    assert "the phrase at each setting (strongest pluck 3.00 mm)" in res.output
    data = json.loads(js.read_text())
    assert [r["setting"] for r in data["settings"]] == ["ratio 0.30, 9 V", "ratio 0.50 (own), 9 V", "ratio 0.70, 9 V"]
    for row in data["settings"]:
        h = row["clip"]["headroom"]
        # the onset as a pluck: the strongest pluck times k = (onset − hum peak) / string peak (the hum does not scale)
        k = (h["limit_onset_up_v"] - h["hum_excursion_up_v"]) / h["string_excursion_up_v"]
        assert h["limit_strength_up_m"] == pytest.approx(3e-3 * k)
        # the hum a small share of the swing here: within a thousandth of the margin's amplitude ratio
        assert h["limit_strength_up_m"] == pytest.approx(3e-3 * 10 ** (h["played_margin_up_db"] / 20), rel=1e-3)
        assert h["limited"] == (h["clipped_fraction"] > 0)


def test_blind_prints_headroom(tmp_path):
    res = CliRunner().invoke(main, ["blind", str(REF), str(ROOT / "models" / "ember-dark.toml"), "--seconds", "1", "--trials", "2", "--out", str(tmp_path / "s")])
    assert res.exit_code == 0, res.output
    assert "headroom for what is played" in res.output and "ember-dark" in res.output


def test_blind_marks_a_construction_designs_limit_as_a_linear_guess(tmp_path):
    # blind renders the bare velocity; the [construction]'s sensing is still not linear in the pluck, so its
    # strength at the limit is the linear guess, printed with ≈ and recorded as such (README: Headroom)
    poles, blades = (ROOT / "models" / f"slipway-steel-{k}.toml" for k in ("poles", "blades"))
    res = CliRunner().invoke(main, ["blind", str(poles), str(blades), "--seconds", "1", "--trials", "2", "--seed", "1", "--out", str(tmp_path / "s")])
    assert res.exit_code == 0, res.output
    rows = [x for x in res.output.splitlines() if x.strip().startswith("slipway-steel-") and " mm " in x]
    assert len(rows) == 2 and all("≈" in x for x in rows), res.output
    assert "≈: a linear guess" in res.output
    key = (tmp_path / "s" / "private" / "key.json").read_text()
    assert key.count('"limit_strength_method": "linear-guess"') == 2 and '"limit_strength_method": "linear"' not in key


def test_a_strength_beyond_playing_warns_with_its_limit_and_origin():
    from render.runs.bias import check_strength

    (w,) = check_strength(6e-3, ROOT / "dry_signals" / "default.toml")
    assert "--strength=6mm is far beyond realistic playing (above 5 mm, common practice, no source)" in w
    assert check_strength(4e-3, ROOT / "dry_signals" / "default.toml") == ()
