"""Band levels re 1 kHz and loudness-matched differences (render.analysis.brightness).

References:
- the log-frequency mean of a first-order low-pass |H|² = 1/(1 + x²), x = f/fc,
  has the closed form [ln x − ½·ln(1 + x²)] between the band's ends, over
  ln(f2/f1) (the antiderivative of 1/(x(1 + x²)); any table of integrals, e.g.
  Gradshteyn & Ryzhik, Table of Integrals, 7th ed., 2007, 2.152);
- an engine design's band level is recomputed from its analog zeros, poles and
  gain with scipy.signal.freqs_zpk and integrated with scipy.integrate.quad;
- the loudness-matched difference is the level difference once both clips are
  played at one integrated loudness (ITU-R BS.1770-4): ΔL − Δloudness.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.integrate import quad
from scipy.signal import freqs, freqs_zpk

from render.analysis.brightness import band_levels_re_1k, band_power_db, brightness_records, loudness_matched_difference_db
from render.design import load_designs

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
BRIGHT = ROOT / "models" / "glasswing-bright.toml"
DARK = ROOT / "models" / "ember-dark.toml"


def batch(b, a):
    """A response callable like the engine's (frequency -> (1, F)) from an analog b, a (scipy.signal.freqs)."""
    return lambda f: freqs(b, a, worN=2 * np.pi * np.atleast_1d(np.asarray(f, float)))[1][None, :]


@pytest.mark.parametrize("fc,band", [(3000.0, (2000.0, 4000.0)), (3000.0, (4000.0, 8000.0)), (500.0, (2000.0, 4000.0))])
def test_first_order_lowpass_band_power_matches_the_closed_form(fc, band):
    wc = 2 * np.pi * fc
    got = band_power_db(batch([wc], [1.0, wc]), band)[0]
    x1, x2 = band[0] / fc, band[1] / fc
    anti = lambda x: np.log(x) - 0.5 * np.log1p(x * x)  # noqa: E731
    want = 10 * np.log10((anti(x2) - anti(x1)) / np.log(x2 / x1))
    assert got == pytest.approx(want, abs=1e-4)


def test_band_levels_re_1k_of_a_flat_response_are_zero():
    levels = band_levels_re_1k(lambda f: np.full((2, np.size(f)), 0.3 + 0j))
    assert all(np.allclose(v, 0.0, atol=1e-12) for v in levels.values())


def test_engine_band_levels_match_an_independent_integration():
    from render.circuit.engine import responses
    from render.circuit.params import from_designs

    designs = load_designs([REF, DARK])[0]
    vel = responses(from_designs(designs)).velocity()
    got = band_levels_re_1k(vel)
    for i in range(2):
        z, p, k = vel.zpk(i)

        def power(f):
            return float(np.abs(freqs_zpk(z, p, k, worN=[2 * np.pi * f])[1][0]) ** 2)

        at_1k = 10 * np.log10(power(1000.0))
        for key, (f1, f2) in (("2k_4k", (2000.0, 4000.0)), ("4k_8k", (4000.0, 8000.0))):
            mean = quad(lambda u: power(np.exp(u)), np.log(f1), np.log(f2), epsabs=0, epsrel=1e-10)[0] / np.log(f2 / f1)
            assert got[key][i] == pytest.approx(10 * np.log10(mean) - at_1k, abs=1e-3)


def test_matched_difference_is_level_difference_less_loudness_difference():
    designs = load_designs([REF, DARK])[0]
    rows = brightness_records(designs, [-30.0, -27.0], reference=0)
    assert rows[0]["matched_diff_2k_4k_db"] == 0.0 and rows[0]["is_reference"]
    from render.circuit.engine import responses
    from render.circuit.params import from_designs

    vel = responses(from_designs(designs)).velocity()
    p = band_power_db(vel, (4000.0, 8000.0))
    assert rows[1]["matched_diff_4k_8k_db"] == pytest.approx((p[1] - p[0]) - 3.0, abs=1e-12)
    # the same design twice: the same shape and loudness, so no difference
    rows = brightness_records([designs[0], designs[0]], [-30.0, -30.0], reference=1)
    assert rows[0]["matched_diff_4k_8k_db"] == pytest.approx(0.0, abs=1e-12)


def test_silent_reference_gives_words_not_numbers():
    designs = load_designs([REF, DARK])[0]
    rows = brightness_records(designs, [None, -27.0])
    assert rows[1]["matched_diff_2k_4k_db"] is None and "silent" in rows[1]["matched_diff_2k_4k_db_reason"]


def test_a_clip_shorter_than_one_loudness_block_says_so(tmp_path):
    # BS.1770-4 eq. 3-7 gate 400 ms blocks: a 0.3 s clip has no integrated loudness, silent or not
    from render.cli import main

    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), str(DARK), "--seconds", "0.3", "--out", str(out), "--no-plots"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    ref, dark = (json.loads((out / f"{n}.json").read_text())["measurements"] for n in ("studio-reference", "ember-dark"))
    assert ref["loudness_lufs_1v_full_scale"] is None and dark["loudness_lufs_1v_full_scale"] is None
    assert ref["matched_diff_2k_4k_db"] == 0.0  # the reference against itself
    assert dark["matched_diff_2k_4k_db"] is None and "shorter than one 400 ms block" in dark["matched_diff_2k_4k_db_reason"]


