"""Spectral measurements for the chain's tests (exact-bin DFT projections).

Signals are analysed over a whole number of periods of every tone, so a
tone's complex amplitude is its DFT coefficient with a rectangular window:
no leakage between the tones and no window correction.
"""

from __future__ import annotations

import numpy as np


def tone(x, frequency_hz, *, sample_rate) -> complex:
    """Complex amplitude A·e^{jφ} of the component A·cos(2πft + φ) of x (shape (n,))."""
    x = np.asarray(x, dtype=float)
    n = np.arange(x.size)
    return 2.0 * np.mean(x * np.exp(-2j * np.pi * frequency_hz * n / sample_rate))


def tones(x, frequencies_hz, *, sample_rate) -> np.ndarray:
    """:func:`tone` at each frequency, shape (F,)."""
    return np.array([tone(x, f, sample_rate=sample_rate) for f in np.atleast_1d(frequencies_hz)])


def harmonic_ratios(x, fundamental_hz, *, sample_rate, count=8) -> np.ndarray:
    """|H_h| / |H_1| for h = 1 … count, shape (count,)."""
    a = np.abs(tones(x, fundamental_hz * np.arange(1, count + 1), sample_rate=sample_rate))
    return a / a[0]


def spectrum(x, *, sample_rate):
    """(frequency_hz, amplitude) of a rectangular-window DFT, amplitude as for :func:`tone`."""
    x = np.asarray(x, dtype=float)
    a = 2.0 * np.abs(np.fft.rfft(x)) / x.size
    return np.fft.rfftfreq(x.size, 1.0 / sample_rate), a
