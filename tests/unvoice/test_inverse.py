"""The un-voicing's pieces: streaming filter, statistics, the regularised inverse, bands."""

from __future__ import annotations

import math

import numpy as np
import pytest

from render.analysis import unvoice as U

FS = 48000


def _chunked(process, finish, x, sizes):
    out, at, i = [], 0, 0
    while at < x.size:
        n = sizes[i % len(sizes)]
        out.append(process(x[at : at + n]))
        at += n
        i += 1
    out.append(finish())
    return np.concatenate(out)


@pytest.mark.parametrize("sizes", [[5000], [1], [7, 300, 1024, 33], [4096]])
def test_streaming_fir_is_the_convolution_sum_whatever_the_chunks(sizes):
    rng = np.random.default_rng(2)
    taps, x, delay = rng.standard_normal(256), rng.standard_normal(5000), 128
    ref = np.convolve(x, taps)[delay : delay + x.size]  # numpy's direct convolution sum
    fir = U.StreamingFIR(taps, delay=delay)
    y = _chunked(fir.process, fir.finish, x, sizes)
    # the direct convolution sum (numpy.convolve); float rounding of FFT convolution
    assert y.shape == x.shape and np.allclose(y, ref, rtol=0, atol=1e-11)
    whole = U.StreamingFIR(taps, delay=delay)
    assert np.array_equal(y, np.concatenate([whole.process(x), whole.finish()]))  # bit-identical: fixed segments


def test_statistics_do_not_depend_on_the_chunks():
    x = np.random.default_rng(3).standard_normal(FS)
    a, b = U.SpectrumAccumulator(sample_rate=FS), U.SpectrumAccumulator(sample_rate=FS)
    a.add(x)
    for s in range(0, x.size, 777):
        b.add(x[s : s + 777])
    ra, rb = a.result(), b.result()
    for name in ("psd", "band_mean", "band_floor"):
        assert np.array_equal(getattr(ra, name), getattr(rb, name)), name
    assert ra.frames == rb.frames == 1 + (FS - ra.frame) // ra.hop  # whole frames at hop = frame/2 (closed form)


def test_mean_density_of_white_noise():
    sigma = 1e-3
    x = sigma * np.random.default_rng(4).standard_normal(10 * FS)
    acc = U.SpectrumAccumulator(sample_rate=FS)
    acc.add(x)
    st = acc.result()
    wide = st.band_hz > 500  # bands of 15 bins or more
    # white noise of variance σ² has one-sided density 2σ²/fs (Parseval; Welch, IEEE Trans. AU-15(2), 1967)
    assert np.allclose(10 * np.log10(st.band_mean[wide] / (2 * sigma**2 / FS)), 0.0, atol=0.2)
    assert np.allclose(10 * np.log10(np.mean(st.psd[10:-10]) / (2 * sigma**2 / FS)), 0.0, atol=0.05)


