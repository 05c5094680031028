"""The whole chain in the time domain: against the engine, against ngspice, the
limiter's spectra, hum, streaming and speed.

The engine's responses used as references here are themselves checked
against ngspice AC analyses in tests/circuit.
"""

import dataclasses
from pathlib import Path

import numpy as np
import pytest
import scipy.signal as ss
from chain.measure import harmonic_ratios, spectrum, tones
from spice import active_netlist, run_transient

from render.chain.hum import field_rate, harmonic_frequencies
from render.chain.stream import (
    Renderer,
    decimate,
    design_resampler,
    interpolate,
    limiter_output,
    make_plan,
    render_blocks,
    render_signal,
)
from render.circuit.engine import design_responses
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
MODELS = sorted((ROOT / "models").glob("*.toml"))
FS = 48000
REF = load_design(ROOT / "models" / "studio-reference.toml")
TONES = np.array([20, 50, 100, 200, 500, 1000, 2000, 3000, 4000, 5000, 6000, 8000, 10000, 12000, 14000, 16000, 18000, 20000])


def _sine_for(design, f0, peak_v, seconds):
    """A velocity sine (same at both coils) giving ``peak_v`` at the op-amp output (linear)."""
    h = design_responses([design]).velocity_to_amp_output()(f0)[0]
    t = np.arange(int(seconds * FS)) / FS
    return peak_v / abs(h) * np.sin(2 * np.pi * f0 * t)


def _headroom(design):
    return min(design.headroom_up_v, design.headroom_down_v)


def _with_bias(design, bias_v):
    """The design with bias_bottom changed to put the divider's output at ``bias_v``."""
    ib = design.input_b
    bottom = bias_v * ib.bias_top / (design.supply.battery - bias_v)
    return dataclasses.replace(design, input_b=dataclasses.replace(ib, bias_bottom=bottom))


# --- the resampler ------------------------------------------------------------------


def test_polyphase_resampling_matches_upfirdn():
    # scipy.signal.upfirdn is the reference for zero-insertion/filtering/decimation
    res = design_resampler(sample_rate=FS, oversample=4)
    x = np.random.default_rng(1).standard_normal(3000)
    assert np.allclose(interpolate(x, up=res.up, oversample=4), ss.upfirdn(res.up, x, up=4)[: 4 * x.size], rtol=0, atol=1e-13)
    w = np.random.default_rng(2).standard_normal(4 * 3000)
    assert np.allclose(decimate(w, down=res.down, oversample=4), ss.upfirdn(res.down, w, down=4)[:3000], rtol=0, atol=1e-13)


def test_resampler_linear_path_is_flat_and_rejects_aliases():
    res = design_resampler(sample_rate=FS, oversample=4)
    f = np.linspace(0, 20000, 500)
    _, h = ss.freqz(res.linear, worN=f, fs=FS)
    h = h * np.exp(2j * np.pi * f / FS * res.delay)
    assert np.max(np.abs(20 * np.log10(np.abs(h)))) < 0.005
    assert np.max(np.abs(h.imag)) < 1e-9  # linear phase: a pure delay of `delay` samples
    stop = np.linspace(FS - 20000, 2 * FS, 3000)
    _, hu = ss.freqz(res.up / 4, worN=stop, fs=4 * FS)
    _, hd = ss.freqz(res.down, worN=stop, fs=4 * FS)
    assert 20 * np.log10(np.abs(hu).max()) < -99 and 20 * np.log10(np.abs(hd).max()) < -100


def test_bypass_equals_the_oversampled_path():
    # forcing every sample through the oversampled limiter changes nothing while it stays linear
    plan = make_plan(REF)
    forced = dataclasses.replace(plan, resampler=dataclasses.replace(plan.resampler, gain_bound=np.inf))
    v = _sine_for(REF, 3000.0, 0.3 * _headroom(REF), 0.2) * np.hanning(int(0.2 * FS))
    a = render_signal(REF, v, sample_rate=FS, plan=plan)
    b = render_signal(REF, v, sample_rate=FS, plan=forced)
    assert np.max(np.abs(a["out"] - b["out"])) < 1e-12 * np.max(np.abs(a["out"]))
    assert np.max(np.abs(a["amp_out"] - b["amp_out"])) < 1e-12


# --- linear accuracy -----------------------------------------------------------------


