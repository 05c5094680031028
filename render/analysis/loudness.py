"""Loudness and true peak: ITU-R BS.1770-4, one meter for whole and streamed signals.

Each step follows Recommendation ITU-R BS.1770-4 (10/2015), Annex 1:

- K-weighting (Annex 1 §2, Tables 1 and 2): a high shelf (the head's
  acoustic effect) then a high pass (the "RLB" curve), as two biquads. The
  coefficients at any sample rate come from the analog prototypes that
  reproduce Tables 1 and 2 at 48 kHz (B. De Man, "Evaluation of
  implementations of the EBU R128 loudness measurement", AES 145th
  Convention, 2018; the same parameters pyloudnorm's "DeMan" class uses).
- Mean square per channel over 400 ms gating blocks overlapping by 75 %
  (eq. 1 and the note after eq. 3); the loudness of block j is
  −0.691 + 10·log10(Σᵢ Gᵢ·z_ij) (eq. 4), with Gᵢ = 1 for left and right.
- Absolute gate at −70 LKFS (eq. 5), relative gate 10 LU below the mean
  of the blocks above it (eq. 6), and the loudness of the blocks above both
  (eq. 7).

:class:`LoudnessMeter` takes the signal block by block with the filters'
state carried across, and keeps only the last gating block of weighted
samples, so a one-hour render is measured in bounded memory; fed a whole
signal it gives the same value to the last bit (the block sums are formed
over the same samples in the same order). The EBU Tech 3341 compliance
signals are generated and checked in ``tests/analysis/test_loudness.py``.
"""

from __future__ import annotations

import math

import numpy as np

BLOCK_S = 0.4  # gating block, s (BS.1770-4 Annex 1, eq. 1)
STEP = 0.25  # hop as a fraction of the block: 75 % overlap (BS.1770-4, after eq. 3)
ABSOLUTE_GATE_LKFS = -70.0  # eq. 5
RELATIVE_GATE_LU = -10.0  # eq. 6
OFFSET_DB = -0.691  # eq. 2 and 4: 0 LKFS for a 997 Hz full-scale sine in one front channel
TRUE_PEAK_OVERSAMPLE = 4  # BS.1770-4 Annex 2: oversample by four at 48 kHz

# Analog prototypes of the K-weighting stages (De Man 2018): gain (dB), Q, frequency (Hz)
_SHELF = (3.99984385397, 0.7071752369554193, 1681.9744509555319)
_HIGH_PASS = (0.5003270373253953, 38.13547087613982)


def k_weighting(sample_rate: float) -> list[tuple[np.ndarray, np.ndarray]]:
    """The two K-weighting biquads at ``sample_rate``: [(b, a) of the shelf, (b, a) of the high pass].

    At 48 kHz they equal BS.1770-4 Tables 1 and 2 (checked in the tests).
    """
    rate = float(sample_rate)
    g, q, fc = _SHELF
    k = np.tan(np.pi * fc / rate)
    vh = np.power(10.0, g / 20.0)
    vb = np.power(vh, 0.499666774155)
    a0_ = 1.0 + k / q + k * k
    shelf_b = np.array([(vh + vb * k / q + k * k) / a0_, 2.0 * (k * k - vh) / a0_, (vh - vb * k / q + k * k) / a0_]) / 1.0
    shelf_a = np.array([1.0, 2.0 * (k * k - 1.0) / a0_, (1.0 - k / q + k * k) / a0_]) / 1.0
    q, fc = _HIGH_PASS
    k = np.tan(np.pi * fc / rate)
    hp_b = np.array([1.0, -2.0, 1.0]) / 1.0
    hp_a = np.array([1.0, 2.0 * (k * k - 1.0) / (1.0 + k / q + k * k), (1.0 - k / q + k * k) / (1.0 + k / q + k * k)]) / 1.0
    return [(shelf_b, shelf_a), (hp_b, hp_a)]


