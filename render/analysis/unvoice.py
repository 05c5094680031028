"""Un-voicing: estimate the string velocity behind a recording of a passive pickup.

Model of the recording (the DI, volts at the amp input):

    y = h * v + n

with v the string velocity (one signal, taken to be the same at both sensing
points), h the impulse response of the design's passive reference (string
velocity to amp input, V per m/s) and n the recording's own noise. The
estimate is v_est = w * y with one fixed FIR filter w, designed once from the
passive response H(f) and two statistics of the recording taken in a first
pass over it:

- S(f): its long-term mean power in 1/6-octave bands;
- N(f): its noise floor, a low percentile (``NOISE_PERCENTILE``) of the same
  band powers over short frames: the quietest moments of the recording.

The inverse is regularised in two ways (Tikhonov and Wiener):

    W(f) = conj(H) · T(f) / (|H|² + λ_gain + ρ(f) · |H|² · N / (S − N))

- ``λ_gain = (|H(1 kHz)| / (2 · 10^(B/20)))²`` with B = ``max_boost_db``.
  Because x / (x² + λ) never exceeds 1 / (2√λ), |W| never exceeds
  10^(B/20) / |H(1 kHz)|: the inverse boosts at most B dB above its passband
  level, wherever the passive response has fallen (above the resonance).
- ``|H|² · N / (S − N)`` is the Wiener filter's noise-to-signal term with the
  velocity's power estimated as (S − N) / |H|²: where the recording is near
  its floor, the inverse fades out instead of amplifying noise (where S ≤ N
  it is zero). ρ(f) = clip(|H(1 kHz)|² / |H(f)|² − 1, 0, 1) lets it act only
  where the exact inverse boosts (fully from +3 dB above its 1 kHz level):
  where the inverse does not boost, the recording keeps its own signal to
  noise ratio, and a percentile of continuous playing (which is playing, not
  noise) must not cut it.
- T(f) = f² / √(f⁴ + f_low⁴) is a zero-phase high-pass taper (the magnitude
  of a 2nd-order Butterworth high-pass at ``LOW_HZ``): a DC offset or
  sub-audio rumble in a recording is not string velocity.

The trusted band is the contiguous band around 1 kHz where the realised
filter stays within ``TRUST_DB`` of the exact inverse 1/H; outside it the
estimate is shaped by the regularisation, not by the string.

Before filtering, the recording's mean is taken off (a DC offset is not
string velocity, and the taper cannot remove the step a constant offset makes
at the file's ends), and both ends are faded over ``FADE_SECONDS`` with a
raised cosine (:func:`prepared`), so a take cut mid-note does not click.

Filtering is overlap-add with fixed segments (:class:`StreamingFIR`), so a
long file is processed in bounded memory and the output does not depend on
how the input is cut into chunks.

Everything here is arrays in, arrays out; files live in :mod:`render.runs.unvoice`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from .spectrum import density, periodic_hann

REFERENCE_HZ = 1000.0  # the passband reference of the inverse (the same 1 kHz as level_1k_db)
LOW_HZ = 20.0  # the high-pass taper's corner: the bottom of the audio band (common practice, no source)
MAX_BOOST_DB = 20.0  # default: the inverse boosts at most this much above its level at 1 kHz
TRUST_DB = 1.0  # trusted where the realised inverse is within this of the exact 1/H
TOP_FRACTION = 0.45  # never trust above 0.45·sample_rate: a recorder's anti-alias filter lives there (from memory)
NOISE_PERCENTILE = 10.0  # the noise floor: this percentile of short-time band powers
STATS_SECONDS = 0.04  # frame length of the statistics (next power of two above this many seconds)
BANDS_PER_OCTAVE = 6  # resolution of the statistics (base-10 fractional-octave centres)
HIST_LOW_DB, HIST_HIGH_DB, HIST_STEP_DB = -320.0, 80.0, 0.1  # level histogram for the percentile
FRAME_BATCH = 64  # frames per batch of the statistics: fixed, so sums do not depend on how the input is cut
FIR_SECONDS = 0.25  # FIR length: next power of two above this many seconds
DESIGN_OVERSAMPLE = 4  # design grid: this many times the FIR length
FIR_TAPER = 0.2  # Tukey window fraction on the FIR's ends
RATIO_CAP = 1e12  # noise-to-signal ratio used where S <= N (the inverse is then ~0)
FADE_SECONDS = 0.005  # raised-cosine fade at both ends of the recording, so a take cut mid-note does not click (common practice, no source)
MEAN_CHUNK = 1 << 16  # samples per partial sum of the mean: fixed, so the mean does not depend on how the input is cut


def next_pow2(n: float) -> int:
    """Smallest power of two >= n (n > 0)."""
    return 1 << max(0, int(math.ceil(math.log2(max(float(n), 1.0)))))


def stats_frame(sample_rate: int) -> int:
    """Frame length (samples) of the recording's statistics at ``sample_rate``: 2048 at 44.1 or 48 kHz."""
    return next_pow2(STATS_SECONDS * sample_rate)