def _multitone(design, seconds, which=(1.0, 1.0)):
    """Integer-hertz tones (1 s period), sized to stay well inside the limiter's identity region."""
    r = design_responses([design])
    h = np.abs(r.velocity_to_amp_output()(TONES)[0])
    amp = 0.05 * _headroom(design) / (TONES.size * h.max())
    t = np.arange(int(seconds * FS)) / FS
    phase = np.arange(TONES.size) * 0.7
    v = amp * np.sum(np.cos(2 * np.pi * TONES[:, None] * t + phase[:, None]), axis=0)
    return np.stack([which[0] * v, which[1] * v]), amp, phase


@pytest.mark.parametrize("path", MODELS, ids=[p.stem for p in MODELS])
def test_multitone_matches_the_engine(path):
    # steady-state multitone through the time-domain chain vs the engine's analog response:
    # 0.1 dB to 16 kHz, 0.5 dB to 20 kHz (the renderer's accuracy promise)
    design = load_design(path)
    v, amp, phase = _multitone(design, 4.0)
    r = render_signal(design, v, sample_rate=FS, hum=False)
    got = tones(r["out"][3 * FS :], TONES, sample_rate=FS) / (amp * np.exp(1j * phase))
    ref = design_responses([design]).velocity()(TONES)[0]
    err = 20 * np.log10(np.abs(got / ref))
    assert np.max(np.abs(err[TONES <= 16000])) < 0.1
    assert np.max(np.abs(err)) < 0.5
    assert np.max(np.abs(np.degrees(np.angle(got / ref)))[TONES <= 16000]) < 1.0
    assert r["clipped_fraction"] == 0.0


@pytest.mark.parametrize("coil", ["a", "b"])
def test_each_coil_path_matches_the_engine(coil):
    which = (1.0, 0.0) if coil == "a" else (0.0, 1.0)
    v, amp, phase = _multitone(REF, 4.0, which)
    r = render_signal(REF, v, sample_rate=FS, hum=False)
    got = tones(r["out"][3 * FS :], TONES, sample_rate=FS) / (amp * np.exp(1j * phase))
    resp = design_responses([REF])
    ref = (resp.from_a()(TONES)[0] * resp.sig_a[0]) if coil == "a" else (resp.from_b()(TONES)[0] * resp.sig_b[0])
    err = 20 * np.log10(np.abs(got / ref))
    assert np.max(np.abs(err[TONES <= 16000])) < 0.1 and np.max(np.abs(err)) < 0.5


def test_against_an_ngspice_transient():
    # the same circuit and input in ngspice (transient, trapezoidal, 1 µs steps; Debian package
    # ngspice): tone levels within 0.2 dB in band. ngspice reads the input at 192 kHz and
    # interpolates linearly, which scales a tone at f by sinc²(f/192 kHz): divided out below.
    seconds = 0.2
    freqs = np.array([100, 330, 1000, 2500, 5000, 8000, 12000, 16000, 19000])  # whole cycles in 0.1 s

    def drive(t):
        fade = 0.5 - 0.5 * np.cos(np.pi * np.clip(t / 0.02, 0, 1))
        return 1e-3 * fade * sum(np.cos(2 * np.pi * f * t + 0.3 * i) for i, f in enumerate(freqs))

    wa = REF.coil_a.signal_polarity * REF.coil_a.sensitivity
    wb = REF.coil_b.signal_polarity * REF.coil_b.sensitivity
    t_in = np.arange(int(seconds * 192000) + 1) / 192000
    ts, vs = run_transient(active_netlist(REF, wa=wa, wb=wb), t_in, drive(t_in), stop=seconds, step=1e-6)
    t = np.arange(int(seconds * FS)) / FS
    r = render_signal(REF, drive(t), sample_rate=FS, hum=False)
    seg = slice(int(0.1 * FS), t.size)
    ours = tones(r["out"][seg], freqs, sample_rate=FS)
    theirs = tones(np.interp(t, ts, vs)[seg], freqs, sample_rate=FS) / np.sinc(freqs / 192000) ** 2
    assert np.max(np.abs(20 * np.log10(np.abs(ours / theirs)))) < 0.2
    assert np.max(np.abs(np.degrees(np.angle(ours / theirs)))) < 1.0


# --- the soft limit through the chain ----------------------------------------------------