def test_matched_difference_helper_is_what_a_blind_session_plays():
    # played at gains g: (L_a + g_a) − (L_b + g_b)
    assert loudness_matched_difference_db(np.array([1.0, 2.0]), np.array([0.5, 0.5]), gain_db=-2.0, reference_gain_db=1.0).tolist() == [-2.5, -1.5]


def test_clips_records_and_summary_carry_the_figures_against_the_named_reference(tmp_path):
    from render.cli import main

    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), str(BRIGHT), "--seconds", "1", "--out", str(out), "--no-plots", "--reference", "glasswing-bright"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    a, b = (json.loads((out / f"{s}.json").read_text())["measurements"] for s in ("studio-reference", "glasswing-bright"))
    assert a["reference_design"] == b["reference_design"] == "glasswing-bright"
    assert b["matched_diff_2k_4k_db"] == 0.0
    designs = load_designs([REF, BRIGHT])[0]
    from render.circuit.engine import responses
    from render.circuit.params import from_designs

    p = band_power_db(responses(from_designs(designs)).velocity(), (2000.0, 4000.0))
    want = (p[0] - p[1]) - (a["loudness_lufs_1v_full_scale"] - b["loudness_lufs_1v_full_scale"])
    assert a["matched_diff_2k_4k_db"] == pytest.approx(want, abs=1e-9)
    summary = (out / "summary.md").read_text()
    assert "Reference: glasswing-bright." in summary and "| reference |" in summary
    assert f"{a['loudness_lufs_1v_full_scale']:.1f} LUFS" in summary  # the loudness column is re 1 V full scale
    assert '"reference":1' in (out / "index.html").read_text()  # the page opens with the same reference
    bad = CliRunner().invoke(main, ["clips", str(REF), "--seconds", "1", "--out", str(tmp_path / "x"), "--reference", "nope"])
    assert bad.exit_code == 1 and "--reference='nope'" in bad.output and not (tmp_path / "x").exists()


def test_the_comparison_pickup_can_be_the_reference(tmp_path):
    # "how much brighter than my usual passive pickup": --reference names the --compare pickup. Each design's
    # difference is ΔP − Δloudness against it, its band power integrated here with scipy.integrate.quad over ln f
    from render.analysis.comparison import compare_response
    from render.circuit.engine import responses
    from render.circuit.params import from_designs
    from render.cli import main
    from render.design.passive import load_passive

    passive = ROOT / "models" / "compare" / "workshop-passive.toml"
    out = tmp_path / "run"
    args = ["clips", str(REF), str(BRIGHT), "--compare", str(passive), "--seconds", "1", "--out", str(out), "--no-plots", "--reference", "workshop-passive"]
    res = CliRunner().invoke(main, args, catch_exceptions=False)
    assert res.exit_code == 0, res.output
    a, b, c = (json.loads((out / f"{s}.json").read_text())["measurements"] for s in ("studio-reference", "glasswing-bright", "workshop-passive"))
    assert a["reference_design"] == b["reference_design"] == c["reference_design"] == "workshop-passive"
    assert c["is_reference"] and not a["is_reference"] and not b["is_reference"]
    assert c["matched_diff_2k_4k_db"] == c["matched_diff_4k_8k_db"] == 0.0
    p = load_passive(passive)
    designs = load_designs([REF, BRIGHT])[0]
    loud_c = json.loads((out / "workshop-passive.json").read_text())["loudness_lufs_1v_full_scale"]
    for band in ((2000.0, 4000.0), (4000.0, 8000.0)):
        f1, f2 = band
        mean = quad(lambda u: abs(compare_response(p, np.array([np.exp(u)]))[0]) ** 2, np.log(f1), np.log(f2), limit=200)[0] / np.log(f2 / f1)
        p_c = 10 * np.log10(mean)
        p_d = band_power_db(responses(from_designs(designs)).velocity(), band)
        key = f"matched_diff_{band[0] / 1000:g}k_{band[1] / 1000:g}k_db"
        for m, pd in ((a, p_d[0]), (b, p_d[1])):
            assert m[key] == pytest.approx((pd - p_c) - (m["loudness_lufs_1v_full_scale"] - loud_c), abs=1e-3)
    summary = (out / "summary.md").read_text()
    assert "Reference: workshop-passive." in summary
    assert [line.rsplit("|", 2)[-2].strip() for line in summary.splitlines() if line.startswith("| workshop-passive")] == ["reference"]
    page = (out / "index.html").read_text()
    assert '"reference":2' in page  # the page opens with the comparison pickup (the third clip) as its reference
    bad = CliRunner().invoke(main, [*args[:-1], "workshop-pasive"])
    assert bad.exit_code == 1 and "no design of this run nor its comparison pickup" in bad.output and "did you mean 'workshop-passive'" in bad.output
