"""``noise_waveform``: seeded, with the circuit's own density."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from render.analysis.noise import NOISE_TAPS, NoiseStream, noise_waveform
from render.circuit.noise import design_noise_model
from render.design import load_design
from render.errors import InputError

ROOT = Path(__file__).resolve().parents[2]
REF = load_design(ROOT / "models" / "studio-reference.toml")
FS = 48000.0
N = 1 << 17


def _expected_variance(n, fs, passive=False):
    """Σ S(f_k)·Δf over the FFT bins (DC excluded, Nyquist bin half), V² (discrete Parseval)."""
    k = np.arange(1, n // 2 + 1)
    s = design_noise_model([REF]).output_psd(k * fs / n, passive=passive)[0]
    w = np.ones_like(s)
    if n % 2 == 0:
        w[-1] = 0.5
    return float(np.sum(w * s) * fs / n)


def test_same_seed_same_waveform_other_seed_other():
    a = noise_waveform(REF, n=4096, sample_rate=FS, seed=7)
    b = noise_waveform(REF, n=4096, sample_rate=FS, seed=7)
    c = noise_waveform(REF, n=4096, sample_rate=FS, seed=8)
    assert a.shape == (4096,) and a.dtype == np.float64
    assert np.array_equal(a, b)
    assert not np.allclose(a, c)


@pytest.mark.parametrize("passive", [False, True])
def test_variance_is_the_integrated_density(passive):
    y = noise_waveform(REF, n=N, sample_rate=FS, seed=1, passive=passive)
    # zero mean: the filter's DC bin is zero, so the mean of N samples is well inside the 5 standard errors
    # σ/√N that even white noise of the same σ would keep to (central limit theorem; 5: common practice, no source)
    assert abs(y.mean()) < 5 * y.std() / np.sqrt(N)
    # Parseval / Wiener–Khinchin: the variance is ∫ S df (0..fs/2), here summed over the filter's bins; the
    # sampling spread of 2^17 samples of a noise this wide is about 0.3 % (margin: common practice, no source)
    assert y.var() == pytest.approx(_expected_variance(NOISE_TAPS, FS, passive), rel=0.03)


def test_welch_density_follows_the_model():
    from scipy.signal import welch

    y = noise_waveform(REF, n=N, sample_rate=FS, seed=2)
    f, pxx = welch(y, fs=FS, nperseg=2048)
    band = (f >= 100) & (f <= 15000)
    model = design_noise_model([REF]).output_psd(f[band])[0]
    # Welch (1967, from memory) estimate of 127 overlapping segments, standard error about 0.3 dB
    # per bin: each of ~315 bins within ±2 dB of the model, the band average within 0.2 dB
    # (statistical margins: common practice, no source)
    ratio_db = 10 * np.log10(pxx[band] / model)
    assert np.max(np.abs(ratio_db)) < 2.0
    assert abs(10 * np.log10(np.mean(pxx[band] / model))) < 0.2


def test_odd_length_and_one_sample():
    assert noise_waveform(REF, n=1001, sample_rate=44100, seed=0).shape == (1001,)
    one = noise_waveform(REF, n=1, sample_rate=44100, seed=0)
    assert one.shape == (1,) and np.isfinite(one[0]) and one[0] != 0.0  # a filtered draw, not a DC bin


def test_numpy_draws_run_on_in_sequence():
    # numpy's Generator.standard_normal keeps no spare value between calls (numpy documentation, "Random
    # Generator": ziggurat method), so n1 then n2 draws are the n1 + n2 draws of one call: what lets a
    # streamed render draw its noise block by block
    g = np.random.default_rng(11)
    parts = np.concatenate([g.standard_normal(3), g.standard_normal(1000), g.standard_normal(7)])
    assert np.array_equal(parts, np.random.default_rng(11).standard_normal(1010))


def test_drawn_block_by_block_it_is_the_one_shot_floor_and_never_repeats():
    # project rule, no outside source (README: a streamed render equals the one in memory): blocks of any size
    # give the one-shot samples to float rounding of the convolution (oaconvolve and one long FFT)
    n = (1 << 20) + 8192
    whole = noise_waveform(REF, n=n, sample_rate=FS, seed=4)
    s = NoiseStream(REF, sample_rate=FS, seed=4)
    sizes = [1, 999, 65536, 0, 123457, n - 1 - 999 - 65536 - 123457]
    parts = np.concatenate([s.take(k) for k in sizes])
    assert parts.shape == whole.shape
    assert np.max(np.abs(parts - whole)) <= 1e-12 * np.max(np.abs(whole))
    # no period: the 8192 samples from 2^20 on (where the old floor looped) are uncorrelated with the first
    # 8192 (|r| of two independent stretches of this noise about 1/√(its ~8192 independent samples) ≈ 0.011;
    # 0.1: common practice, no source)
    r = np.corrcoef(whole[:8192], whole[1 << 20 :])[0, 1]
    assert abs(r) < 0.1


def test_temperature_raises_the_thermal_part():
    cold = noise_waveform(REF, n=8192, sample_rate=FS, seed=3, temperature=250.0)
    warm = noise_waveform(REF, n=8192, sample_rate=FS, seed=3, temperature=350.0)
    # same seed, same shape of white noise: warmer is louder (4kT·R ∝ T, Johnson–Nyquist)
    assert warm.std() > cold.std()


@pytest.mark.parametrize(
    "kw, fragment",
    [
        ({"n": 0}, "n=0"),
        ({"n": 2.5}, "n=2.5"),
        ({"sample_rate": 0.0}, "sample_rate=0.0"),
        ({"sample_rate": float("inf")}, "sample_rate=inf"),
        ({"seed": -1}, "seed=-1"),
        ({"seed": 1.5}, "seed=1.5"),
        ({"temperature": 25.0}, "temperature=25 K"),
    ],
)
def test_bad_arguments_refused(kw, fragment):
    args = {"n": 16, "sample_rate": FS, "seed": 0} | kw
    with pytest.raises(InputError, match=re.escape(fragment)):
        noise_waveform(REF, **args)


# The floor's density against the model over the whole band (20 Hz–20 kHz), at 44.1 kHz and 48 kHz, on other
# designs than the one above, active and passive (the passive density peaks near 7 kHz and stays flat down to DC,
# where the filter's zero DC bin is nearest). The model's densities are the ones checked source by source against
# ngspice's .noise in tests/noise/test_noise_against_ngspice.py.
WELCH_CASES = [("ember-dark", 44100.0, False), ("studio-reference", 44100.0, True), ("glasswing-bright", 48000.0, False)]


@pytest.mark.parametrize("name, fs, passive", WELCH_CASES)
def test_welch_density_follows_the_model_over_the_band(name, fs, passive):
    from scipy.signal import welch

    d = load_design(ROOT / "models" / f"{name}.toml")
    nper, k = 1 << 13, 256  # 5.4 Hz (44.1 kHz) / 5.9 Hz (48 kHz) bins; 256 segments, no overlap: 48 s / 44 s of noise
    y = noise_waveform(d, n=nper * k, sample_rate=fs, seed=9, passive=passive)
    f, pxx = welch(y, fs=fs, window="hann", nperseg=nper, noverlap=0)
    band = (f >= 20.0) & (f <= 20000.0)
    model = design_noise_model([d]).output_psd(f[band], passive=passive)[0]
    ratio = pxx[band] / model
    # Welch (1967, from memory): an average of K independent periodograms has a relative standard error 1/√K per
    # bin, here 1/16, 10·log10(1 ± 1/16) = +0.26/−0.28 dB; every one of the ~3700 bins within 5 of these
    # (ratio 1 ± 5/16, +1.18/−1.63 dB; the largest of 3700 Gaussian deviates is about 3.6 of them; measured:
    # 0.99 dB) and each decade's mean within 0.25 dB (hundreds of bins; measured: 0.016 dB; margins: common
    # practice, no source). A density off by 2 (fs vs fs/2) is 3 dB.
    assert np.all(np.abs(ratio - 1.0) < 5 / np.sqrt(k))
    for lo, hi in [(20.0, 200.0), (200.0, 2000.0), (2000.0, 20000.0)]:
        s = (f[band] >= lo) & (f[band] < hi)
        assert abs(10 * np.log10(np.mean(ratio[s]))) < 0.25, (lo, hi)


@pytest.mark.parametrize("name, fs, passive", WELCH_CASES)
def test_filter_between_its_bins_and_its_power(name, fs, passive):
    from scipy.integrate import simpson
    from scipy.signal import freqz

    d = load_design(ROOT / "models" / f"{name}.toml")
    model = design_noise_model([d])
    taps = NoiseStream(d, sample_rate=fs, seed=0, passive=passive).taps
    # the filter's continuous response (scipy.signal.freqz), also between the 0.7 Hz bins where it was designed,
    # against the target √(S_out·fs/2) from the density model: within 0.2 dB over 20 Hz–20 kHz (measured: under
    # 0.1 dB, the ripple of the zero DC bin at 20 Hz; 0.2: common practice, no source)
    f = np.geomspace(20.0, 20000.0, 10001)
    _, h = freqz(taps, worN=f, fs=fs)
    err = 20 * np.log10(np.abs(h) / np.sqrt(model.output_psd(f, passive=passive)[0] * fs / 2))
    assert np.max(np.abs(err)) < 0.2
    # Parseval: the white noise's unit variance times Σ h² is the floor's variance, which must be ∫ S_out df over
    # 0..fs/2 (Wiener–Khinchin), the integral taken on a fine grid independently of the filter's bins
    g = np.linspace(0.0, fs / 2, 1 << 16 | 1)
    power = simpson(model.output_psd(g[1:], passive=passive)[0], x=g[1:]) + g[1] * model.output_psd(g[1:2], passive=passive)[0][0]
    assert np.sum(taps**2) == pytest.approx(power, rel=1e-3)


def test_active_and_passive_floors_are_independent():
    """Two circuits' noise is independent: the active floor and the passive reference's, drawn with one seed,
    share no source. Magnitude-squared coherence (Bendat & Piersol, Random Data, 4th ed. 2010, §9.2.3): 1 at
    every frequency for one source through two linear filters, and for independent ones only its estimator's
    bias, about 1/K for K averaged segments (K ≈ 127 here, so ≈ 0.008)."""
    from scipy.signal import coherence

    a = noise_waveform(REF, n=N, sample_rate=FS, seed=3)
    p = noise_waveform(REF, n=N, sample_rate=FS, seed=3, passive=True)
    f, c = coherence(a, p, fs=FS, nperseg=2048)
    band = (f >= 100) & (f <= 15000)
    assert float(np.mean(c[band])) < 0.03
    # the active floor keeps its draws, default_rng(seed) as documented (to float rounding of the convolution)
    drawn = np.random.default_rng(3).standard_normal(NOISE_TAPS - 1 + 16)
    stream = NoiseStream(REF, sample_rate=FS, seed=3)
    assert np.allclose(np.convolve(drawn, stream.taps, mode="valid"), a[:16], rtol=0, atol=1e-9 * a.std())


def test_the_comparison_pickups_floor_is_its_own():
    """A comparison pickup is another pickup: its floor (sequence 2) is independent of a design's passive reference
    (sequence 1), which shares its kind of circuit; coherence as above (Bendat & Piersol 2010, §9.2.3)."""
    from scipy.signal import coherence

    from render.runs.compare_clip import COMPARE_NOISE_SEQUENCE

    p = noise_waveform(REF, n=N, sample_rate=FS, seed=3, passive=True)
    c = noise_waveform(REF, n=N, sample_rate=FS, seed=3, passive=True, sequence=COMPARE_NOISE_SEQUENCE)
    f, coh = coherence(p, c, fs=FS, nperseg=2048)
    assert float(np.mean(coh[(f >= 100) & (f <= 15000)])) < 0.03
    # sequence None is 1 for the passive reference and 0 (default_rng(seed) itself) for the design
    assert np.array_equal(p, noise_waveform(REF, n=N, sample_rate=FS, seed=3, passive=True, sequence=1))
    assert np.array_equal(noise_waveform(REF, n=64, sample_rate=FS, seed=3), noise_waveform(REF, n=64, sample_rate=FS, seed=3, sequence=0))
    with pytest.raises(InputError, match=r"^sequence=-1: expected a whole number, 0 or more$"):
        NoiseStream(REF, sample_rate=FS, seed=3, sequence=-1)
