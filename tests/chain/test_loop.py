"""The preamp's loop as a nonlinear circuit (render.chain.loop): its network against the
engine's linear algebra, the linear region, the decay of the correction, the time stepping.

The engine's responses are themselves checked against ngspice AC analyses in tests/circuit;
the transients against ngspice are in test_loop_against_ngspice.py.
"""

import dataclasses
from pathlib import Path

import numpy as np
import pytest
from chain.measure import spectrum, tones

from render.analysis.bias import onset, sweep
from render.chain import loop as lp
from render.chain.stream import Renderer, make_plan, render_signal
from render.circuit.engine import design_responses
from render.circuit.params import from_designs
from render.design import load_design
from render.impedance.ladder import Ladder

ROOT = Path(__file__).resolve().parents[2]
FS = 48000
REF = load_design(ROOT / "models" / "studio-reference.toml")


def _variant(design, *, supply=None, coil_a=None, input_a=None, feedback=None):
    return dataclasses.replace(
        design,
        supply=dataclasses.replace(design.supply, **(supply or {})),
        coil_a=dataclasses.replace(design.coil_a, **(coil_a or {})),
        input_a=dataclasses.replace(design.input_a, **(input_a or {})),
        feedback=dataclasses.replace(design.feedback, **(feedback or {})),
    )


VARIANTS = {
    "reference": REF,
    "no-gbw": _variant(REF, supply={"gbw": None}),
    "low-gain": _variant(REF, supply={"open_loop_gain": 300.0}),
    "shorted-secondary": _variant(REF, coil_a={"eddy_coupling": 0.3, "eddy_corner": 3000.0, "eddy_resistance": None}),
    "no-feedback-c-load-r": _variant(REF, feedback={"c": None}, input_a={"load_r": 47e3, "load_c": None}),
    # an RL ladder (Foster form) in place of L and R_p, with and without its series inductance
    "ladder": _variant(REF, coil_a={"ladder": Ladder(1.2, (0.6, 0.25), (7e4, 2.6e3)), "inductance": 2.05, "eddy_resistance": None}),
    "ladder-no-series-l": _variant(REF, coil_a={"ladder": Ladder(0.0, (1.5, 0.5, 0.3), (2e5, 9e3, 800.0)), "inductance": 2.3, "eddy_resistance": None}),
}


def _loop_response(design, f):
    """V_out / e_a of the linear loop built from the network's state equations and the op-amp model."""
    net = lp.network(from_designs([design]))
    amp = lp.op_amp(design)
    n = net.a.shape[0]
    s = 2j * np.pi * np.asarray(f, float)
    a0 = amp.open_loop_gain
    out = []
    for si in s:
        if amp.tau_s is None:
            # x = A0·(V+ − V−), V_o = x, V+ = 0: V_o = −A0·(c·s + d_e·e + d_o·V_o)
            m = np.zeros((n + 1, n + 1), complex)
            m[:n, :n] = si * np.eye(n) - net.a
            m[:n, n] = -net.b_o
            m[n, :n] = a0 * net.c
            m[n, n] = 1 + a0 * net.d_o
            rhs = np.concatenate([net.b_e, [-a0 * net.d_e]])
        else:
            t = amp.tau_s
            m = np.zeros((n + 1, n + 1), complex)
            m[:n, :n] = si * np.eye(n) - net.a
            m[:n, n] = -net.b_o
            m[n, :n] = a0 * net.c / t
            m[n, n] = si + (1 + a0 * net.d_o) / t
            rhs = np.concatenate([net.b_e, [-a0 * net.d_e / t]])
        out.append(np.linalg.solve(m, rhs)[n])
    return np.array(out)


@pytest.mark.parametrize("name", list(VARIANTS))
def test_the_loops_network_is_the_engines_circuit(name):
    # the loop's state equations, closed with the linear op-amp, give the engine's closed-form
    # V_out/e_a (Sedra & Smith's difference amplifier with the coil networks as source impedances;
    # the engine is checked against ngspice in tests/circuit) to float rounding
    d = VARIANTS[name]
    f = np.geomspace(5.0, 50e3, 40)
    ref = design_responses([d]).amp.from_a()(f)[0]
    assert np.max(np.abs(_loop_response(d, f) / ref - 1)) < 1e-8


def _onset_velocity(design, f0=1000.0):
    o = onset(design, frequency_hz=f0)
    return min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"])