def fir_length(sample_rate: int) -> int:
    """FIR length (taps) of the inverse at ``sample_rate``: 16384 at 44.1 or 48 kHz."""
    return next_pow2(FIR_SECONDS * sample_rate)


def band_centres(*, sample_rate: int, bands_per_octave: int = BANDS_PER_OCTAVE, low_hz: float = LOW_HZ) -> np.ndarray:
    """Base-10 fractional-octave centres 1000·10^(k·3/(10·b)) Hz from ``low_hz`` to below Nyquist.

    The base-10 octave ratio 10^(3/10) and the centres follow IEC 61260-1 (b = 3
    gives the third-octave centres 1000·10^(k/10)). Returns shape (J,), Hz.
    """
    step = 3.0 / (10.0 * bands_per_octave)
    k0 = math.ceil(math.log10(low_hz / 1000.0) / step)
    k1 = math.floor(math.log10(0.5 * sample_rate / 1000.0) / step - 1e-9)
    k = np.arange(k0, k1 + 1)
    centres = 1000.0 * 10.0 ** (k * step)
    return centres[centres * 10.0 ** (step / 2) <= 0.5 * sample_rate]


def band_matrix(frequency_hz: np.ndarray, centres_hz: np.ndarray, *, bands_per_octave: int) -> np.ndarray:
    """Membership (J, K): bins within each band's edges centre·10^(±3/(20·b)), each band at least its nearest bin.

    Rows are normalised to sum 1, so ``M @ psd`` is the mean density in each band.
    """
    half = 10.0 ** (3.0 / (20.0 * bands_per_octave))
    f = np.asarray(frequency_hz, float)
    m = (f[None, :] >= centres_hz[:, None] / half) & (f[None, :] < centres_hz[:, None] * half)
    empty = ~m.any(axis=1)
    if empty.any():
        nearest = np.argmin(np.abs(f[None, :] - centres_hz[empty, None]), axis=1)
        m[np.flatnonzero(empty), nearest] = True
    m = m.astype(float)
    return m / m.sum(axis=1, keepdims=True)


# ---------------------------------------------------------------------------
# Statistics of a signal, streamed


@dataclass(frozen=True)
class SpectrumStats:
    """Long-term statistics of a signal (units: those of the signal, written u).

    frequency_hz : (K,), Hz: the frames' rfft bins
    psd : (K,), u²/Hz: mean power spectral density (Welch, Hann, 50 % overlap) over non-silent frames
    band_hz : (J,), Hz: centres of the 1/6-octave statistics bands
    band_mean : (J,), u²/Hz: mean density per band
    band_floor : (J,), u²/Hz: the NOISE_PERCENTILE-th percentile of the band density over frames (0 when no frames)
    frames : int, frames counted (digital silence excluded)
    silent_frames : int, frames of exact zeros, left out
    frame, hop : int, samples
    """

    frequency_hz: np.ndarray
    psd: np.ndarray
    band_hz: np.ndarray
    band_mean: np.ndarray
    band_floor: np.ndarray
    frames: int
    silent_frames: int
    frame: int
    hop: int


