"""Measurements of rendered audio: loudness, peak, long-term spectrum.

Loudness is ITU-R BS.1770-4 integrated loudness via pyloudnorm (K-weighting,
400 ms blocks with 75 % overlap, absolute gate −70 LKFS, relative gate
−10 LU).
"""

from __future__ import annotations

import numpy as np

MIN_LOUDNESS_SECONDS = 0.4  # one gating block (BS.1770-4)
# pyloudnorm's "DeMan" filters reproduce BS.1770-4's K-weighting coefficients:
# a 997 Hz full-scale sine in one channel reads -3.010 LKFS at 48 kHz, where
# its default "K-weighting" class reads -3.052 (measured here, pyloudnorm 0.2.0).
LOUDNESS_FILTER = "DeMan"


def integrated_loudness(samples: np.ndarray, *, sample_rate: int) -> float | None:
    """Integrated loudness in LUFS of WAV sample values (full scale ±1).

    Parameters
    ----------
    samples : np.ndarray, shape (n,) or (channels, n)
    sample_rate : int, Hz

    Returns
    -------
    float or None
        LUFS; None when the clip is shorter than one 400 ms block or silent
        (everything below the absolute gate).
    """
    import pyloudnorm

    x = np.asarray(samples, float)
    x = x.T if x.ndim == 2 else x
    if x.shape[0] < MIN_LOUDNESS_SECONDS * sample_rate:
        return None
    value = pyloudnorm.Meter(sample_rate, filter_class=LOUDNESS_FILTER).integrated_loudness(x)
    return float(value) if np.isfinite(value) else None


def long_term_spectrum(samples: np.ndarray, *, sample_rate: int, segment: int = 8192):
    """Long-term average spectrum (Welch, Hann window, 50 % overlap).

    Returns
    -------
    (frequency_hz (F,), level_db (F,))
        Power spectral density in dB re 1 unit²/Hz of the input's units.
    """
    from scipy.signal import welch

    x = np.asarray(samples, float)
    seg = int(min(segment, max(256, x.shape[-1])))
    f, p = welch(x, fs=sample_rate, window="hann", nperseg=seg, noverlap=seg // 2, detrend=False)
    return f, 10 * np.log10(np.maximum(p, 1e-30))
