"""One clip's assets on the comparison page: its 16-bit copy, true peak, spectrum curve and spectrogram strip.

Pure functions of the samples (arrays in, bytes and arrays out), so the
same clip always gives the same bytes:

- the copy is 16-bit PCM with triangular (TPDF) dither from a fixed seed,
  scaled so the clip's own peak sits just below full scale; the page is
  told how many volts one decoded unit is (``volts_per_unit``), so every
  clip's level is known exactly whatever its scale. Long clips are cut to
  their first :data:`PAGE_SECONDS`;
- the true peak is ITU-R BS.1770-4 Annex 2 (:func:`render.analysis.loudness.true_peak_dbtp`)
  of the copy as the page decodes it;
- the spectrum is the long-term average (Welch, :mod:`render.analysis.spectrum`)
  averaged in power over log-spaced bands;
- the strip is a spectrogram whose columns span the clip's duration
  exactly, so a position across it is a time in the clip. It is encoded as
  a PNG here (zlib, no matplotlib) in the page's own shading.
"""

from __future__ import annotations

import math
import struct
import zlib
from dataclasses import dataclass

import numpy as np

PAGE_SECONDS = 60.0  # s: the page carries at most this much of each clip
PCM_FULL_SCALE = 32768  # a 16-bit code over this is the decoded sample (Web Audio's reading of PCM)
PCM_PEAK_CODE = 32765  # the clip's peak lands here: room for the ±1 LSB of dither below 32767
DITHER_SEED = 1770  # fixed: the same clip gives the same copy
STRIP_COLUMNS = 480
STRIP_ROWS = 72
STRIP_RANGE_DB = 80.0
STRIP_LOW_HZ = 40.0
SPECTRUM_POINTS = 160
SPECTRUM_LOW_HZ = 20.0
# the strip's shading, quiet to loud: a pale paper, sand, copper, plum, near-black ink (the page's own)
SHADES = np.array([[247, 245, 239], [217, 199, 163], [176, 103, 58], [90, 42, 58], [27, 27, 47]], dtype=float)


@dataclass(frozen=True)
class PageCopy:
    """A clip as the page carries it.

    Attributes
    ----------
    wav : bytes
        16-bit PCM mono WAV.
    volts_per_unit : float, V
        Volts at the amp input per decoded sample unit (a decoded sample is code / 32768).
    true_peak_db : float or None, dB re 1 V
        True peak of the copy as decoded, in volts; None for silence.
    seconds : float, s
        Length of the copy.
    full_seconds : float, s
        Length of the clip it was cut from.
    """

    wav: bytes
    volts_per_unit: float
    true_peak_db: float | None
    seconds: float
    full_seconds: float

    @property
    def capped(self) -> bool:
        return self.seconds < self.full_seconds


def pcm16_wav(codes: np.ndarray, *, sample_rate: int) -> bytes:
    """A mono 16-bit PCM WAV of ``codes`` (int16): :func:`render.io.wav.pcm16_wav_bytes`."""
    from ..io.wav import pcm16_wav_bytes

    return pcm16_wav_bytes(codes, sample_rate=sample_rate)


def page_copy(volts: np.ndarray, *, sample_rate: int, max_seconds: float = PAGE_SECONDS, full_samples: int | None = None) -> PageCopy:
    """The page's copy of a clip: its first ``max_seconds``, 16-bit with TPDF dither, at its own scale.

    Parameters
    ----------
    volts : np.ndarray [shape=(n,)], V
        The clip (or at least its first ``max_seconds``).
    sample_rate : int, Hz
    max_seconds : float, s
    full_samples : int or None
        The clip's whole length, when ``volts`` holds only its start.
    """
    from ..analysis.loudness import true_peak_dbtp

    x = np.asarray(volts, dtype=float)
    full = int(full_samples) if full_samples is not None else x.size
    x = x[: int(round(max_seconds * sample_rate))]
    peak = float(np.max(np.abs(x))) if x.size else 0.0
    if not peak > 0 or not math.isfinite(peak):
        codes = np.zeros(x.size, dtype=np.int16)
        unit, tp = 1.0, None
    else:
        rng = np.random.default_rng(DITHER_SEED)
        dither = rng.random(x.size) - rng.random(x.size)  # TPDF, ±1 LSB
        codes = np.clip(np.round(x * (PCM_PEAK_CODE / peak) + dither), -PCM_FULL_SCALE, PCM_FULL_SCALE - 1).astype(np.int16)
        unit = peak * PCM_FULL_SCALE / PCM_PEAK_CODE
        tp_units = true_peak_dbtp(codes / PCM_FULL_SCALE)
        tp = tp_units + 20 * math.log10(unit)
    return PageCopy(wav=pcm16_wav(codes, sample_rate=sample_rate), volts_per_unit=unit, true_peak_db=tp, seconds=x.size / sample_rate, full_seconds=full / sample_rate)


