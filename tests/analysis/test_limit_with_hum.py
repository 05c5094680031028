"""Where the limit is reached when the hum does not grow with the pluck, checked in closed form.

A linear, time-invariant network turns a sine of peak V into a sine of peak
|H(f)|·V (Oppenheim & Willsky, *Signals and Systems*, 2nd ed., 1997, §3.2,
eigenfunction property). So a 1 kHz string velocity of peak v and a 50 Hz field
derivative of peak b give, at the op-amp output, a string part of peak
S = v·|H_s(1 kHz)| and a hum part of peak H = b·|H_h(50 Hz)| (|H_s| and |H_h|
the engine's, themselves checked against ngspice in tests/circuit). Scaling
the string by k and not the hum, the swing is at most k·S + H, so the limit
can be reached at k = (onset − H)/S: the same string level k·v whether the
string was played softly (the hum most of the swing) or loud.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from render.analysis.headroom import HUM_ALONE, HUM_ALONE_CELL, played_headroom, strength_cell
from render.chain.limit import Window, design_window
from render.chain.loop import dc_output
from render.chain.stream import render_signal
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
ODD = ROOT / "models" / "odd-pair.toml"  # its coils' hum does not cancel, so the hum path has a gain
FS = 48000


def _faded(f0: float, peak: float, seconds: float = 0.8, fade_s: float = 0.2) -> np.ndarray:
    """A sine of the given peak, faded in (raised cosine) so that no start-up transient overshoots the steady peak."""
    t = np.arange(int(seconds * FS)) / FS
    return peak * np.sin(2 * np.pi * f0 * t) * (0.5 - 0.5 * np.cos(np.pi * np.minimum(1.0, t / fade_s)))


def _gains(design) -> tuple[float, float]:
    """|H_s(1 kHz)| (V per m/s) and |H_h(50 Hz)| (V per T/s) to the op-amp output."""
    from render.analysis.bias import velocity_to_amp_output
    from render.circuit.engine import responses
    from render.circuit.params import from_designs

    r = responses(from_designs([design]))
    return velocity_to_amp_output(design, 1000.0), float(abs(r.amp.mix(r.hum_a, r.hum_b)(np.array([50.0]))[0, 0]))


def _headroom(design, v_peak: float, b_peak: float, pluck_m: float):
    from render.clip import render_headroom

    return render_headroom(design, render_signal(design, _faded(1000.0, v_peak), sample_rate=FS, db_dt=_faded(50.0, b_peak)), strongest_pluck_m=pluck_m)


@pytest.mark.parametrize("string_share", [1.0, 1e-4])  # the string as loud as the hum, and ten thousand times softer
def test_a_sine_plus_a_hum_sine_reaches_the_limit_where_k_s_plus_h_is_the_onset(string_share):
    d = load_design(ODD)
    gs, gh = _gains(d)
    win, bias = design_window(d), dc_output(d)
    onset = min(win.linear_high - bias, bias - win.linear_low)
    hum = onset / 3  # the hum's peak at the op-amp output: a third of the room
    v, b = string_share * hum / gs, hum / gh
    h = _headroom(d, v, b, pluck_m=string_share * 1e-3)
    # each part's peak is its sine's (to the 16-points-per-sample peak search and the filters' discretisation)
    for side in ("up", "down"):
        assert getattr(h, f"string_{side}_v") == pytest.approx(v * gs, rel=4e-3)
        assert getattr(h, f"hum_{side}_v") == pytest.approx(hum, rel=4e-3)
    k = (onset - hum) / (v * gs)
    assert h.scale_to_limit() == pytest.approx(k, rel=5e-3)
    assert h.limit_db_above == pytest.approx(20 * math.log10(k), abs=0.05)
    # the string level at the limit, k·v, does not depend on how softly it was played: the pluck at the limit is
    # 1 mm·(onset − H)/(H·gs/gs) = 2 mm whether the phrase's strongest pluck was 1 mm or 100 nm
    assert h.strength_at_limit_m() == pytest.approx(1e-3 * (onset - hum) / hum, rel=5e-3)


def test_the_hum_alone_at_the_onset_needs_no_pluck():
    # H ≥ onset: k = (onset − H)/S ≤ 0, so no pluck at all is needed; the figure is 0 mm, in words on a table
    window = Window(low=1.0, high=8.0, knee=0.5)  # onsets 2.5 V up and 3.5 V down from a 5 V bias
    parts = {"string_up_v": 0.5, "string_down_v": 0.5, "hum_up_v": 2.0, "hum_down_v": 3.6}
    h = played_headroom(linear_min_v=1.1, linear_max_v=7.4, bias_v=5.0, window=window, limited_fraction=0.0, strongest_pluck_m=1e-3, parts=parts)
    assert h.scale_to_limit("up") == pytest.approx((2.5 - 2.0) / 0.5) and h.scale_to_limit("down") == 0.0
    assert h.hum_alone("down") and not h.hum_alone("up") and h.strength_at_limit_m() == 0.0
    assert strength_cell(h, "down") == HUM_ALONE_CELL and strength_cell(h, "up") == "1.00 mm"
    rec = h.record()
    assert rec["limit_db_above_played"] is None and rec["limit_db_above_played_reason"] == HUM_ALONE
    assert rec["limit_strength_m"] == 0.0 and rec["hum_excursion_down_v"] == 3.6


def test_a_record_without_the_parts_scales_the_whole_swing():
    # a record from before the parts were kept: the whole swing taken to scale, k = onset / excursion
    from render.analysis.headroom import from_record

    window = Window(low=1.0, high=8.0, knee=0.5)
    rec = played_headroom(linear_min_v=4.5, linear_max_v=5.0, bias_v=4.5, window=window, limited_fraction=0.0, strongest_pluck_m=1e-3).record()
    assert "hum_excursion_up_v" not in rec
    assert from_record(rec).strength_at_limit_m() == pytest.approx(1e-3 * 3.0 / 0.5)


def test_where_the_limit_is_reached_does_not_depend_on_how_hard_the_phrase_was_played(tmp_path):
    """The README's ember-dark example: the pluck at the limit reads 1.30 mm at --strength 2n, 22n, 1mm and 6mm alike,
    though at the first two the hum is most of the swing (the rule above, k·S + H = onset, on the demo phrase: the
    string part is linear in the pluck, the modal string of Fletcher & Rossing 1998 §2.7)."""
    import json

    from click.testing import CliRunner

    from render.cli import main

    found = {}
    for strength in ("2n", "22n", "1mm", "6mm"):
        out = tmp_path / strength
        args = ["clips", str(ROOT / "models" / "ember-dark.toml"), "--strength", strength, "--seconds", "4", "--no-plots", "--out", str(out)]
        res = CliRunner().invoke(main, args)
        assert res.exit_code == 0, res.output
        m = json.loads((out / "ember-dark.json").read_text())["measurements"]
        found[strength] = (m["limit_strength_m"], m["hum_excursion_up_v"] / m["linear_excursion_up_v"])
    strengths = [s for s, _ in found.values()]
    assert max(strengths) / min(strengths) - 1 < 1e-6
    assert f"{strengths[0] * 1e3:.2f}" == "1.30"  # as the README prints it
    # the hum's share of the swing, as the README gives it: 82 % at 2n, 26 % at 22n, next to nothing at 6 mm
    assert (round(100 * found["2n"][1]), round(100 * found["22n"][1])) == (82, 26)
    assert found["6mm"][1] < 0.01
