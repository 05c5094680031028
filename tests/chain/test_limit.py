"""The op-amp output stage's soft limit.

Sources of the check values: Fourier series algebra for the harmonic ratios (the
asymmetric hard clip's H2 recomputed numerically by hand); the knee's shape against its
definition (identity inside, the rails outside, a continuous slope in [0, 1]).
"""

import numpy as np
import pytest
from chain.measure import harmonic_ratios

from render.chain.limit import Window, soft_limit

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
    # (Fourier series of the clipped sine, recomputed numerically by hand)
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
