"""The recording's ends and its DC offset: no clicks, no offset in the estimate.

The passive response here is a made-up closed form (0.1 V per m/s, a 2nd-order
low-pass at 6 kHz, Q 2), evaluated with scipy.signal.freqs; a sine through it
is known exactly (steady state: amplitude |H(f0)|, phase ∠H(f0)).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import freqs

from render.analysis import unvoice as U

FS = 48000
W0 = 2 * np.pi * 6000.0
B, A = [0.1 * W0**2], [1.0, W0 / 2.0, W0**2]  # 0.1·w0²/(s² + s·w0/Q + w0²), Q = 2


def _passive():
    f = U.design_grid(sample_rate=FS)
    _, h = freqs(B, A, worN=2 * np.pi * f)
    return h


def _plucked(f0, n=FS, decay_s=0.3):
    """A velocity cos(2π·f0·t)·e^(−t/τ) (1 m/s at t = 0: the take cut at a peak) and its DI through the closed-form H, exactly.

    e^(s0·t) with s0 = −1/τ + j·2π·f0 is an eigenfunction of a linear system: the response is H(s0)·e^(s0·t)
    (the steady state, as if the note had sounded before the take began). H(s0) from the polynomials by numpy.polyval.
    A little white noise (1 µV rms) stands for the recorder's floor.
    """
    t = np.arange(n) / FS
    s0 = -1.0 / decay_s + 2j * np.pi * f0
    e = np.exp(s0 * t)
    h = np.polyval(B, s0) / np.polyval(A, s0)
    noise = 1e-6 * np.random.default_rng(7).standard_normal(n)
    return e.real, (h * e).real + noise


def test_a_constant_offset_unvoices_to_nothing():
    """A 1 s DI of a constant 0.3 V: the estimate is zero (it once had 4.4 m/s spikes at the ends)."""
    v, _ = U.unvoice_array(np.full(FS, 0.3), passive=_passive(), sample_rate=FS)
    assert np.max(np.abs(v)) < 1e-9


def test_an_offset_does_not_change_the_estimate():
    """A plucked 440 Hz DI with and without 0.3 V of DC: the same estimate within its 1 dB trust rule (measured: far closer)."""
    _, di = _plucked(440.0)
    plain, inv = U.unvoice_array(di, passive=_passive(), sample_rate=FS)
    offset, _ = U.unvoice_array(di + 0.3, passive=_passive(), sample_rate=FS)
    print(f"\noffset: largest difference {np.max(np.abs(offset - plain)):.3g} m/s of a {np.max(np.abs(plain)):.3g} m/s peak")
    assert np.max(np.abs(offset - plain)) < (10 ** (U.TRUST_DB / 20) - 1) * np.max(np.abs(plain))


@pytest.mark.parametrize("f0", [440.0, 2000.0])
def test_a_take_cut_at_a_peak_fades_in_without_a_click(f0):
    """A plucked note, the take cut at its peak: the closed-form velocity after the fade, no overshoot at the cut."""
    velocity, di = _plucked(f0)
    v, inv = U.unvoice_array(di, passive=_passive(), sample_rate=FS)
    lo, hi = inv.trusted_band_hz
    assert lo < f0 < hi
    fade = U.fade_length(FS)
    assert fade == 240  # 5 ms at 48 kHz
    after = slice(2 * fade, FS // 2)
    err = np.max(np.abs(v[after] - velocity[after]))
    head = np.max(np.abs(v[: 2 * fade]))
    print(f"\n{f0:g} Hz: largest error after 10 ms {err:.4f} m/s; largest |estimate| in the first 10 ms {head:.4f} m/s (velocity peak 1)")
    # within the trusted band the estimate is the velocity within 1 dB (the trust rule): |error| <= (10^(1/20) − 1) of the peak
    assert err < 10 ** (U.TRUST_DB / 20) - 1
    # no click: at the cut the estimate does not pass the velocity's own peak by more than the trust rule allows
    assert head <= 10 ** (U.TRUST_DB / 20)
    assert abs(v[0]) < 0.05  # and starts from (near) zero, as the fade says


def test_the_fade_is_a_raised_cosine_and_does_not_depend_on_the_chunks():
    g = U.edge_gain(0, 1000, 1000, 100)
    k = np.arange(100)
    assert np.allclose(g[:100], 0.5 * (1 - np.cos(np.pi * (k + 0.5) / 100)))  # sin² = (1 − cos 2x)/2
    assert np.array_equal(g[::-1], g) and np.all(g[100:900] == 1.0)
    pieces = np.concatenate([U.edge_gain(s, min(77, 1000 - s), 1000, 100) for s in range(0, 1000, 77)])
    assert np.array_equal(pieces, g)
    x = np.random.default_rng(1).standard_normal(200_000) + 0.25
    a, b = U.RunningMean(), U.RunningMean()
    a.add(x)
    for s in range(0, x.size, 999):
        b.add(x[s : s + 999])
    assert a.result() == b.result() == pytest.approx(float(np.mean(x)), rel=1e-14)