class SpectrumAccumulator:
    """Streaming statistics: feed chunks of any size with :meth:`add`, read :meth:`result`.

    Frames are fixed (length :func:`stats_frame`, hop half of it, counted
    from the first sample), so the result does not depend on the chunking.
    Memory is bounded: the level histogram is (bands × 4000) counts.
    A partial last frame is left out.
    """

    def __init__(self, *, sample_rate: int, percentile: float = NOISE_PERCENTILE):
        self.sample_rate = int(sample_rate)
        self.frame = stats_frame(self.sample_rate)
        self.hop = self.frame // 2
        self.percentile = float(percentile)
        self.window = periodic_hann(self.frame)
        self.frequency_hz = np.fft.rfftfreq(self.frame, 1.0 / self.sample_rate)
        self.band_hz = band_centres(sample_rate=self.sample_rate)
        self._m = band_matrix(self.frequency_hz, self.band_hz, bands_per_octave=BANDS_PER_OCTAVE)
        self._nbins = int(round((HIST_HIGH_DB - HIST_LOW_DB) / HIST_STEP_DB))
        self._sums = {
            "hist": np.zeros(self.band_hz.size * self._nbins, dtype=np.int64),
            "psd": np.zeros(self.frequency_hz.size),
            "band": np.zeros(self.band_hz.size),
            "frames": 0,
            "silent": 0,
        }
        self._pending = np.zeros(0)

    def add(self, chunk: np.ndarray) -> None:
        """Take the next samples, shape (n,), in the signal's units."""
        x = np.concatenate([self._pending, np.asarray(chunk, float).ravel()])
        span = self.frame + (FRAME_BATCH - 1) * self.hop  # samples of one fixed batch of frames
        start = 0
        while x.size - start >= span:
            self._take(self._sums, x[start : start + span])
            start += FRAME_BATCH * self.hop
        self._pending = x[start:]

    def _take(self, sums: dict, x: np.ndarray) -> None:
        """Add every whole frame of ``x`` (frames from its start) to ``sums``; batches are fixed, so sums do not depend on the chunking."""
        count = 0 if x.size < self.frame else 1 + (x.size - self.frame) // self.hop
        if not count:
            return
        idx = np.arange(self.frame)[None, :] + self.hop * np.arange(count)[:, None]
        frames = x[idx]
        loud = np.any(frames != 0.0, axis=1)
        sums["silent"] += int(count - loud.sum())
        frames = frames[loud]
        if not frames.shape[0]:
            return
        p = density(frames, self.window, sample_rate=self.sample_rate)
        sums["psd"] += p.sum(axis=0)
        bands = p @ self._m.T  # (frames, J)
        sums["band"] += bands.sum(axis=0)
        with np.errstate(divide="ignore"):
            pos = (10.0 * np.log10(bands) - HIST_LOW_DB) / HIST_STEP_DB
        k = np.clip(np.nan_to_num(pos, neginf=0.0, posinf=self._nbins - 1.0), 0, self._nbins - 1).astype(np.int64)
        flat = (np.arange(self.band_hz.size)[None, :] * self._nbins + k).ravel()
        sums["hist"] += np.bincount(flat, minlength=sums["hist"].size)
        sums["frames"] += frames.shape[0]

    def result(self) -> SpectrumStats:
        """The statistics so far (the accumulator can keep going)."""
        sums: dict[str, Any] = {k: (v.copy() if isinstance(v, np.ndarray) else v) for k, v in self._sums.items()}
        self._take(sums, self._pending)  # the whole frames left over, on a copy
        n, silent = sums["frames"], sums["silent"]
        if n == 0:
            zero_k, zero_j = np.zeros(self.frequency_hz.size), np.zeros(self.band_hz.size)
            return SpectrumStats(self.frequency_hz, zero_k, self.band_hz, zero_j, zero_j.copy(), 0, silent, self.frame, self.hop)
        hist = sums["hist"].reshape(self.band_hz.size, self._nbins)
        cum = np.cumsum(hist, axis=1)
        need = self.percentile / 100.0 * n
        need = max(need, 1.0)
        first = np.argmax(cum >= need, axis=1)  # first histogram bin reaching the percentile
        rows = np.arange(first.size)
        below = np.where(first > 0, cum[rows, np.maximum(first - 1, 0)], 0)
        frac = (need - below) / np.maximum(hist[rows, first], 1)  # linear within the bin
        floor_db = HIST_LOW_DB + (first + frac) * HIST_STEP_DB
        floor = np.where(first == 0, 0.0, 10.0 ** (floor_db / 10.0))  # bottom bin: silence below -320 dB
        return SpectrumStats(
            frequency_hz=self.frequency_hz,
            psd=sums["psd"] / n,
            band_hz=self.band_hz,
            band_mean=sums["band"] / n,
            band_floor=floor,
            frames=n,
            silent_frames=silent,
            frame=self.frame,
            hop=self.hop,
        )


