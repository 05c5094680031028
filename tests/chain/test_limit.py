"""The soft limit, its antiderivative and the ADAA-1 form.

Sources of the check values: Parker, Zavalishin & Le Bivic, DAFx-16 (ADAA-1 and its
two-tap mean in the linear region); Fourier series algebra for the harmonic ratios; the
asymmetric-clip figure is the project reference sheet's recomputed value (§6).
"""

import numpy as np
import pytest
from chain.measure import harmonic_ratios
from scipy.integrate import quad

from render.chain.limit import ADAA_STEP_V, Window, soft_limit, soft_limit_adaa, soft_limit_integral

WIN = Window(low=1.0, high=8.0, knee=0.5)  # 9 V battery, 1 V margins, 0.5 V knee (the design defaults)


def test_identity_inside_and_rails_outside():
    x = np.linspace(WIN.linear_low, WIN.linear_high, 10001)
    assert np.array_equal(soft_limit(x, window=WIN), x)
    # the quadratic knee reaches the rail at one knee width beyond the identity end, with zero slope
    assert soft_limit(WIN.high + WIN.knee, window=WIN) == WIN.high
    assert soft_limit(WIN.low - WIN.knee, window=WIN) == WIN.low
    far = np.array([-1e6, -50.0, 0.0, 50.0, 1e6])
    assert np.array_equal(soft_limit(far, window=WIN), np.array([1.0, 1.0, 1.0, 8.0, 8.0]))


def test_monotonic_bounded_and_continuous_slope():
    x = np.linspace(-20, 30, 500001)
    y = soft_limit(x, window=WIN)
    assert np.all(np.diff(y) >= 0)
    assert y.min() >= WIN.low and y.max() <= WIN.high
    # slope just left and right of each knee end agrees (continuous first derivative)
    h = 1e-7
    for x0 in (WIN.linear_high, WIN.high + WIN.knee, WIN.linear_low, WIN.low - WIN.knee):
        left = (soft_limit(x0, window=WIN) - soft_limit(x0 - h, window=WIN)) / h
        right = (soft_limit(x0 + h, window=WIN) - soft_limit(x0, window=WIN)) / h
        assert abs(left - right) < 1e-6
    # slope in [0, 1] everywhere
    s = np.diff(y) / np.diff(x)
    assert s.min() >= -1e-12 and s.max() <= 1 + 1e-9


def test_integral_is_the_antiderivative():
    # independent numerical quadrature (scipy.integrate.quad) of f from the window's centre
    c = WIN.centre
    for x in (-3.0, 0.9, 1.2, 1.6, 4.5, 7.3, 7.9, 8.4, 20.0):
        ref, _ = quad(lambda t: float(soft_limit(t, window=WIN)), c, x, points=[1.0, 1.5, 7.5, 8.5], limit=200)
        assert soft_limit_integral(x, window=WIN) == pytest.approx(ref, rel=1e-10, abs=1e-10)


def test_adaa_identity_region_is_the_two_tap_mean():
    # ADAA-1 on the linear part is the two-tap mean: -3.01 dB at fs/4 and a half-sample delay
    # (Parker, Zavalishin & Le Bivic, DAFx-16, pp. 137-144)
    n = np.arange(4000)
    x = WIN.centre + 1.0 * np.cos(np.pi / 2 * n)  # fs/4, inside the identity region
    y, _ = soft_limit_adaa(x, window=WIN)
    assert np.allclose(y[1:], 0.5 * (x[1:] + x[:-1]), rtol=0, atol=1e-14)
    a = 2 * np.mean((y[8:] - WIN.centre) * np.exp(-1j * np.pi / 2 * n[8:]))
    assert 20 * np.log10(abs(a)) == pytest.approx(-3.0103, abs=1e-3)
    assert np.degrees(np.angle(a)) == pytest.approx(-45.0, abs=1e-6)  # half a sample at fs/4


def test_adaa_blocks_equal_one_call_and_stay_in_window():
    rng = np.random.default_rng(7)
    x = WIN.centre + 6.0 * np.cumsum(rng.standard_normal(20000)) / 30 + 4 * rng.standard_normal(20000)
    whole, _ = soft_limit_adaa(x, window=WIN)
    parts, prev = [], None
    for i in range(0, x.size, 777):
        y, prev = soft_limit_adaa(x[i : i + 777], window=WIN, previous=prev)
        parts.append(y)
    assert np.allclose(np.concatenate(parts), whole, rtol=0, atol=1e-12)
    assert whole.min() >= WIN.low and whole.max() <= WIN.high


def test_adaa_small_steps_fall_back_smoothly():
    # a ramp through the knee with steps below and above the fallback threshold: the output
    # tracks f at the segment midpoints to second order in the step
    for step in (0.3 * ADAA_STEP_V, 3 * ADAA_STEP_V, 1e-3):
        x = np.arange(7.2, 8.8, step)
        y, _ = soft_limit_adaa(x, window=WIN)
        mid = soft_limit(0.5 * (x[1:] + x[:-1]), window=WIN)
        # the mean of f over a segment differs from f(mid) by at most step²·max|f''|/24 = step²/(48·knee)
        assert np.max(np.abs(y[1:] - mid)) < step**2 / (48 * WIN.knee) + 1e-9


def test_harmonic_measurement_on_a_known_polynomial():
    # x + k·x² with x = A·sin: H2/H1 = k·A/2 (algebra: sin² = (1 − cos 2θ)/2); k = 0.1, A = 1 -> 0.050
    fs, f0 = 48000.0, 1000.0
    t = np.arange(48000) / fs
    x = np.sin(2 * np.pi * f0 * t)
    r = harmonic_ratios(x + 0.1 * x**2, f0, sample_rate=fs, count=3)
    assert r[1] == pytest.approx(0.050, abs=1e-12)
    assert r[2] < 1e-12


@pytest.mark.parametrize("bias, expect_h2", [(4.5, False), (3.5, True)])
def test_clip_window_symmetry(bias, expect_h2):
    # window [1.5, 7.5] V, 2.5 V-peak sine: centred bias gives no even harmonics (an odd function
    # of a half-wave-symmetric input: Fourier), a 3.5 V bias clips one side only
    win = Window(low=1.5, high=7.5, knee=0.5)
    fs, f0 = 2**16, 8.0
    t = np.arange(2**16) / fs
    y = soft_limit(bias + 2.5 * np.sin(2 * np.pi * f0 * t), window=win)
    r = harmonic_ratios(y - y.mean(), f0, sample_rate=fs, count=4)
    if expect_h2:
        assert r[1] > 1e-3
    else:
        assert r[1] < 1e-13 and r[3] < 1e-13


def test_hard_clip_limit_of_the_knee_gives_the_algebraic_h2():
    # window [1.5, 7.5] V, 2.5 V peak, bias 3.5 V, knee -> 0 (a hard clip): H2/H1 = 4.8 %
    # (reference sheet §6, "Asymmetry", value recomputed numerically there)
    win = Window(low=1.5, high=7.5, knee=1e-4)
    fs, f0 = 2**18, 8.0
    t = np.arange(2**18) / fs
    y = soft_limit(3.5 + 2.5 * np.sin(2 * np.pi * f0 * t), window=win)
    r = harmonic_ratios(y - y.mean(), f0, sample_rate=fs, count=2)
    assert r[1] == pytest.approx(0.048, abs=0.0006)


def test_window_validation():
    with pytest.raises(ValueError):
        Window(low=1.0, high=2.0, knee=0.6)
    with pytest.raises(ValueError):
        Window(low=1.0, high=8.0, knee=0.0)
