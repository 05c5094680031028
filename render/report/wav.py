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


def float_wav_bytes(data: np.ndarray, sample_rate: int) -> bytes:
    """Encode ``data`` (shape (n,) or (channels, n), full scale ±1.0) as float32 WAV bytes."""
    x = np.asarray(data, dtype=np.float32)
    if x.ndim == 1:
        x = x[None, :]
    channels, frames = x.shape
    payload = np.ascontiguousarray(x.T).astype("<f4").tobytes()
    block = 4 * channels
    fmt = struct.pack("<HHIIHHH", 3, channels, int(sample_rate), int(sample_rate) * block, block, 32, 0)
    fact = struct.pack("<I", frames)
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + b"fact" + struct.pack("<I", 4) + fact
    body += b"data" + struct.pack("<I", len(payload)) + payload
    return b"RIFF" + struct.pack("<I", len(body)) + body


def write_float_wav(path: str | Path, data: np.ndarray, sample_rate: int, *, overwrite: bool = False) -> Path:
    """Write ``data`` (shape (n,) or (channels, n)) as a float32 WAV, atomically."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        tmp.write_bytes(float_wav_bytes(data, sample_rate))
    return Path(path)