def noise_to_signal(stats: SpectrumStats) -> np.ndarray:
    """The Wiener term's ratio N / (S − N) per statistics band, shape (J,), >= 0 (RATIO_CAP where S <= N)."""
    s, n = stats.band_mean, np.minimum(stats.band_floor, stats.band_mean)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(s - n > 0, n / (s - n), RATIO_CAP)
    return np.minimum(r, RATIO_CAP)


# ---------------------------------------------------------------------------
# The inverse


@dataclass(frozen=True)
class Inverse:
    """A designed inverse filter and what it promises.

    taps : (L,), m/s per V per sample: the FIR (causal, bulk delay ``delay``)
    delay : int, samples: remove this many from the filtered output to align it
    sample_rate : int, Hz
    frequency_hz : (F,), Hz: the design grid (0 .. sample_rate/2)
    passive : (F,) complex, V per m/s: the passive response on the grid
    designed : (F,) complex, m/s per V: the regularised inverse W
    realised : (F,) complex, m/s per V: the FIR's own response (delay removed)
    reference_level : float, V per m/s: |H(1 kHz)|
    max_boost_db : float, dB: the boost bound above 1/|H(1 kHz)|
    gain_limit : float, m/s per V: the bound on |W|, 10^(B/20)/|H(1 kHz)| (or the realised maximum if that is above it)
    max_gain : float, m/s per V: the realised maximum of |FIR response| over the grid
    lambda_gain : float, (V per m/s)²: the Tikhonov term
    trusted_band_hz : (low, high) Hz, or None when no band around 1 kHz is within TRUST_DB
    fir_error_db : float, dB: largest |realised/designed| in the trusted band (0 when none)
    """

    taps: np.ndarray
    delay: int
    sample_rate: int
    frequency_hz: np.ndarray
    passive: np.ndarray
    designed: np.ndarray
    realised: np.ndarray
    reference_level: float
    max_boost_db: float
    gain_limit: float
    max_gain: float
    lambda_gain: float
    trusted_band_hz: tuple[float, float] | None
    fir_error_db: float


def design_grid(*, sample_rate: int, taps: int | None = None) -> np.ndarray:
    """The design grid's frequencies, shape (DESIGN_OVERSAMPLE·L/2 + 1,), Hz, for an FIR of ``taps`` (default :func:`fir_length`)."""
    taps = fir_length(sample_rate) if taps is None else int(taps)
    return np.fft.rfftfreq(DESIGN_OVERSAMPLE * taps, 1.0 / sample_rate)