def test_the_floor_is_the_quiet_part_not_the_loud_part():
    """Loud bursts half the time over a steady noise: the low percentile reads the noise."""
    rng = np.random.default_rng(6)
    noise = 1e-4 * rng.standard_normal(6 * FS)
    gate = (np.arange(noise.size) // (FS // 5)) % 2 == 0  # 0.2 s on, 0.2 s off
    x = noise + np.where(gate, 0.1 * rng.standard_normal(noise.size), 0.0)
    acc = U.SpectrumAccumulator(sample_rate=FS)
    acc.add(x)
    st = acc.result()
    wide = st.band_hz > 500
    level = 10 * np.log10(st.band_floor[wide] / (2 * 1e-4**2 / FS))
    # the noise alone has density 2σ²/fs (Parseval). A band's power over noise-only frames is roughly
    # chi-square with about one degree of freedom per Hann bin, so its 10th percentile sits below the
    # mean: some 3.5 dB for the 15-bin bands, 0.5 dB for the widest (from memory; measured here)
    assert np.all((level > -4.0) & (level < 0.5)), level
    assert np.all(10 * np.log10(st.band_mean[wide] / st.band_floor[wide]) > 40)  # the bursts are 60 dB up, half the time


def _lowpass_grid(taps=4096):
    """A made-up passive response: 0.1 V per m/s, a 2nd-order low-pass at 6 kHz, Q 2 (on the design grid)."""
    f = U.design_grid(sample_rate=FS, taps=taps)
    s = 2j * np.pi * f
    w0 = 2 * np.pi * 6000.0
    return f, 0.1 * w0**2 / (s**2 + s * w0 / 2.0 + w0**2)


def test_tikhonov_bound_and_passband_cost():
    f, h = _lowpass_grid()
    inv = U.design_inverse(h, sample_rate=FS, noise_ratio=None, max_boost_db=20.0, taps=4096)
    # the bound 10^(B/20) / |H(1 kHz)| for B = 20 dB
    assert inv.gain_limit == pytest.approx(10.0 / abs(0.1 / (1 - (1 / 6) ** 2 + 1j / 12)), rel=1e-6)
    # x/(x² + λ) <= 1/(2√λ) (AM–GM): the designed inverse never passes the bound
    assert np.max(np.abs(inv.designed)) <= inv.gain_limit * (1 + 1e-12)
    # where the taper is 1, W·H = |H|²/(|H|² + λ) exactly (closed form)
    k = np.argmin(np.abs(f - 1000.0))
    wh = inv.designed[k] * h[k] / U.low_taper(f[k])
    assert wh.real == pytest.approx(abs(h[k]) ** 2 / (abs(h[k]) ** 2 + inv.lambda_gain), rel=1e-9)
    assert abs(wh.imag) < 1e-12
    # the passband cost at 1 kHz: 20·log10(1 + 10^(−B/10)/4) (closed form) = 0.0217 dB for B = 20
    # (rel 1e-3: the nearest grid bin is a fraction of a hertz from 1 kHz)
    assert -20 * math.log10(wh.real) == pytest.approx(20 * math.log10(1 + 10 ** (-2.0) / 4), rel=1e-3)


def test_wiener_term_acts_only_where_the_inverse_boosts():
    f, h = _lowpass_grid()
    bands = U.band_centres(sample_rate=FS)
    plain = U.design_inverse(h, sample_rate=FS, noise_ratio=None, taps=4096)
    noisy = U.design_inverse(h, sample_rate=FS, band_hz=bands, noise_ratio=np.ones(bands.size), taps=4096)
    ref = plain.reference_level
    flat = np.abs(h) >= ref  # the exact inverse is at or below its 1 kHz level
    assert np.array_equal(noisy.designed[flat], plain.designed[flat])
    # from +3 dB of boost on, the term is the Wiener one, |H|²·N/(S−N) = |H|² for S = 2N (closed form)
    deep = (np.abs(h) < ref / math.sqrt(2)) & (f < FS / 2)  # the Nyquist bin is made real
    expect = np.conj(h[deep]) * U.low_taper(f[deep]) / (2 * np.abs(h[deep]) ** 2 + plain.lambda_gain)
    assert np.allclose(noisy.designed[deep], expect, rtol=1e-12)


def test_trusted_band_and_fir_error():
    f, h = _lowpass_grid(U.fir_length(FS))
    inv = U.design_inverse(h, sample_rate=FS, noise_ratio=None)
    lo, hi = inv.trusted_band_hz
    exact = 20 * np.log10(np.abs(inv.realised * h))
    inside = (f >= lo) & (f <= hi)
    assert np.all(np.abs(exact[inside]) <= U.TRUST_DB)
    assert lo < 30.0 and hi > 15000.0  # a 20 Hz taper's −1 dB point is 27.9 Hz: f_low·(1/(10^0.1 − 1))^(1/4) (closed form)
    assert lo == pytest.approx(20.0 * (1 / (10**0.1 - 1)) ** 0.25, abs=1.0)
    assert inv.fir_error_db < 0.05  # the FIR's truncation is negligible against the 1 dB trust rule (common practice, no source)


def test_third_octave_centres_are_iec_61260_1():
    c = U.third_octave_centres(80, 5000)
    # IEC 61260-1: exact base-10 centres 1000·10^(k/10), nominal 80, 100, 125 … 5000 Hz (nominal values from memory)
    nominal = [80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000]
    assert np.allclose(c, 1000 * 10 ** (np.arange(-11, 8) / 10), rtol=1e-12)
    assert np.allclose(c, nominal, rtol=0.02)
