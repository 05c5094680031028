"""WAV output: IEEE float32 (and the comparison page's 16-bit PCM), no PEAK chunk and no timestamp, whole or streamed.

libsndfile adds a PEAK chunk with a write time to float WAVs, so two
renders of the same thing would differ; this writer emits only the RIFF
header, a ``fmt `` chunk (WAVE_FORMAT_IEEE_FLOAT = 3, with cbSize = 0 and
a ``fact`` chunk as the RIFF/WAVE specification asks for non-PCM data) and
the ``data`` chunk, so identical audio gives identical bytes.

:func:`write_float_wav` writes a whole signal; :class:`FloatWavWriter` writes
one block by block into a temporary file and renames it into place when it is
complete (the header's sizes patched at the end), so an interrupted render
leaves no file under the final name. Both produce the same bytes.
"""

from __future__ import annotations

import os
import struct
import tempfile
from contextlib import suppress
from pathlib import Path

import numpy as np

from ..errors import InputError
from .atomic import atomic_path, fsync_folder
from .runlist import note_output

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
    return b"RIFF" + struct.pack("<I", body_len) + b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + b"fact" + struct.pack("<I", len(fact)) + fact + b"data" + struct.pack("<I", data_bytes)


def pcm16_wav_bytes(codes: np.ndarray, *, sample_rate: int) -> bytes:
    """A mono 16-bit PCM WAV (format tag 1) of ``codes`` (int16) as bytes, with no chunk but ``fmt `` and ``data``.

    PCM needs no ``fact`` chunk (the same specification), so the bytes depend
    only on the codes and the rate.
    """
    data = np.asarray(codes, dtype="<i2").tobytes()
    fmt = struct.pack("<HHIIHH", 1, 1, int(sample_rate), 2 * int(sample_rate), 2, 16)
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + b"data" + struct.pack("<I", len(data)) + data
    return b"RIFF" + struct.pack("<I", len(body)) + body


def write_float_wav(path: str | Path, data: np.ndarray, sample_rate: int, *, overwrite: bool = False) -> Path:
    """Write ``data`` (shape (n,) or (channels, n)) as a float32 WAV, atomically."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        tmp.write_bytes(float_wav_bytes(data, sample_rate))
    return Path(path)


class FloatWavWriter:
    """A float32 WAV written block by block into a temporary file, renamed on :meth:`close`.

    Parameters
    ----------
    path : str or Path
        The final name.
    sample_rate : int, Hz
    channels : int, 1..8
    overwrite : bool
        Replace an existing file at :meth:`close`; without it an existing
        file is refused at once.
    """

    def __init__(self, path, *, sample_rate: int, channels: int = 1, overwrite: bool = False):
        self.path = Path(path)
        if self.path.exists() and not overwrite:
            raise InputError(f"{self.path}: exists; pass --overwrite to replace it or choose another name")
        note_output(self.path)  # listed in its run's folder before it exists (render.io.folders.run_folder)
        try:
            fd, tmp = tempfile.mkstemp(prefix=f".tmp-{self.path.name}.", dir=self.path.parent)
        except OSError as e:
            raise InputError(f"{self.path.parent}: cannot write here ({e.strerror}); choose another folder") from None
        self._f = os.fdopen(fd, "wb")
        self.tmp = Path(tmp)
        self.sample_rate, self.channels, self.frames = int(sample_rate), int(channels), 0
        self._guard(lambda: self._f.write(float_wav_header(0, channels=self.channels, sample_rate=self.sample_rate)))

    def _guard(self, step):
        """Run one file operation; an OSError removes the temporary file and becomes one line."""
        try:
            return step()
        except OSError as e:
            self.abort()
            raise InputError(f"{self.path}: could not be written ({e.strerror}); free some disk space or choose another folder") from None

    def write(self, x: np.ndarray) -> None:
        """Append samples: shape (n,) or (channels, n), full scale ±1."""
        a = np.asarray(x, np.float64)
        a = a[None, :] if a.ndim == 1 else a
        if not np.isfinite(a).all():
            raise ValueError("data holds NaN or infinite samples; a WAV must be finite")
        self._guard(lambda: self._f.write(np.ascontiguousarray(a.T).astype("<f4").tobytes()))
        self.frames += a.shape[1]

    def close(self) -> Path:
        """Patch the header's sizes, flush, and give the file its final name."""
        if self.frames * 4 * self.channels >= 2**32 - 64:
            self.abort()
            raise InputError(f"{self.path}: {self.frames} frames is too long for one WAV file (4 GiB at most); render a shorter span")

        def finish():
            self._f.seek(0)
            self._f.write(float_wav_header(self.frames, channels=self.channels, sample_rate=self.sample_rate))
            self._f.flush()
            os.fsync(self._f.fileno())
            self._f.close()
            os.chmod(self.tmp, 0o644)
            os.replace(self.tmp, self.path)
            fsync_folder(self.path.parent)

        self._guard(finish)
        return self.path

    def abort(self) -> None:
        """Drop the temporary file (nothing is left under the final name)."""
        with suppress(Exception):
            self._f.close()
        with suppress(FileNotFoundError):
            self.tmp.unlink()