def interp_complex(x, frequency_hz: np.ndarray, values: np.ndarray):
    """Complex ``values`` on ``frequency_hz`` interpolated linearly (real and imaginary parts) at ``x``."""
    return np.interp(x, frequency_hz, values.real) + 1j * np.interp(x, frequency_hz, values.imag)


def low_taper(frequency_hz: np.ndarray, *, low_hz: float = LOW_HZ) -> np.ndarray:
    """|2nd-order Butterworth high-pass| f²/√(f⁴ + f_low⁴), shape of ``frequency_hz``, 0..1."""
    f = np.asarray(frequency_hz, float)
    return f**2 / np.sqrt(f**4 + low_hz**4)


def design_inverse(
    passive: np.ndarray,
    *,
    sample_rate: int,
    band_hz: np.ndarray | None = None,
    noise_ratio: np.ndarray | None = None,
    max_boost_db: float = MAX_BOOST_DB,
    low_hz: float = LOW_HZ,
    taps: int | None = None,
) -> Inverse:
    """The regularised inverse of a passive response, as a fixed FIR.

    Parameters
    ----------
    passive : complex (F,), V per m/s: H on :func:`design_grid` (same ``sample_rate`` and ``taps``)
    sample_rate : int, Hz
    band_hz : (J,), Hz, with noise_ratio: the statistics bands
    noise_ratio : (J,), >= 0: N/(S − N) per band (:func:`noise_to_signal`); None: no Wiener term
    max_boost_db : float, dB, 0..60: the Tikhonov bound above 1/|H(1 kHz)|
    low_hz : float, Hz, > 0: the high-pass taper's corner
    taps : int, power of two, or None for :func:`fir_length`

    Returns
    -------
    Inverse
    """
    taps = fir_length(sample_rate) if taps is None else int(taps)
    f = design_grid(sample_rate=sample_rate, taps=taps)
    h = np.asarray(passive, complex)
    if h.shape != f.shape:
        raise ValueError(f"passive has shape {h.shape}; the design grid has {f.shape}")
    if not (0.0 <= max_boost_db <= 60.0):
        raise ValueError(f"max_boost_db={max_boost_db}: must be from 0 to 60 dB")
    ref = float(np.abs(interp_complex(REFERENCE_HZ, f, h)))
    limit = 10.0 ** (max_boost_db / 20.0) / ref
    lam = 1.0 / (2.0 * limit) ** 2
    mag2 = np.abs(h) ** 2
    if noise_ratio is None:
        wiener = np.zeros_like(mag2)
    else:
        logr = np.log(np.clip(np.asarray(noise_ratio, float), 1.0 / RATIO_CAP, RATIO_CAP))
        fl = np.log(np.maximum(f, 1e-3))
        r = np.exp(np.interp(fl, np.log(np.asarray(band_hz, float)), logr))
        with np.errstate(divide="ignore"):
            boosting = np.clip(ref**2 / mag2 - 1.0, 0.0, 1.0)  # 0 where 1/|H| <= its 1 kHz level, 1 from +3 dB
        wiener = mag2 * r * boosting
    w = np.conj(h) * low_taper(f, low_hz=low_hz) / (mag2 + lam + wiener)
    w[0] = 0.0  # no DC
    w[-1] = w[-1].real  # the grid is even, so its last bin is Nyquist, real for a real filter

    n_fft = DESIGN_OVERSAMPLE * taps
    delay = taps // 2
    k = np.arange(f.size)
    impulse = np.fft.irfft(w * np.exp(-2j * np.pi * k * delay / n_fft), n_fft)
    from scipy.signal.windows import tukey

    fir = impulse[:taps] * tukey(taps, FIR_TAPER)
    realised = np.fft.rfft(fir, n_fft) * np.exp(2j * np.pi * k * delay / n_fft)

    max_gain = float(np.max(np.abs(realised)))
    exact_err = np.abs(realised) * np.abs(h)  # |R / (1/H)|
    with np.errstate(divide="ignore"):
        err_db = 20.0 * np.log10(exact_err)
    ok = (np.abs(err_db) <= TRUST_DB) & (f <= TOP_FRACTION * sample_rate) & (f > 0)
    band = _band_around(f, ok, REFERENCE_HZ)
    fir_err = 0.0
    if band is not None:
        inside = (f >= band[0]) & (f <= band[1])
        with np.errstate(divide="ignore", invalid="ignore"):
            d = 20.0 * np.log10(np.abs(realised[inside]) / np.abs(w[inside]))
        fir_err = float(np.max(np.abs(d))) if d.size else 0.0
    return Inverse(
        taps=fir,
        delay=delay,
        sample_rate=int(sample_rate),
        frequency_hz=f,
        passive=h,
        designed=w,
        realised=realised,
        reference_level=ref,
        max_boost_db=float(max_boost_db),
        gain_limit=max(limit, max_gain),
        max_gain=max_gain,
        lambda_gain=lam,
        trusted_band_hz=band,
        fir_error_db=fir_err,
    )