class LoudnessMeter:
    """BS.1770-4 integrated loudness of a signal fed in blocks of any size.

    Parameters
    ----------
    sample_rate : int, Hz
    channels : int, 1 or 2 (left and right, each with weight Gᵢ = 1)
    """

    def __init__(self, *, sample_rate: int, channels: int = 1):
        from scipy.signal import lfilter

        self._lfilter = lfilter
        self.rate = int(sample_rate)
        self.channels = int(channels)
        self._stages = k_weighting(self.rate)
        self._zi = [[np.zeros(2) for _ in self._stages] for _ in range(self.channels)]
        self._buf = np.zeros((self.channels, 0))  # weighted samples from _buf_start on
        self._buf_start = 0
        self._n = 0
        self._z: list[np.ndarray] = []  # mean square per channel of each complete gating block

    def _bounds(self, j: int) -> tuple[int, int]:
        """Sample range [l, u) of gating block j (eq. 1; the same arithmetic as a whole-signal meter)."""
        return int(BLOCK_S * (j * STEP) * self.rate), int(BLOCK_S * (j * STEP + 1) * self.rate)

    def _block(self, j: int) -> np.ndarray:
        lo, hi = self._bounds(j)
        seg = self._buf[:, lo - self._buf_start : hi - self._buf_start]
        return np.array([(1.0 / (BLOCK_S * self.rate)) * np.sum(np.square(seg[c])) for c in range(self.channels)])

    def add(self, samples: np.ndarray) -> None:
        """Feed the next samples: shape (n,) for one channel or (channels, n)."""
        x = np.asarray(samples, dtype=float)
        x = x[None, :] if x.ndim == 1 else x
        if x.shape[0] != self.channels:
            raise ValueError(f"expected {self.channels} channel(s), got shape {x.shape}")
        weighted = np.empty_like(x)
        for c in range(self.channels):
            y = x[c]
            for s, (b, a) in enumerate(self._stages):
                y, self._zi[c][s] = self._lfilter(b, a, y, zi=self._zi[c][s])
                y = 1.0 * y
            weighted[c] = y
        self._buf = np.concatenate([self._buf, weighted], axis=1)
        self._n += x.shape[1]
        while self._bounds(len(self._z))[1] <= self._n:
            self._z.append(self._block(len(self._z)))
        keep = self._bounds(len(self._z))[0]  # the next block starts here: older samples are done with
        if keep > self._buf_start:
            self._buf = self._buf[:, keep - self._buf_start :]
            self._buf_start = keep

    @property
    def seconds(self) -> float:
        """How much signal has been fed (s)."""
        return self._n / self.rate

    def block_powers(self) -> np.ndarray:
        """Mean square of each gating block, summed over the channels (Gᵢ = 1), of what has been fed: eq. 1 and the sum in eq. 4.

        Empty below one 400 ms block; a last block may run past the end of the signal (the end of eq. 3).
        """
        if self._n < BLOCK_S * self.rate:
            return np.zeros(0)
        t = self._n / self.rate
        count = int(np.round((t - BLOCK_S) / (BLOCK_S * STEP))) + 1  # the end of eq. 3
        z = list(self._z[:count]) + [self._block(j) for j in range(len(self._z), count)]
        return np.array([float(np.sum(b)) for b in z])

    def integrated(self, *, gain_db: float = 0.0) -> float | None:
        """Integrated loudness (LUFS) of what has been fed, scaled by ``gain_db``: None below one gating block,
        or when every block is under the absolute gate (:func:`gated_loudness`)."""
        return gated_loudness(self.block_powers(), gain_db=gain_db)


def gated_loudness(block_powers, *, gain_db: float = 0.0) -> float | None:
    """Integrated loudness (LUFS) from the gating blocks' channel-summed mean squares, of the signal scaled by ``gain_db``.

    The K-weighting is linear, so a gain scales every block's power by 10^(gain_db/10); the absolute gate
    then applies to the scaled blocks (a quiet signal's blocks can fall under it at one scale and not at another).

    Parameters
    ----------
    block_powers : array_like [shape=(blocks,)], full scale ±1 squared
        :meth:`LoudnessMeter.block_powers`.
    gain_db : float, dB

    Returns
    -------
    float or None
        LUFS; None for no blocks or every block under the absolute gate.
    """
    z = np.asarray(block_powers, float) * 10.0 ** (gain_db / 10.0)
    if z.size == 0:
        return None
    with np.errstate(divide="ignore"):
        lj = OFFSET_DB + 10.0 * np.log10(z)  # eq. 4
    above = lj >= ABSOLUTE_GATE_LKFS  # eq. 5
    if not above.any():
        return None
    gate = OFFSET_DB + 10.0 * np.log10(np.mean(z[above])) + RELATIVE_GATE_LU  # eq. 6
    both = (lj > gate) & (lj > ABSOLUTE_GATE_LKFS)
    with np.errstate(divide="ignore"):
        value = float(OFFSET_DB + 10.0 * np.log10(np.mean(z[both]))) if both.any() else -math.inf  # eq. 7
    return value if math.isfinite(value) else None


