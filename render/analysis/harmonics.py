"""Amplitudes of steady sines in a rendered signal, by projection, and the distortion figures from them.

The projection 2·mean(x·e^{−j2πft}) is the Fourier-series coefficient of
``x`` at f (peak units); it is exact for steady sines when ``x`` spans a
whole number of periods of every frequency asked for (Fourier, orthogonality
of e^{j2πkt/T} over a period). Total harmonic distortion here is
THD = sqrt(H2² + … + Hn²) / H1, the harmonics' root-sum-square over the
fundamental, over harmonics 2..:data:`HARMONICS`.
"""

from __future__ import annotations

import numpy as np

HARMONICS = 10  # harmonics 1..10 in the distortion figures


def _projection(x, t: np.ndarray, w: complex) -> complex:
    """mean(x · e^{w t}): the one projection the functions below share."""
    return np.mean(x * np.exp(w * t))


def harmonic_amplitudes(x, *, sample_rate: float, frequencies_hz) -> np.ndarray:
    """Complex amplitudes of ``x`` at each frequency (Hz) by projection, peak units (module text)."""
    t = np.arange(np.size(x)) / sample_rate
    return np.array([2.0 * _projection(x, t, -2j * np.pi * f) for f in frequencies_hz])


def harmonics_of(x, *, sample_rate: float, f0: float, n: int = HARMONICS) -> np.ndarray:
    """Peak amplitudes of harmonics 1..n of ``x`` by projection (x spans whole periods of f0)."""
    t = np.arange(np.size(x)) / sample_rate
    return np.array([2.0 * abs(_projection(x, t, -2j * np.pi * k * f0)) for k in range(1, n + 1)])


NO_OUTPUT_V = 1e-6  # V: a fundamental below this is no output (an op-amp held on a limit passes rounding, about 1e-11 V)


def distortion_figures(x, *, sample_rate: float, frequency_hz: float) -> dict:
    """H1 (V), H2 and H3 (dB re H1), THD (%) and the harmonics (V) of ``x`` (whole periods of f0).

    With a fundamental below :data:`NO_OUTPUT_V` the ratios are None with their reason in words
    (:data:`render.analysis.undefined.NO_OUTPUT`): rounding's harmonics over rounding's fundamental
    mean nothing.
    """
    from . import undefined as U

    h = harmonics_of(x, sample_rate=sample_rate, f0=frequency_hz)

    def db(k):
        return float(20 * np.log10(max(h[k - 1], 1e-300) / h[0]))

    out = {"h1_v": float(h[0]), "harmonics_v": [float(a) for a in h]}
    if h[0] < NO_OUTPUT_V:
        for key in ("h2_db", "h3_db", "thd_percent"):
            U.mark(out, key, U.NO_OUTPUT)
        return out
    return {**out, "h2_db": db(2), "h3_db": db(3), "thd_percent": float(100 * np.sqrt(np.sum(h[1:] ** 2)) / h[0])}