def _band_around(f: np.ndarray, ok: np.ndarray, centre_hz: float) -> tuple[float, float] | None:
    """The contiguous run of ``ok`` that holds ``centre_hz``, as (low, high) Hz; None if ``centre_hz`` is not ok."""
    i = int(np.argmin(np.abs(f - centre_hz)))
    if not ok[i]:
        return None
    bad = np.flatnonzero(~ok)
    below, above = bad[bad < i], bad[bad > i]
    lo = below[-1] + 1 if below.size else 0
    hi = above[0] - 1 if above.size else f.size - 1
    return float(f[lo]), float(f[hi])


# ---------------------------------------------------------------------------
# Streaming filter


class StreamingFIR:
    """Overlap-add FIR filtering in fixed segments, with the bulk delay removed.

    Feed chunks of any size to :meth:`process` and call :meth:`finish` once;
    the concatenated outputs are the first n samples of ``(taps * x)[delay:]``
    (n the input length), identical whatever the chunking, in memory bounded
    by a few segments.
    """

    def __init__(self, taps: np.ndarray, *, delay: int, segment: int | None = None):
        self.taps = np.asarray(taps, float)
        self.delay = int(delay)
        self.segment = int(segment or self.taps.size)
        self.n_fft = next_pow2(self.segment + self.taps.size - 1)
        self._spectrum = np.fft.rfft(self.taps, self.n_fft)
        self._pending = np.zeros(0)
        self._tail = np.zeros(self.n_fft - self.segment)
        self._to_skip = self.delay
        self._seen = 0
        self._emitted = 0

    def _run(self, x: np.ndarray) -> np.ndarray:
        out = []
        for s in range(0, x.size, self.segment):
            y = np.fft.irfft(np.fft.rfft(x[s : s + self.segment], self.n_fft) * self._spectrum, self.n_fft)
            y[: self._tail.size] += self._tail
            out.append(y[: self.segment])
            self._tail = y[self.segment :].copy()
        return np.concatenate(out) if out else np.zeros(0)

    def _emit(self, y: np.ndarray, limit: int | None = None) -> np.ndarray:
        skip = min(self._to_skip, y.size)
        self._to_skip -= skip
        y = y[skip:]
        if limit is not None:
            y = y[: max(0, limit - self._emitted)]
        self._emitted += y.size
        return y

    def process(self, chunk: np.ndarray) -> np.ndarray:
        """Filter the next input samples (n,); returns the output samples now complete (aligned)."""
        x = np.concatenate([self._pending, np.asarray(chunk, float).ravel()])
        self._seen += np.asarray(chunk).size
        whole = (x.size // self.segment) * self.segment
        self._pending = x[whole:]
        return self._emit(self._run(x[:whole]))

    def finish(self) -> np.ndarray:
        """Flush: the remaining output, so that the total equals the input length."""
        need = self._seen - self._emitted
        out = [self._emit(self._run(np.pad(self._pending, (0, self.segment - self._pending.size))), self._seen)] if self._pending.size else []
        self._pending = np.zeros(0)
        zero = np.zeros(self.segment)
        while sum(o.size for o in out) < need:
            out.append(self._emit(self._run(zero), self._seen))
        return np.concatenate(out) if out else np.zeros(0)


class RunningMean:
    """The mean of a signal fed in chunks of any size; sums over fixed spans from the first sample, so the result does not depend on the chunking."""

    def __init__(self) -> None:
        self._total, self._count, self._pending = 0.0, 0, np.zeros(0)

    def add(self, chunk: np.ndarray) -> None:
        x = np.concatenate([self._pending, np.asarray(chunk, float).ravel()])
        whole = (x.size // MEAN_CHUNK) * MEAN_CHUNK
        for s in range(0, whole, MEAN_CHUNK):
            self._total += float(np.sum(x[s : s + MEAN_CHUNK]))
        self._count += whole
        self._pending = x[whole:]

    def result(self) -> float:
        """The mean so far (0 for no samples)."""
        n = self._count + self._pending.size
        return (self._total + float(np.sum(self._pending))) / n if n else 0.0


def fade_length(sample_rate: int) -> int:
    """Samples of the raised-cosine fade at each end (:data:`FADE_SECONDS`): 240 at 48 kHz."""
    return max(1, int(round(FADE_SECONDS * sample_rate)))


def edge_gain(start: int, n: int, total: int, fade: int) -> np.ndarray:
    """The fade's gain for samples ``start`` … ``start + n − 1`` of a signal of ``total`` samples, shape (n,), 0..1.

    A raised cosine sin²(π/2 · (k + ½)/fade) over the first ``fade`` samples (k from the start) and
    the last ``fade`` (k from the end); 1 between.
    """
    i = np.arange(start, start + n)
    k = np.minimum(i, total - 1 - i).astype(float)
    return np.where(k < fade, np.sin(0.5 * np.pi * (k + 0.5) / fade) ** 2, 1.0)


def prepared(x: np.ndarray, *, mean: float, start: int, total: int, sample_rate: int) -> np.ndarray:
    """What the inverse filters: samples ``start`` … of a recording (V) less its mean (a DC offset is not
    string velocity) and faded in and out at its ends (:func:`edge_gain`), so neither the offset nor a
    take cut mid-note steps from or to the silence around the file."""
    x = np.asarray(x, float)
    return (x - mean) * edge_gain(start, x.size, total, fade_length(sample_rate))


def unvoice_array(di: np.ndarray, *, passive: np.ndarray, sample_rate: int, max_boost_db: float = MAX_BOOST_DB, taps: int | None = None) -> tuple[np.ndarray, Inverse]:
    """One-shot un-voicing of a whole recording in memory (the CLI streams the same steps).

    di : (n,), V at the amp input
    passive : complex (F,), V per m/s: the passive reference's response on :func:`design_grid`
    sample_rate : int, Hz
    max_boost_db : float, dB, 0..60
    Returns (velocity (n,), m/s; the Inverse used).
    """
    acc, mean = SpectrumAccumulator(sample_rate=sample_rate), RunningMean()
    acc.add(di)
    mean.add(di)
    stats = acc.result()
    inv = design_inverse(passive, sample_rate=sample_rate, band_hz=stats.band_hz, noise_ratio=noise_to_signal(stats), max_boost_db=max_boost_db, taps=taps)
    fir = StreamingFIR(inv.taps, delay=inv.delay)
    x = prepared(di, mean=mean.result(), start=0, total=np.asarray(di).size, sample_rate=sample_rate)
    v = np.concatenate([fir.process(x), fir.finish()])
    return v, inv


# ---------------------------------------------------------------------------
# Band levels (reports)


def third_octave_centres(low_hz: float, high_hz: float) -> np.ndarray:
    """Third-octave centres 1000·10^(k/10) Hz (IEC 61260-1, base 10) from ``low_hz`` to ``high_hz``, shape (B,)."""
    k = np.arange(round(10 * math.log10(low_hz / 1000.0)), round(10 * math.log10(high_hz / 1000.0)) + 1)
    return 1000.0 * 10.0 ** (k / 10.0)


def band_levels_from_psd(psd: np.ndarray, *, frequency_hz: np.ndarray, centres_hz: np.ndarray) -> np.ndarray:
    """Third-octave band levels of a one-sided density.

    psd : (K,), u²/Hz (u the signal's unit), on the evenly spaced ``frequency_hz`` (K,), Hz
    centres_hz : (B,), Hz; each band spans centre·10^(±1/20) (IEC 61260-1): the density taken
        as constant over each bin (f ± df/2) is integrated over the band's edges, each bin
        weighted by the width it shares with the band, so a band narrower than a bin (the
        lowest third octaves) gets its own width's share, not a whole bin
    Returns (B,), dB re 1 u² (−inf for zero power).
    """
    f = np.asarray(frequency_hz, float)
    df = f[1] - f[0]
    psd = np.asarray(psd, float)
    out = np.empty(len(centres_hz))
    for i, c in enumerate(centres_hz):
        lo, hi = c * 10**-0.05, c * 10**0.05
        shared = np.clip(np.minimum(f + df / 2, hi) - np.maximum(f - df / 2, lo), 0.0, None)
        p = float(np.sum(psd * shared))
        out[i] = 10.0 * math.log10(p) if p > 0 else -math.inf
    return out


MODEL_ERROR = 0.10  # the model error whose effect every run reports


def model_error_table(design, *, frequency_hz: np.ndarray, band_hz) -> dict:
    """What a model 10 % off would do to the estimate: 20·log10|H_true / H_model| in the trusted band.

    design : the model (a validated Design, its rig applied)
    frequency_hz : (F,), Hz, the frequencies to look at; band_hz : (low, high) Hz or None for all of them
    For each of the coils' inductance, the coils' winding capacitance and the
    rig's cable capacitance, the true value is taken 10 % above the model's and
    10 % below; returns the largest |error| (signed, dB) and its frequency (Hz).
    """
    from dataclasses import replace

    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    def scaled(k):
        c = design
        return {
            "coil_inductance": replace(c, coil_a=replace(c.coil_a, inductance=c.coil_a.inductance * k), coil_b=replace(c.coil_b, inductance=c.coil_b.inductance * k)),
            "coil_capacitance": replace(c, coil_a=replace(c.coil_a, capacitance=c.coil_a.capacitance * k), coil_b=replace(c.coil_b, capacitance=c.coil_b.capacitance * k)),
            "cable_capacitance": replace(c, rig=replace(c.rig, cable_capacitance=c.rig.cable_capacitance * k)),
        }

    f = np.asarray(frequency_hz, float)
    if band_hz is not None:
        f = f[(f >= band_hz[0]) & (f <= band_hz[1])]
    names = list(scaled(1.0))
    up, down = scaled(1.0 + MODEL_ERROR), scaled(1.0 - MODEL_ERROR)
    batch = [design] + [up[n] for n in names] + [down[n] for n in names]
    h = np.abs(responses(from_designs(batch)).passive_velocity()(f))
    out = {}
    for i, n in enumerate(names):
        rows = {}
        for sign, j in (("plus", 1 + i), ("minus", 1 + len(names) + i)):
            err = 20.0 * np.log10(h[j] / h[0])
            k = int(np.argmax(np.abs(err)))
            rows[f"true_{sign}_{int(MODEL_ERROR * 100)}_percent"] = {"max_error_db": round(float(err[k]), 3), "at_hz": round(float(f[k]), 1)}
        out[n] = rows
    return out