def test_below_the_limits_the_chain_is_linear_and_matches_the_engine():
    # a sine just short of the knee (0.5 dB below onset) stays on the identity part: the render is linear
    # (half the input gives half the output, to float rounding) and its tone at the amp input is
    # the engine's response within 0.01 dB
    t = np.arange(int(0.5 * FS)) / FS
    for f0 in (100.0, 1000.0, 5000.0):
        v = 10 ** (-0.5 / 20) * _onset_velocity(REF, f0) * np.sin(2 * np.pi * f0 * t)
        full = render_signal(REF, v, sample_rate=FS, hum=False)["out"]
        half = render_signal(REF, 0.5 * v, sample_rate=FS, hum=False)["out"]
        assert np.max(np.abs(full - 2 * half)) <= 1e-12 * np.max(np.abs(full))
        seg = slice(FS // 4, FS // 4 + FS // 5)  # 0.2 s: whole periods of each tone
        got = abs(tones(full[seg], [f0], sample_rate=FS)[0])
        want = abs(design_responses([REF]).velocity()(f0)[0, 0]) * 10 ** (-0.5 / 20) * _onset_velocity(REF, f0)
        assert abs(20 * np.log10(got / want)) < 0.01


def test_the_correction_decays_and_the_loop_stops():
    # after a clipped burst the correction decays with the loop's slowest mode; once every state is
    # below 1e-12 V of stored energy the loop hands back to the linear path for good
    plan = make_plan(REF)
    r = Renderer(plan, hum=False)
    t = np.arange(int(0.05 * FS)) / FS
    r.process(4 * _onset_velocity(REF) * np.sin(2 * np.pi * 1000 * t))
    assert r._loop.loop.active
    for _ in range(12):
        r.process(np.zeros(FS // 4))
    assert not r._loop.loop.active
    assert not np.any(r._loop.loop.z)


def test_recovery_time_is_the_linear_circuits_slowest_mode():
    # after the burst the loop is linear again: the op-amp output returns with the slowest pole of
    # the small-signal circuit (the engine's V_out/e_a, checked against ngspice in tests/circuit)
    from render.analysis.recovery import burst_figures

    d = sweep(REF, ratios=[0.3])[0].design
    poles = design_responses([d]).amp.from_a().zpk(0)[1]
    slowest = np.min(np.abs(poles.real))
    fig = burst_figures(d, velocity_peak=4 * _onset_velocity(d))
    assert fig["recovery_offset_v"] < -0.1  # the divider sits low: the low rail clips, the output comes back from below
    assert fig["recovery_tau_s"] == pytest.approx(1 / slowest, rel=0.05)


def _kernel_run(design, x_lin, *, rate, oversample):
    loop = lp.make_loop(design, sample_rate=rate)
    state = lp.LoopState(loop)
    state.start(x_lin[:2])
    _, vo, done, _ = state.run(x_lin[2:], start=0, loud=np.ones(x_lin.size // oversample + 1, dtype=bool), loud_base=0, oversample=oversample)
    assert done == x_lin.size - 3
    return vo  # vo[j]: the step ending at x_lin sample j + 2


@pytest.mark.parametrize("name", ["reference", "no-gbw"])
def test_no_ringing_at_the_clip_edges(name):
    # exact steps on each piece of the window and L-stable short steps across its corners: the op-amp
    # output at 192 kHz equals, sample for sample, the same loop run at 768 kHz (where the corners are
    # resolved four times finer) to a millivolt through hard clipping. The trapezoidal rule would ring
    # here at the Nyquist frequency, its factor (1 + hλ/2)/(1 − hλ/2) for the loop's own pole (hλ ≈ −17
    # at 192 kHz for 3 MHz) being about −0.8 per step (Hairer & Wanner, Solving ODEs II, §IV.3: no L-stability)
    d = VARIANTS[name]
    dc = lp.dc_output(d)
    amp = 8.0 * (d.limit_high_v - dc)
    out = {}
    for mult in (4, 16):
        rate = mult * FS
        t = np.arange(int(0.03 * rate)) / rate
        x_lin = dc + amp * np.sin(2 * np.pi * 1300 * t)
        out[mult] = _kernel_run(d, x_lin, rate=rate, oversample=mult)
    # step j of the 192 kHz run ends at t = (j + 2)/(4·fs), step 4j + 6 of the 768 kHz run too
    coarse, fine = out[4], out[16][6::4][: out[4].size]
    assert np.max(np.abs(coarse - fine)) < 1e-3


def test_slew_rate_needs_gbw():
    from render.design import parse_design
    from render.errors import InputError
    from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10

    data = tomllib.loads((ROOT / "models" / "studio-reference.toml").read_text())
    del data["supply"]["gbw"]
    data["supply"]["slew_rate"] = "13MV/s"
    with pytest.raises(InputError, match="slew_rate.*needs gbw"):
        parse_design(data, source="x.toml")
    data["supply"]["gbw"] = "3MHz"
    d = parse_design(data, source="x.toml")
    assert d.supply.slew_rate == pytest.approx(13e6) and d.supply.open_loop_gain == 1e5
    data["supply"]["slew_rate"] = "0.05V/us"  # the datasheet unit: 1 V/µs = 1e6 V/s (SI prefixes)
    assert parse_design(data, source="x.toml").supply.slew_rate == pytest.approx(5e4)


@pytest.mark.parametrize(
    "sample_rate, f0, before_worst_db, before_total_db",
    [
        # the renderer before the loop (commit 0b0afc1: the soft limit on the linear output, 4×
        # oversampled, first-order ADAA), measured with this test's code on the same signal
        (48000, 3100.0, -112.8, -108.7),
        (44100, 3000.0, -103.8, -99.9),
    ],
)
def test_anti_aliasing_is_no_worse_than_before(sample_rate, f0, before_worst_db, before_total_db):
    # a steady 3 kHz sine 10 dB past the clip onset: the non-harmonic content from 40 Hz to 20 kHz
    # (aliases; whole periods, 1 Hz bins) no higher than the previous renderer's, worst line and
    # total power both. At 48 kHz a 3000 Hz tone's aliases would land on its harmonics (48/3 = 16),
    # hence 3100 Hz there; at 44.1 kHz 3000 Hz is already incommensurate.
    fs = sample_rate
    o = onset(REF, frequency_hz=f0)
    vel = min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) * 10 ** (10 / 20)
    t = np.arange(int(2.5 * fs)) / fs
    r = render_signal(REF, vel * np.sin(2 * np.pi * f0 * t), sample_rate=fs, hum=False)
    seg = r["amp_out"][int(1.4 * fs) : int(1.4 * fs) + fs]  # after the operating point has settled
    f, a = spectrum(seg, sample_rate=fs)
    harmonic = np.abs(f / f0 - np.round(f / f0)) < 1e-6
    band = (f >= 40) & (f <= 20000) & ~harmonic
    fund = a[np.argmin(np.abs(f - f0))]
    assert 20 * np.log10(a[band].max() / fund) <= before_worst_db
    assert 10 * np.log10(np.sum(a[band] ** 2) / fund**2) <= before_total_db


def _burst_non_harmonic(sample_rate, f0, *, guard_hz=300.0):
    """(worst line dB, total dB) re the fundamental of the non-harmonic content, 300 Hz to 20 kHz, of a 60 ms burst.

    A burst of whole periods of ``f0`` at 10 dB past the clip onset after 0.5 s of rest; the op-amp
    output over the burst's span, mean removed, through a 4-term Blackman–Harris window (sidelobes
    −92 dB: Harris, Proc. IEEE 66(1), 1978, Table 1) so that the burst's own edges do not leak; the
    bins farther than ``guard_hz`` from every harmonic and from DC count (the window's main lobe is
    ±67 Hz here; the 300 Hz guard is common practice, no source).
    """
    from scipy.signal.windows import blackmanharris

    fs = sample_rate
    o = onset(REF, frequency_hz=f0)
    vel = min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) * 10 ** (10 / 20)
    nb = int(round(round(0.06 * f0) * fs / f0))
    pre = int(0.5 * fs)
    i = np.arange(pre + nb + int(0.2 * fs))
    x = np.where((i >= pre) & (i < pre + nb), vel * np.sin(2 * np.pi * f0 * (i - pre) / fs), 0.0)
    seg = render_signal(REF, x, sample_rate=fs, hum=False)["amp_out"][pre : pre + nb]
    w = blackmanharris(seg.size, sym=False)
    a = np.abs(np.fft.rfft((seg - seg.mean()) * w)) * 2 / w.sum()
    f = np.fft.rfftfreq(seg.size, 1 / fs)
    band = (f >= guard_hz) & (f <= 20000) & (np.abs(f - np.round(f / f0) * f0) >= guard_hz)
    fund = a[np.argmin(np.abs(f - f0))]
    return 20 * np.log10(a[band].max() / fund), 10 * np.log10(np.sum(a[band] ** 2) / fund**2)


@pytest.mark.parametrize(
    "sample_rate, f0, before_worst_db, before_excess_db",
    [
        # the renderer before the loop (commit 0b0afc1, extracted with git archive; models/studio-reference.toml
        # is unchanged since), measured with this test's code on the same burst: worst line, and total at fs
        # minus total at 4·fs (−105.86 − (−106.78); −96.53 − (−107.25))
        (48000, 3100.0, -122.21, 0.93),
        (44100, 3000.0, -104.03, 10.72),
    ],
)
def test_anti_aliasing_of_a_burst_is_no_worse_than_before(sample_rate, f0, before_worst_db, before_excess_db):
    # A 3 kHz burst (3.1 kHz at 48 kHz, as above) 10 dB past the onset: the loop's memory moves the operating
    # point during the burst, which puts real non-harmonic content below 20 kHz (the same at 4·fs, where aliases
    # fall far above the band: −103.3 dB here, against the memoryless renderer's −106.8 dB). What aliasing adds is
    # the total at fs over the total at 4·fs: no more than before (measured 0.66 and 0.32 dB), and the worst
    # non-harmonic line no higher than before (measured −124.6 and −123.9 dB).
    worst, total = _burst_non_harmonic(sample_rate, f0)
    _, alias_free = _burst_non_harmonic(4 * sample_rate, f0)
    assert worst <= before_worst_db
    assert total - alias_free <= before_excess_db
