"""The closed loop's low-frequency transfer from the linear op-amp output to the output
(render.chain.loop.static_transfer, the curve of ``render bias``'s transfer plot).

Checked against closed forms (the feedback fraction as a resistive divider, Ohm's law; the loop's
equation solved by scipy's brentq root finder, Brent, "Algorithms for minimization without
derivatives", 1973, ch. 4) and against the render's own loop solver driven by a 100 Hz sine.
"""

from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import brentq

from render.analysis.bias import sweep
from render.chain.limit import design_window, soft_limit
from render.chain.loop import static_loop_gain, static_transfer
from render.chain.stream import interpolate, limiter_output, make_plan
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
FS = 48000
DESIGN = sweep(load_design(ROOT / "models" / "studio-reference.toml"), ratios=[0.5])[0].design  # window 1 … 8 V, knee 0.5 V


def test_loop_gain_is_the_open_loop_gain_times_the_resistive_feedback_fraction():
    # at low frequency series_c is a short, the coil its DC resistance and the capacitors open: the
    # feedback fraction is the divider (series_r + R_coil)/(series_r + R_coil + feedback r) (Ohm's law)
    d = DESIGN
    low = d.input_a.series_r + d.coil_a.resistance
    beta = low / (low + d.feedback.r)
    assert static_loop_gain(d) == pytest.approx(d.supply.open_loop_gain * beta, rel=1e-9)


def test_static_transfer_against_closed_forms():
    win = design_window(DESIGN)
    gain = static_loop_gain(DESIGN)
    # on the output stage's identity part the closed loop is the identity
    inside = np.linspace(win.linear_low, win.linear_high, 101)
    assert np.array_equal(static_transfer(inside, window=win, loop_gain=gain), inside)
    # across the knees: x + L·f(x) = (1 + L)·x_lin solved by brentq, V_o = f(x); the loop holds V_o within
    # knee/(1 + L) of x_lin (f(x) ≤ x ≤ f(x) + knee on a knee)
    xs = np.concatenate([np.linspace(win.linear_high, win.high + 0.4, 40), np.linspace(win.low - 0.4, win.linear_low, 40)])
    for x_lin in xs:

        def g(x, x_lin=x_lin):
            return x + gain * float(soft_limit(x, window=win)) - (1 + gain) * x_lin

        x = brentq(g, win.low - 20 * (1 + gain), win.high + 20 * (1 + gain), xtol=1e-13)
        got = float(static_transfer(x_lin, window=win, loop_gain=gain))
        assert got == pytest.approx(float(soft_limit(x, window=win)), abs=1e-10)
        if win.low <= x_lin <= win.high:
            assert 0 <= abs(x_lin - got) <= win.knee / (1 + gain) + 1e-12
    # the rail is reached at x_lin = high + knee/(1 + L) and not before
    reach = win.high + win.knee / (1 + gain)
    assert float(static_transfer(reach, window=win, loop_gain=gain)) == pytest.approx(win.high, abs=1e-12)
    assert float(static_transfer(reach - 0.1 * win.knee / (1 + gain), window=win, loop_gain=gain)) < win.high


@pytest.mark.parametrize(
    "peak_v, expected_v",
    # expected_v from the closed form above: the loop holds the output within knee/(1 + L) of the linear
    # value up to the 8 V rail and at the rail beyond, i.e. min(peak_v, 8 V). For the record, render's own
    # loop read 7.699989, 7.899975, 8.000000, 8.000000 V (render's figures, not a reference), where the
    # output stage alone, soft_limit, gives 7.680, 7.820, 7.916, 8.000 V
    [(7.7, 7.7), (7.9, 7.9), (8.09, 8.0), (8.5, 8.0)],
)
def test_static_transfer_against_a_rendered_low_frequency_sine(peak_v, expected_v):
    plan = make_plan(DESIGN, sample_rate=FS)
    gain = static_loop_gain(DESIGN)
    n = int(0.2 * FS)
    v_lin = (peak_v - plan.bias_v) * np.sin(2 * np.pi * 100.0 * np.arange(n) / FS)
    vo, _ = limiter_output(plan, v_lin)  # the loop's output at 4× the rate, step j ending at x_lin's sample j
    x_lin = interpolate(v_lin, up=plan.resampler.up, oversample=plan.resampler.oversample)[: vo.size] + plan.bias_v
    late = slice(vo.size // 2, None)
    assert vo[late].max() == pytest.approx(expected_v, abs=1e-4)
    assert vo[late].max() == pytest.approx(float(static_transfer(x_lin[late].max(), window=plan.window, loop_gain=gain)), abs=1e-4)
    if peak_v < plan.window.high:
        # on the knee the whole waveform follows the static transfer (measured within 1e-4 V), not the
        # output stage's window (off by up to 0.02 and 0.08 V)
        assert np.abs(vo[late] - static_transfer(x_lin[late], window=plan.window, loop_gain=gain)).max() < 3e-4
