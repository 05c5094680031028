"""The hum field, its analytic derivative and steady-state responses."""

import numpy as np
import pytest

from render.chain.hum import field, field_rate, harmonic_frequencies, steady_response

FS = 48000.0


@pytest.mark.parametrize("mains, expect_mv", [(50.0, 0.785), (60.0, 0.942)])
def test_faraday_emf_amplitude(mains, expect_mv):
    # e = N·A·dB/dt, peak N·A·2πf·B: 5000 turns × 5 cm² = 2.5 m², 1 µT -> 0.785 mV at 50 Hz,
    # 0.942 mV at 60 Hz (Faraday's law of induction, computed by hand)
    n = int(FS / mains) * 4
    e = 2.5 * field_rate(n, sample_rate=FS * 10, mains_hz=mains, field_t=1e-6, harmonics=(1.0,))
    assert np.max(np.abs(e)) * 1e3 == pytest.approx(expect_mv, abs=5e-4)


def test_field_harmonic_is_multiplied_by_its_order_in_the_emf():
    # a 5 % third harmonic of the field is 15 % of the EMF (Faraday: d/dt multiplies by h·ω)
    n = 4800
    e = field_rate(n, sample_rate=FS, mains_hz=50.0, field_t=1e-6, harmonics=(1.0, 0.0, 0.05))
    t = np.arange(n) / FS
    a1 = 2 * np.mean(e * np.exp(-2j * np.pi * 50 * t))
    a3 = 2 * np.mean(e * np.exp(-2j * np.pi * 150 * t))
    assert abs(a3) / abs(a1) == pytest.approx(0.15, rel=1e-9)


def test_rate_is_the_derivative_of_the_field():
    fs = 1e6
    n = 20001
    kw = dict(sample_rate=fs, mains_hz=50.0, field_t=1e-6, harmonics=(1.0, 0.05, 0.3, 0.03, 0.2), phases=(0.1, 0.2, 0.3, 0.4, 0.5))
    b = field(n, **kw)
    db = field_rate(n, **kw)
    central = (b[2:] - b[:-2]) * fs / 2
    # central differences are exact to (ω·h)²/6 relative: 4e-7 for the 5th harmonic at 1 MHz
    assert np.max(np.abs(central - db[1:-1])) < 1e-6 * np.max(np.abs(db))


def test_field_values_and_phases():
    # B(t) = field · Σ a_h sin(2π h f t + φ_h): check against a direct evaluation
    n = 1000
    t = np.arange(n) / FS
    h = (1.0, 0.5, 0.25)
    ph = (0.0, 1.0, -2.0)
    ref = 2e-6 * sum(a * np.sin(2 * np.pi * (k + 1) * 60 * t + p) for k, (a, p) in enumerate(zip(h, ph)))
    got = field(n, sample_rate=FS, mains_hz=60.0, field_t=2e-6, harmonics=h, phases=ph)
    assert np.allclose(got, ref, rtol=0, atol=1e-18)


def test_steady_response_applies_each_gain():
    n = 960
    h = (1.0, 0.3)
    g = np.array([2.0 * np.exp(1j * 0.5), 0.1 * np.exp(-1j * 1.0)])
    got = steady_response(g, n, sample_rate=FS, mains_hz=50.0, field_t=1e-6, harmonics=h)
    t = np.arange(n) / FS
    f = harmonic_frequencies(mains_hz=50.0, harmonics=h)
    amp = 1e-6 * np.array(h) * 2 * np.pi * f
    ref = sum(amp[i] * abs(g[i]) * np.cos(2 * np.pi * f[i] * t + np.angle(g[i])) for i in range(2))
    assert np.allclose(got, ref, rtol=0, atol=1e-15)


def test_an_hour_in_keeps_its_phase():
    kw = dict(sample_rate=FS, mains_hz=50.0, field_t=1e-6, harmonics=(1.0, 0.05, 0.3))
    hour = int(3600 * FS)  # a whole number of mains periods
    assert np.allclose(field_rate(100, start=hour, **kw), field_rate(100, start=0, **kw), rtol=0, atol=1e-14)
