"""WAV output: IEEE float32, no PEAK chunk and no timestamp.

libsndfile adds a PEAK chunk with a write time to float WAVs, so two
renders of the same thing would differ; this writer emits only the RIFF
header, a ``fmt `` chunk (WAVE_FORMAT_IEEE_FLOAT = 3, with cbSize = 0 and
a ``fact`` chunk as the RIFF/WAVE specification asks for non-PCM data) and
the ``data`` chunk, so identical audio gives identical bytes.
"""

from __future__ import annotations

import struct
from pathlib import Path

import numpy as np

from .atomic import atomic_path

WAVE_FORMAT_IEEE_FLOAT = 3


def float_wav_bytes(data: np.ndarray, sample_rate: int) -> bytes:
    """A complete IEEE-float WAV file (32-bit, format tag 3) as bytes.

    data : float array, shape (n,) for mono or (channels, n) with 1..8 channels
    sample_rate : int, Hz
    The header has a fmt chunk with cbSize = 0 and a fact chunk, as the
    RIFF WAVE format asks of non-PCM data (Microsoft Multimedia Programming
    Interface and Data Specifications 1.0, 1991; from memory). No other
    chunks, so the bytes depend only on the samples and the rate.
    """
    a = np.asarray(data, dtype=np.float64)
    if a.ndim == 1:
        a = a[None, :]
    if a.ndim != 2 or not 1 <= a.shape[0] <= 8:
        raise ValueError(f"data shape {a.shape}: expected (n,) or (channels, n) with 1..8 channels")
    if not np.isfinite(a).all():
        raise ValueError("data holds NaN or infinite samples; a WAV must be finite")
    channels, frames = a.shape
    if 4 * channels * frames + 64 >= 2**32:
        raise ValueError(f"{4 * channels * frames} bytes of audio: too long for a WAV file (4 GiB at most)")
    return float_wav_header(frames, channels=channels, sample_rate=sample_rate) + np.ascontiguousarray(a.T).astype("<f4").tobytes()


def float_wav_header(frames: int, *, channels: int, sample_rate: int) -> bytes:
    """The header of a float32 WAV of ``frames`` frames: RIFF, fmt (tag 3, cbSize 0), fact, data.

    The audio bytes follow it directly (4·channels·frames of them, always even,
    so no pad byte is needed); a streamed writer writes it first with 0 frames
    and again with the count at the end.
    """
    block = 4 * channels
    data_bytes = frames * block
    fmt = struct.pack("<HHIIHHH", WAVE_FORMAT_IEEE_FLOAT, channels, int(sample_rate), int(sample_rate) * block, block, 32, 0)
    fact = struct.pack("<I", frames)
    body_len = 4 + (8 + len(fmt)) + (8 + len(fact)) + (8 + data_bytes)
    return (
        b"RIFF" + struct.pack("<I", body_len) + b"WAVE"
        + b"fmt " + struct.pack("<I", len(fmt)) + fmt
        + b"fact" + struct.pack("<I", len(fact)) + fact
        + b"data" + struct.pack("<I", data_bytes)
    )


def write_float_wav(path: str | Path, data: np.ndarray, sample_rate: int, *, overwrite: bool = False) -> Path:
    """Write ``data`` (shape (n,) or (channels, n)) as a float32 WAV, atomically."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        tmp.write_bytes(float_wav_bytes(data, sample_rate))
    return Path(path)
