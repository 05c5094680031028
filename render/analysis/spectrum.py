"""Long-term average spectra: Welch's averaged periodograms, whole or streamed.

P. D. Welch, "The use of fast Fourier transform for the estimation of power
spectra", IEEE Trans. Audio Electroacoust. 15(2), 1967: Hann-windowed
segments overlapping by half, each segment's periodogram scaled to a
one-sided power spectral density, averaged. :class:`WelchSpectrum` takes the
signal block by block (a one-hour render in bounded memory); a whole signal
fed at once gives the same segments and the same average.
"""

from __future__ import annotations

import numpy as np

SEGMENT = 8192  # samples per segment (0.17 s at 48 kHz)


def periodic_hann(n: int) -> np.ndarray:
    """The periodic Hann window of length ``n`` (as ``scipy.signal.get_window("hann", n)``)."""
    return np.hanning(n + 1)[:-1]


def density(frames: np.ndarray, window: np.ndarray, *, sample_rate: float) -> np.ndarray:
    """One-sided power spectral density of each windowed frame.

    Parameters
    ----------
    frames : np.ndarray [shape=(k, n)], the signal's units
    window : np.ndarray [shape=(n,)]
    sample_rate : float, Hz

    Returns
    -------
    np.ndarray [shape=(k, n // 2 + 1)], units²/Hz
    """
    p = np.abs(np.fft.rfft(frames * window, axis=-1)) ** 2 * (1.0 / (sample_rate * np.sum(window**2)))
    p[..., 1 : (frames.shape[-1] + 1) // 2] *= 2.0  # every bin but DC (and Nyquist for an even length) counts twice
    return p


def log_frequency_rows(frequency_hz: np.ndarray, rows_hz: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """How a spectrogram's log-spaced rows read an FFT's bins: row r = level[lo[r]]·(1 − frac[r]) + level[lo[r] + 1]·frac[r].

    Parameters
    ----------
    frequency_hz : np.ndarray [shape=(B,)], the bins' frequencies, ascending
    rows_hz : np.ndarray [shape=(R,)], the rows' frequencies

    Returns
    -------
    lo : np.ndarray [shape=(R,)], int, the bin at or below each row
    frac : np.ndarray [shape=(R, 1)], 0..1, the row's place between ``lo`` and ``lo + 1``
    """
    f = np.asarray(frequency_hz, float)
    lo = np.clip(np.searchsorted(f, rows_hz, side="right") - 1, 0, f.size - 2)
    frac = np.clip((rows_hz - f[lo]) / (f[lo + 1] - f[lo]), 0.0, 1.0)[:, None]
    return lo, frac


def spectrogram_columns(frames: np.ndarray, *, sample_rate: float, rows_hz: np.ndarray) -> np.ndarray:
    """A spectrogram's columns: each frame's Hann-windowed density, read at log-spaced rows (:func:`log_frequency_rows`).

    Parameters
    ----------
    frames : np.ndarray [shape=(k, n)], the signal's units, one frame per column
    sample_rate : float, Hz
    rows_hz : np.ndarray [shape=(R,)], the rows' frequencies, ascending

    Returns
    -------
    np.ndarray [shape=(R, k)], dB re 1 unit²/Hz, interpolated in dB between the two bins around each row
    """
    n = frames.shape[-1]
    lo, frac = log_frequency_rows(np.fft.rfftfreq(n, 1 / sample_rate), rows_hz)
    need = np.unique(np.concatenate([lo, lo + 1]))  # only the bins the rows read
    at = np.searchsorted(need, lo)
    level = 10 * np.log10(np.maximum(density(frames, periodic_hann(n), sample_rate=sample_rate)[:, need].T, 1e-30))
    return level[at] * (1 - frac) + level[at + 1] * frac


class WelchSpectrum:
    """Welch's average of Hann periodograms with 50 % overlap, fed block by block.

    Parameters
    ----------
    sample_rate : int, Hz
    segment : int, samples per periodogram
    """

    def __init__(self, *, sample_rate: int, segment: int = SEGMENT):
        self.sample_rate, self.segment = int(sample_rate), int(segment)
        self.window = periodic_hann(self.segment)
        self._buf = np.zeros(0)
        self._acc = np.zeros(self.segment // 2 + 1)
        self._count = 0

    def add(self, x: np.ndarray) -> None:
        """Feed the next samples, shape (n,)."""
        self._buf = np.concatenate([self._buf, np.asarray(x, float)])
        hop = self.segment // 2
        k = 0 if self._buf.size < self.segment else 1 + (self._buf.size - self.segment) // hop
        if k:
            idx = np.arange(self.segment)[None, :] + hop * np.arange(k)[:, None]
            self._acc += density(self._buf[idx], self.window, sample_rate=self.sample_rate).sum(axis=0)
            self._count += k
            self._buf = self._buf[k * hop :]

    def value(self) -> tuple[np.ndarray, np.ndarray]:
        """(frequency_hz [shape=(F,)], level_db [shape=(F,)]): dB re 1 unit²/Hz; −300 dB before the first segment."""
        f = np.fft.rfftfreq(self.segment, 1 / self.sample_rate)
        if self._count == 0:
            return f, np.full(f.size, -300.0)
        return f, 10 * np.log10(np.maximum(self._acc / self._count, 1e-30))


def long_term_spectrum(samples: np.ndarray, *, sample_rate: int, segment: int = SEGMENT) -> tuple[np.ndarray, np.ndarray]:
    """Long-term average spectrum of a whole signal (see :class:`WelchSpectrum`).

    Parameters
    ----------
    samples : np.ndarray [shape=(n,)], any unit
    sample_rate : int, Hz
    segment : int, samples per periodogram; shortened to the signal's length

    Returns
    -------
    (frequency_hz [shape=(F,)], level_db [shape=(F,)]): dB re 1 unit²/Hz
    """
    x = np.asarray(samples, float)
    w = WelchSpectrum(sample_rate=sample_rate, segment=max(2, min(segment, x.size)))
    w.add(x)
    return w.value()