@pytest.mark.parametrize("f0", [1000.0, 2500.0])
def test_centred_bias_gives_no_even_harmonics(f0):
    # the limit is an odd function about the window's centre, so a sine driven 12 dB past the
    # limit (4× the headroom) keeps half-wave symmetry: even harmonics below -80 dB (Fourier)
    assert REF.bias_v == pytest.approx(0.5 * (REF.limit_low_v + REF.limit_high_v))
    v = _sine_for(REF, f0, 4 * _headroom(REF), 1.5)
    r = render_signal(REF, v, sample_rate=FS, hum=False)
    y = r["amp_out"][FS // 4 : FS // 4 + FS]
    ratios = harmonic_ratios(y - y.mean(), f0, sample_rate=FS, count=8)
    assert np.max(ratios[1::2]) < 10 ** (-80 / 20)
    assert r["clipped_fraction"] > 0.5


def test_the_limiter_output_never_leaves_the_window():
    plan = make_plan(REF)
    t = np.arange(FS // 2) / FS
    for f0, over in ((100.0, 4.0), (2500.0, 4.0), (7000.0, 30.0)):
        internal, _ = limiter_output(plan, over * _headroom(REF) * np.sin(2 * np.pi * f0 * t))
        assert internal.min() >= REF.limit_low_v and internal.max() <= REF.limit_high_v
    # at the output rate the op-amp signal is band-limited to 20 kHz, and the feedback makes the clip's
    # corners nearly hard: a low note clipped 12 dB past the limit overshoots the window by no more
    # than an ideal 20 kHz low-pass does on a corner whose slope changes by at most ωA: its ramp
    # response, the integral of its step response 1/2 + Si(2π·f_c·t)/π, lies above the corner by at
    # most 1/(2π²·f_c) per V/s (closed form, checked here with scipy's sine integral)
    from scipy.special import sici

    f_c = 20000.0
    t = np.linspace(-2e-3, 0.0, 400001)
    ahead = np.sum(0.5 + sici(2 * np.pi * f_c * t)[0] / np.pi) * (t[1] - t[0])
    assert ahead == pytest.approx(1 / (2 * np.pi**2 * f_c), rel=1e-3)
    slope = 2 * np.pi * 100.0 * 4 * _headroom(REF)
    r = render_signal(REF, _sine_for(REF, 100.0, 4 * _headroom(REF), 1.0), sample_rate=FS, hum=False)
    y = r["amp_out"][FS // 10 : -FS // 10]
    assert y.min() > REF.limit_low_v - slope * ahead and y.max() < REF.limit_high_v + slope * ahead


def test_unbalanced_divider_brings_in_h2_growing_with_the_imbalance():
    h2 = []
    for bias in (4.5, 4.0, 3.5):
        d = _with_bias(REF, bias)
        assert d.bias_v == pytest.approx(bias)
        r = render_signal(d, _sine_for(d, 1000.0, 3.5, 1.25), sample_rate=FS, hum=False)
        y = r["amp_out"][FS // 8 : FS // 8 + FS]
        h2.append(harmonic_ratios(y - y.mean(), 1000.0, sample_rate=FS, count=2)[1])
    assert h2[0] < 1e-6 < h2[1] < h2[2]


def test_aliasing_of_a_hard_driven_high_note():
    # 2.5 kHz driven 12 dB past the limit at 48 kHz output: the largest non-harmonic component
    # between 40 Hz and 20 kHz at most -80 dB re the fundamental (1 Hz bins, whole periods)
    v = _sine_for(REF, 2500.0, 4 * _headroom(REF), 1.5)
    r = render_signal(REF, v, sample_rate=FS, hum=False)
    f, a = spectrum(r["amp_out"][FS // 4 : FS // 4 + FS], sample_rate=FS)
    harmonic = np.abs(f / 2500.0 - np.round(f / 2500.0)) < 1e-9
    band = (f >= 40) & (f <= 20000) & ~harmonic
    worst_db = 20 * np.log10(a[band].max() / a[f == 2500.0][0])
    assert worst_db <= -80


# --- hum -------------------------------------------------------------------------------


def _hum_reference(design):
    resp = design_responses([design])
    h = design.hum
    f = harmonic_frequencies(mains_hz=h.mains, harmonics=h.harmonics)
    rate = h.field * np.asarray(h.harmonics) * 2 * np.pi * f  # dB/dt amplitude per harmonic (Faraday)
    at_amp = resp.amp.mix(resp.hum_a, resp.hum_b)(f)[0] * rate
    at_out = resp.hum()(f)[0] * rate
    return f, at_amp, at_out


@pytest.mark.parametrize("path", MODELS, ids=[p.stem for p in MODELS])
def test_hum_render_matches_the_engine(path):
    design = load_design(path)
    f, at_amp, at_out = _hum_reference(design)
    r = render_signal(design, np.zeros((2, 4 * FS)), sample_rate=FS, hum=True)
    seg = slice(3 * FS, 4 * FS)
    got_amp = tones(r["amp_out"][seg] - design.bias_v, f, sample_rate=FS)
    got_out = tones(r["out"][seg], f, sample_rate=FS)
    big = np.abs(at_out) > 1e-3 * np.abs(at_out).max()  # skip harmonics the design cancels to nothing
    # analytic at the op-amp output, then only the limiter path's ±0.002 dB passband
    assert np.allclose(got_amp, at_amp, rtol=3e-4, atol=1e-15)
    assert np.max(np.abs(20 * np.log10(np.abs(got_out[big] / at_out[big])))) < 0.05
    silent = render_signal(design, np.zeros((2, FS)), sample_rate=FS, hum=False)
    # the op-amp output's DC point is A0/(1 + A0) times the divider's voltage (series_c blocks DC)
    assert not np.any(silent["out"]) and np.all(silent["amp_out"] == make_plan(design).bias_v)


def test_explicit_field_derivative_matches_the_analytic_hum():
    h = REF.hum
    n = 4 * FS
    db = field_rate(n, sample_rate=FS, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics)
    a = render_signal(REF, np.zeros((2, n)), sample_rate=FS, db_dt=db)
    b = render_signal(REF, np.zeros((2, n)), sample_rate=FS, hum=True)
    f = harmonic_frequencies(mains_hz=h.mains, harmonics=h.harmonics)
    ta = tones(a["out"][3 * FS :], f, sample_rate=FS)
    tb = tones(b["out"][3 * FS :], f, sample_rate=FS)
    assert np.max(np.abs(20 * np.log10(np.abs(ta / tb)))) < 0.05


# --- streaming ---------------------------------------------------------------------------


def _test_signal(n):
    """Quiet notes, then a burst that clips, then quiet again (both coils different)."""
    t = np.arange(n) / FS
    env = np.exp(-3 * (t % 0.25))
    v = np.stack([0.02 * env * np.sin(2 * np.pi * 330 * t), 0.015 * env * np.sin(2 * np.pi * 330 * t + 0.4)])
    loud = (t > 0.3) & (t < 0.45)
    v[:, loud] *= 1500  # about 4× past the limit at the op-amp output
    return v


def test_block_size_does_not_change_the_samples():
    n = 30000
    v = _test_signal(n)
    plan = make_plan(REF)
    whole = render_signal(REF, v, sample_rate=FS, block=n, plan=plan)
    assert whole["clipped_fraction"] > 0
    for block in (37, 1000, 4096, 65536):
        r = render_signal(REF, v, sample_rate=FS, block=block, plan=plan)
        assert r["out"].shape == (n,)
        assert np.max(np.abs(r["out"] - whole["out"])) <= 1e-12 * np.max(np.abs(whole["out"]))
        assert np.max(np.abs(r["amp_out"] - whole["amp_out"])) <= 1e-12
        assert r["clipped_fraction"] == whole["clipped_fraction"]


def test_generator_form_yields_the_same_signal():
    n = 20000
    v = _test_signal(n)
    plan = make_plan(REF)
    cuts = [0, 1, 6, 106, 10105, n]
    parts = list(render_blocks(REF, (v[:, a:b] for a, b in zip(cuts[:-1], cuts[1:])), sample_rate=FS, plan=plan))
    out = np.concatenate([p["out"] for p in parts])
    assert out.shape == (n,)
    whole = render_signal(REF, v, sample_rate=FS, plan=plan)
    assert np.max(np.abs(out - whole["out"])) <= 1e-12 * np.max(np.abs(out))
    assert parts[-1]["warnings"] == () and 0 < parts[-1]["clipped_fraction"] < 1


def test_renderer_rejects_bad_input():
    plan = make_plan(REF)
    r = Renderer(plan)
    with pytest.raises(ValueError):
        r.process(np.zeros((3, 10)))
    with pytest.raises(ValueError):
        r.process(np.zeros(10), db_dt=np.zeros(10))  # opened without db_dt
    r.finish()
    with pytest.raises(RuntimeError):
        r.finish()