def integrated_loudness(samples: np.ndarray, *, sample_rate: int) -> float | None:
    """Integrated loudness in LUFS of sample values (full scale ±1).

    Parameters
    ----------
    samples : np.ndarray [shape=(n,) or (channels, n)], full scale ±1
    sample_rate : int, Hz

    Returns
    -------
    float or None
        LUFS; None when the signal is shorter than one 400 ms block or silent
        (every block below the absolute gate).
    """
    x = np.asarray(samples, float)
    meter = LoudnessMeter(sample_rate=sample_rate, channels=1 if x.ndim == 1 else x.shape[0])
    meter.add(x)
    return meter.integrated()


def true_peak_dbtp(x: np.ndarray) -> float:
    """True peak of ``x`` (shape (n,), full scale ±1) in dBTP; −inf for silence.

    BS.1770-4 Annex 2: oversample by four and take the largest magnitude (here
    with :func:`scipy.signal.resample_poly`, a windowed-sinc polyphase filter).
    """
    from scipy.signal import resample_poly

    x = np.asarray(x, float)
    if x.size == 0:
        return -math.inf
    up = resample_poly(x, TRUE_PEAK_OVERSAMPLE, 1)
    peak = max(float(np.max(np.abs(up))), float(np.max(np.abs(x))))
    return 20.0 * math.log10(peak) if peak > 0 else -math.inf


TRUE_PEAK_CEILING_DBTP = -1.0  # the ceiling a loudness-matched copy keeps its true peak under (EBU R 128's maximum true peak)

# What a true peak read by :func:`true_peak_dbtp` can miss, so that gains aim this far under a ceiling:
# - over-sampling: the meter sees the signal only at 4x the sample rate, and a sine at frequency f can peak
#   midway between two over-sampled points, π·f/(4·fs) off in phase, where the meter reads cos(π·f/(4·fs)) of
#   it; at f = fs/2 that is cos(π/8), 0.688 dB low (the over-sampling error that BS.1770-4 Annex 2 notes;
#   the closed form is checked in tests/analysis/test_loudness.py);
# - the written file: a blind session's TPDF dither (at most 2**-23 of full scale) and float32 rounding (a
#   relative 2**-24) add under 0.00001 dB at -1 dBTP.
# 0.7 dB covers both; gains aim at ceiling - margin (true_peak_aim).
TRUE_PEAK_MARGIN_DB = 0.7


def true_peak_aim(ceiling_dbtp: float = TRUE_PEAK_CEILING_DBTP) -> float:
    """The true peak (dBTP, as :func:`true_peak_dbtp` reads it) that gains aim at under ``ceiling_dbtp``: :data:`TRUE_PEAK_MARGIN_DB` below it."""
    return float(ceiling_dbtp) - TRUE_PEAK_MARGIN_DB


def ceiling_record(ceiling_dbtp: float = TRUE_PEAK_CEILING_DBTP) -> dict:
    """The ceiling as the pages and records state it: the ceiling, the margin and the aim (dBTP, dB, dBTP)."""
    return {"ceiling_dbtp": float(ceiling_dbtp), "true_peak_margin_db": TRUE_PEAK_MARGIN_DB, "true_peak_aim_dbtp": true_peak_aim(ceiling_dbtp)}


def ceiling_gains(loudness, peaks, *, target_lufs: float, ceiling_dbtp: float = TRUE_PEAK_CEILING_DBTP) -> tuple[list, float]:
    """Gains (dB) bringing each signal to ``target_lufs``, all lowered together so that none's true peak passes ``ceiling_dbtp``.

    loudness : LUFS per signal, or None for one with no loudness (its gain is then None and it sets no limit)
    peaks : dBTP per signal (:func:`true_peak_dbtp`)
    returns : (gains, the common lowering in dB, ≥ 0)

    A gain of g dB moves both the integrated loudness and the true peak by g (BS.1770-4 is a mean square,
    the true peak a maximum). The measured true peaks are held at :func:`true_peak_aim`, :data:`TRUE_PEAK_MARGIN_DB`
    under the ceiling, so that what the 4x meter misses between samples, and dither and rounding, stay under it too.
    """
    aim = true_peak_aim(ceiling_dbtp)
    gains = [None if lufs is None else target_lufs - lufs for lufs in loudness]
    lowered = max([0.0, *(p + g - aim for p, g in zip(peaks, gains) if g is not None)])
    return [None if g is None else g - lowered for g in gains], float(lowered)