def decoded(copy_wav: bytes) -> np.ndarray:
    """The samples a browser decodes from a :func:`pcm16_wav` (code / 32768), for checks."""
    n = struct.unpack("<I", copy_wav[40:44])[0]
    return np.frombuffer(copy_wav[44 : 44 + n], dtype="<i2").astype(float) / PCM_FULL_SCALE


def spectrum_curve(volts: np.ndarray, *, sample_rate: int, points: int = SPECTRUM_POINTS) -> tuple[np.ndarray, np.ndarray]:
    """The long-term average spectrum in ``points`` log-spaced bands from 20 Hz to min(20 kHz, Nyquist).

    Returns (band centres (points,) Hz, level (points,) dB re 1 V²/Hz): the
    mean power density of the Welch bins inside each band, or the density
    interpolated at its centre for a band narrower than a bin.
    """
    from ..analysis.spectrum import long_term_spectrum

    f, db = long_term_spectrum(np.asarray(volts, dtype=float), sample_rate=sample_rate)
    top = min(20000.0, sample_rate / 2)
    edges = np.geomspace(SPECTRUM_LOW_HZ, top, points + 1)
    centres = np.sqrt(edges[:-1] * edges[1:])
    power = 10.0 ** (db / 10.0)
    where = np.searchsorted(f, edges)
    running = np.concatenate([[0.0], np.cumsum(power)])
    sums = running[where[1:]] - running[where[:-1]]
    counts = np.diff(where)
    level = np.where(counts > 0, sums / np.maximum(counts, 1), np.interp(centres, f, power))
    return centres, 10.0 * np.log10(np.maximum(level, 1e-30))


def spectrogram_levels(volts: np.ndarray, *, sample_rate: int, columns: int = STRIP_COLUMNS, rows: int = STRIP_ROWS) -> np.ndarray:
    """Spectrogram (dB re 1 V²/Hz) whose ``columns`` frames are centred at equal steps across the clip.

    Column c is the Hann-windowed frame centred at (c + ½)/columns of the
    clip's duration (zero outside the clip); row r is the level at the r-th
    of ``rows`` log-spaced frequencies from 40 Hz to min(20 kHz, Nyquist),
    interpolated in dB between neighbouring bins. Shape (rows, columns),
    lowest frequency first.
    """
    x = np.asarray(volts, dtype=float)
    n = x.size
    seg = 2048 if n >= 2048 else max(64, 1 << max(6, int(n).bit_length() - 1))
    centres = ((np.arange(columns) + 0.5) * n / columns).astype(int)
    padded = np.concatenate([np.zeros(seg // 2), x, np.zeros(seg)])
    idx = centres[:, None] + np.arange(seg)[None, :]  # frame starts at centre - seg/2 in the padded signal
    from ..analysis.spectrum import spectrogram_columns

    return spectrogram_columns(padded[idx], sample_rate=sample_rate, rows_hz=np.geomspace(STRIP_LOW_HZ, min(20000.0, sample_rate / 2), rows))


def shade(levels: np.ndarray, *, top_db: float, range_db: float = STRIP_RANGE_DB) -> np.ndarray:
    """uint8 RGB pixels (rows, columns, 3) of ``levels``, ``top_db`` darkest, ``range_db`` below it palest; highest row first."""
    u = np.clip((np.asarray(levels) - (top_db - range_db)) / range_db, 0.0, 1.0)[::-1]
    pos = u * (len(SHADES) - 1)
    k = np.minimum(pos.astype(int), len(SHADES) - 2)
    t = (pos - k)[..., None]
    rgb = SHADES[k] * (1 - t) + SHADES[k + 1] * t
    return np.round(rgb).astype(np.uint8)


def png_rgb(pixels: np.ndarray) -> bytes:
    """A PNG (8-bit RGB, no ancillary chunks) of ``pixels`` (h, w, 3) uint8: the same pixels, the same bytes."""
    h, w, _ = pixels.shape
    raw = b"".join(b"\x00" + pixels[r].tobytes() for r in range(h))

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)

    header = struct.pack(">IIBBBBB", w, h, 8, 2, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header) + chunk(b"IDAT", zlib.compress(raw, 6)) + chunk(b"IEND", b"")
