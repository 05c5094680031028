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
