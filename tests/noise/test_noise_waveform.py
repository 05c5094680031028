"""``noise_waveform``: seeded, with the circuit's own density."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from render.analysis.noise import noise_waveform
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
    # zero mean: the DC bin is zero (construction)
    assert abs(y.mean()) < 1e-12 * y.std()
    # Parseval / Wiener–Khinchin: the variance is ∫ S df (0..fs/2); the sampling spread of
    # 2^17 samples of a noise this wide is about 0.3 % (margin: common practice, no source)
    assert y.var() == pytest.approx(_expected_variance(N, FS, passive), rel=0.03)


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
    assert np.array_equal(noise_waveform(REF, n=1, sample_rate=44100, seed=0), [0.0])  # only the DC bin


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
