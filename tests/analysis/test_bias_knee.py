"""A divider that puts the bias inside a knee of the soft limit, and one that puts it at a limit.

The references are first principles and ngspice:

- the soft limit as README.md documents it ("The op-amp"; render/chain/limit.py's module text),
  f(x) = x − ψ(x − a) + ψ(b − x), a = high − knee, b = low + knee, with ψ(u) = 0 (u ≤ 0),
  u²/(4·knee) (0 ≤ u ≤ 2·knee), u − knee (beyond), written out here again: where f(bias) ≠ bias
  the output stage is on a knee with no signal, so that side's onset is reached at rest;
- a sine of known level A about the bias V_b through it: the stage is on the knee while
  V_b + A·sin θ < b, a share 1/2 + asin((b − V_b)/A)/π of the period for A > b − V_b
  (all of it for A ≤ b − V_b), and the margin on the other side is 20·log10((a − V_b)/A);
- ngspice transients (tests/chain/spice_loop.py: the netlist writer's elements, gear, 10 µs steps)
  of a 60 ms burst: the output's resting point is ngspice's operating point before the burst.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from chain.spice_loop import loop_transient
from click.testing import CliRunner

from render.analysis.bias import knee_at_rest, onset, sweep, velocity_to_amp_output
from render.analysis.headroom import AT_REST, played_headroom
from render.analysis.recovery import NO_OFFSET, NO_RETURN, burst_figures, recovery_cell
from render.chain.limit import design_window
from render.chain.stream import make_plan, render_signal
from render.cli import main
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
FS = 48000


def _design(ratio, model=REF, battery=None):
    return sweep(load_design(model), ratios=[ratio], batteries=None if battery is None else [battery])[0].design


def _psi(u, knee):
    return 0.0 if u <= 0 else u * u / (4 * knee) if u <= 2 * knee else u - knee


def _f(x, low, high, knee):
    """The soft limit, from the formula README.md gives (not render's code)."""
    return x - _psi(x - (high - knee), knee) + _psi((low + knee) - x, knee)


# studio-reference: 9 V, margins 1 V, knee 0.5 V (models/studio-reference.toml): the knees are 1..1.5 V and 7.5..8 V
@pytest.mark.parametrize("ratio, side", [(0.12, "down"), (0.15, "down"), (0.85, "up"), (0.2, None), (0.5, None)])
def test_a_bias_inside_a_knee_has_its_onset_at_rest_on_that_side(ratio, side):
    d = _design(ratio)
    low, high, knee = d.limit_low_v, d.limit_high_v, d.supply.knee
    on_knee = _f(d.bias_v, low, high, knee) != d.bias_v  # the stage bends the bias itself
    assert on_knee == (side is not None)
    o = onset(d)
    assert o["at_rest"] == side and knee_at_rest(d) == {"down": "low", "up": "high", None: None}[side]
    g = velocity_to_amp_output(d, 1000.0)
    for s, room in (("up", high - knee - d.bias_v), ("down", d.bias_v - low - knee)):
        # never negative: 0 m/s where the onset is reached at rest, else the room over the gain
        assert o[f"velocity_{s}_m_per_s"] == (0.0 if s == side else pytest.approx(room / g, rel=1e-12))
    if side is not None:
        assert o["first_side"] == side


@pytest.mark.parametrize("amp_v", [0.1, 0.3])
def test_a_sine_about_a_bias_in_the_knee_is_limited_as_long_as_it_stays_in_it(amp_v):
    # ratio 0.15: V_b = 1.35 V, b = 1.5 V, so the sine is on the knee while it is 0.15 V or more below its peak's
    # other side: A = 0.1 V, all the time; A = 0.3 V, 1/2 + asin(0.5)/π = 2/3 of it
    from render.analysis.headroom import from_record
    from render.cli.headroom_print import bias_phrase_lines
    from render.compare.folders import played_limit_cells

    d = _design(0.15)
    plan = make_plan(d, sample_rate=FS)
    w = design_window(d)
    g = velocity_to_amp_output(d, 1000.0)
    t = np.arange(FS) / FS
    r = render_signal(d, np.sin(2 * np.pi * 1000.0 * t) * amp_v / g, sample_rate=FS, hum=False, plan=plan)
    depth = w.linear_low - d.bias_v
    share = 1.0 if amp_v <= depth else 0.5 + math.asin(depth / amp_v) / math.pi
    # the sine's first cycles pass series_c's start (τ 22.5 ms), so the share is the steady one to 1 %
    assert r["clipped_fraction"] == pytest.approx(share, abs=0.01)
    h = played_headroom(linear_min_v=r["linear_min_v"], linear_max_v=r["linear_max_v"], bias_v=plan.bias_v, window=w, limited_fraction=r["clipped_fraction"], strongest_pluck_m=3e-3)
    assert h.at_rest("down") and not h.at_rest("up")
    assert h.margin_up_db == pytest.approx(20 * math.log10((w.linear_high - d.bias_v) / amp_v), abs=0.2)
    rec = h.record()
    # the down side: limited at rest, never a dB figure; the limit is reached at a pluck of 0
    assert rec["played_margin_down_db"] is None and rec["played_margin_down_db_reason"] == AT_REST
    assert rec["limit_db_above_played"] is None and rec["limit_db_above_played_reason"] == AT_REST
    assert rec["limit_strength_down_m"] == 0.0 and rec["limit_strength_m"] == 0.0 and rec["limited"]
    back = from_record(rec)
    assert back is not None and back.margin_db is None
    row = bias_phrase_lines(["ratio 0.15, 9 V"], [back])[2]
    assert "/ at rest" in row and "/ limited at rest" in row and "no swing" not in row and " none" not in row
    mm, db, limited = played_limit_cells(rec)
    assert mm.endswith("/ at rest") and db.endswith("/ limited at rest") and limited != "none"


def test_render_bias_says_at_rest_in_the_table_json_and_warning(tmp_path):
    js = tmp_path / "b.json"
    res = CliRunner().invoke(main, ["bias", str(REF), "--ratios", "0.15,0.85", "--no-clips", "--json", str(js)])
    assert res.exit_code == 0, res.output
    rows = {r["ratio"]: r for r in json.loads(js.read_text())["settings"]}
    for ratio, side in ((0.15, "down"), (0.85, "up")):
        o = rows[ratio]["onset"]
        assert o["at_rest"] == side and o[f"velocity_{side}_m_per_s"] == 0.0 and o[f"emf_{side}_v"] == 0.0
        assert rows[ratio]["rests_on_limit"] is None
        assert min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) >= 0
    assert rows[0.5]["onset"]["at_rest"] is None
    lines = res.output.splitlines()
    low = next(x for x in lines if x.strip().startswith("ratio 0.15"))
    high = next(x for x in lines if x.strip().startswith("ratio 0.85"))
    assert "/ at rest" in low and "at rest /" in high and "-0." not in low.split("V")[2]
    assert "warning: ratio 0.15, 9 V: the bias 1.35 V lies inside the soft limit's low knee (1..1.5 V)" in res.output


def _spice_burst(d, vel, stop=0.31):
    rate = 384000.0
    ts = np.arange(int(round(stop * rate)) + 1) / rate
    vs = np.where(ts < 0.06, vel * np.sin(2 * np.pi * 1000.0 * ts), 0.0)
    return loop_transient(d, ts, vs, stop=stop, max_step=1e-5)


def test_an_output_resting_at_its_limit_returns_to_that_resting_point():
    # ratio 0.11111112 of 9 V: the bias (1.00000008 V) lies 80 nV above the 1 V limit; with the loop's finite gain
    # the output rests on the limit. ngspice: 1.0000 V before the burst and from 2 ms after it to the end.
    # So it is back at its own resting point: "no offset", not "does not return"
    d = _design(0.11111112)
    tt, sp = _spice_burst(d, 9.12)
    rest = sp["out"][0]
    after = tt >= 0.062
    assert np.abs(sp["out"][after] - rest).max() < 1e-4
    ours = burst_figures(d, velocity_peak=9.12)
    assert ours["dc_v"] == pytest.approx(rest, abs=1e-4)
    assert ours["recovery_offset_v"] == 0.0 and ours["recovery_tau_s_reason"] == NO_OFFSET and ours["recovery_held_s"] == 0.0
    assert recovery_cell(ours) == "no offset"


def test_an_output_held_away_from_its_resting_point_does_not_return():
    # the contrast: high-rail-18v at 60 V, ratio 0.02, rests at 1.19999 V (ngspice's operating point) inside the
    # low knee; after the burst ngspice holds the output on the 1 V limit for the whole 0.25 s after it
    d = _design(0.02, ROOT / "models" / "high-rail-18v.toml", battery=60.0)
    tt, sp = _spice_burst(d, 11.4)
    rest = sp["out"][0]
    assert np.abs(sp["out"][tt >= 0.062] - d.limit_low_v).max() < 1e-3 and rest - d.limit_low_v > 0.19
    ours = burst_figures(d, velocity_peak=11.4)
    assert ours["dc_v"] == pytest.approx(rest, abs=1e-6)
    assert ours["recovery_offset_v"] is None and ours["recovery_offset_v_reason"] == NO_RETURN
