"""Long recordings in bounded memory: read, render, measure and write block by block.

Everything here keeps only a block (and each filter's state) in memory:

- :func:`iter_recorded` reads an audio file in blocks, checks every block,
  and resamples with a streaming soxr resampler;
- :class:`WavStream` writes a float32 WAV incrementally to a temporary
  file and renames it into place when complete (header sizes patched at the
  end), so an interrupted render leaves no file under the final name;
- :class:`LoudnessStream` measures ITU-R BS.1770-4 integrated loudness from
  the 100 ms sub-block energies of the K-weighted signal (the weighting
  filters are pyloudnorm's, with state carried across blocks; the 400 ms
  blocks with 75 % overlap and the −70 LKFS / −10 LU gates as in BS.1770-4);
- :class:`SpectrumStream` averages Hann-windowed periodograms (Welch, 50 %
  overlap) across blocks.
"""

from __future__ import annotations

import os
import tempfile
from contextlib import suppress
from pathlib import Path

import numpy as np

from .errors import InputError

BLOCK = 65536  # frames per block


def recorded_info(path):
    """(channels, sample_rate, frames) of an audio file, refusing what cannot be used (any length)."""
    from .dry.recorded import check_recorded

    return check_recorded(path, max_seconds=None)


def iter_recorded(path, *, sample_rate: int, velocity_scale: float = 1.0, seconds: float | None = None, block: int = BLOCK):
    """Blocks of string velocity, m/s, shape (2, k), at ``sample_rate``.

    Mono feeds both coils; two channels feed coil_a and coil_b. Every block
    is checked for NaN or infinite samples (InputError naming the time).
    With ``seconds`` the stream is cut, or padded with silence, to that length.
    """
    import soundfile as sf
    import soxr

    from .dry.recorded import check_finite, to_velocity

    channels, rate, _ = recorded_info(path)
    total_out = None if seconds is None else int(round(seconds * sample_rate))
    resampler = soxr.ResampleStream(rate, sample_rate, channels, dtype="float64", quality="VHQ") if rate != sample_rate else None
    produced = 0
    read = 0
    with sf.SoundFile(str(path)) as f:
        while True:
            data = f.read(block, dtype="float64", always_2d=True)
            last = data.shape[0] < block
            check_finite(str(path), data, rate, start=read)
            read += data.shape[0]
            if resampler is not None:
                data = resampler.resample_chunk(data, last=last)
            out = to_velocity(data, channels, velocity_scale)
            if total_out is not None:
                out = out[:, : max(0, total_out - produced)]
            if out.shape[1]:
                produced += out.shape[1]
                yield out
            if last or (total_out is not None and produced >= total_out):
                break
    if total_out is not None and produced < total_out:
        left = total_out - produced
        while left > 0:
            k = min(block, left)
            yield np.zeros((2, k))
            left -= k


class WavStream:
    """A float32 WAV written block by block into a temporary file, renamed on :meth:`close`."""

    def __init__(self, path, *, sample_rate: int, channels: int = 1, overwrite: bool = False):
        self.path = Path(path)
        if self.path.exists() and not overwrite:
            raise InputError(f"{self.path}: exists; pass --overwrite to replace it or choose another name")
        try:
            fd, tmp = tempfile.mkstemp(prefix=f".tmp-{self.path.name}.", dir=self.path.parent)
        except OSError as e:
            raise InputError(f"{self.path.parent}: cannot write here ({e.strerror}); choose another folder") from None
        self._f = os.fdopen(fd, "wb")
        self.tmp = Path(tmp)
        self.sample_rate, self.channels, self.frames = int(sample_rate), int(channels), 0
        self._guard(lambda: self._f.write(self._header(0)))

    def _guard(self, step):
        """Run one file operation; an OSError removes the temporary file and becomes one line."""
        try:
            return step()
        except OSError as e:
            self.abort()
            raise InputError(f"{self.path}: could not be written ({e.strerror}); free some disk space or choose another folder") from None

    def _header(self, frames: int) -> bytes:
        from .report.wav import float_wav_header

        return float_wav_header(frames, channels=self.channels, sample_rate=self.sample_rate)

    def write(self, x: np.ndarray) -> None:
        """Append samples (shape (n,) or (channels, n); full scale ±1)."""
        a = np.asarray(x, np.float64)
        a = a[None, :] if a.ndim == 1 else a
        if not np.isfinite(a).all():
            raise ValueError("data holds NaN or infinite samples; a WAV must be finite")
        self._guard(lambda: self._f.write(np.ascontiguousarray(a.T).astype("<f4").tobytes()))
        self.frames += a.shape[1]

    def close(self) -> Path:
        if self.frames * 4 * self.channels >= 2**32 - 64:
            self.abort()
            raise InputError(f"{self.path}: {self.frames} frames is too long for one WAV file (4 GiB at most); render a shorter --seconds")

        def finish():
            self._f.seek(0)
            self._f.write(self._header(self.frames))
            self._f.flush()
            os.fsync(self._f.fileno())
            self._f.close()
            os.chmod(self.tmp, 0o644)
            os.replace(self.tmp, self.path)

        self._guard(finish)
        return self.path

    def abort(self) -> None:
        with suppress(Exception):
            self._f.close()
        with suppress(FileNotFoundError):
            self.tmp.unlink()


class LoudnessStream:
    """ITU-R BS.1770-4 integrated loudness of a mono signal fed block by block."""

    def __init__(self, *, sample_rate: int):
        import pyloudnorm

        from .analysis.audio import LOUDNESS_FILTER

        self.fs = int(sample_rate)
        meter = pyloudnorm.Meter(self.fs, filter_class=LOUDNESS_FILTER)
        self._stages = [(f.b, f.a, f.passband_gain) for f in meter._filters.values()]
        self._zi = [np.zeros(max(len(b), len(a)) - 1) for b, a, _ in self._stages]
        self.hop = int(round(0.1 * self.fs))  # 100 ms: a quarter of the 400 ms gating block
        self._carry = np.zeros(0)
        self._sub: list[float] = []  # sum of squares of each complete 100 ms sub-block

    def write(self, x: np.ndarray) -> None:
        from scipy.signal import lfilter

        y = np.asarray(x, float)
        for i, (b, a, g) in enumerate(self._stages):
            y, self._zi[i] = lfilter(b, a, y, zi=self._zi[i])
            y = g * y
        y = np.concatenate([self._carry, y])
        k = y.size // self.hop
        if k:
            self._sub.extend(np.sum(y[: k * self.hop].reshape(k, self.hop) ** 2, axis=1).tolist())
        self._carry = y[k * self.hop :]

    def value(self) -> float | None:
        """Integrated loudness (LUFS), or None for under 400 ms or all below the absolute gate."""
        s = np.asarray(self._sub)
        if s.size < 4:
            return None
        z = (s[:-3] + s[1:-2] + s[2:-1] + s[3:]) / (4 * self.hop)  # 400 ms blocks, 75 % overlap
        with np.errstate(divide="ignore"):
            lj = -0.691 + 10 * np.log10(z)
        gated = z[lj >= -70.0]  # absolute gate, -70 LKFS
        if gated.size == 0:
            return None
        rel = -0.691 + 10 * np.log10(gated.mean()) - 10.0  # relative gate, -10 LU
        final = z[(lj >= -70.0) & (lj > rel)]
        return float(-0.691 + 10 * np.log10(final.mean()))


class SpectrumStream:
    """Long-term average spectrum: averaged Hann periodograms, 50 % overlap (Welch)."""

    def __init__(self, *, sample_rate: int, segment: int = 8192):
        self.fs, self.n = int(sample_rate), int(segment)
        self.w = np.hanning(self.n + 1)[:-1]  # periodic Hann, as scipy's get_window("hann")
        self._buf = np.zeros(0)
        self._acc = np.zeros(self.n // 2 + 1)
        self._count = 0

    def write(self, x: np.ndarray) -> None:
        self._buf = np.concatenate([self._buf, np.asarray(x, float)])
        hop = self.n // 2
        while self._buf.size >= self.n:
            seg = self._buf[: self.n]
            self._acc += np.abs(np.fft.rfft(seg * self.w)) ** 2
            self._count += 1
            self._buf = self._buf[hop:]

    def value(self):
        """(frequency_hz (F,), level_db (F,)) in dB re 1 unit²/Hz (one-sided density)."""
        f = np.fft.rfftfreq(self.n, 1 / self.fs)
        if self._count == 0:
            return f, np.full(f.size, -300.0)
        p = self._acc / self._count / (self.fs * np.sum(self.w**2))
        p[1:-1] *= 2
        return f, 10 * np.log10(np.maximum(p, 1e-30))


def window_full_scale(designs) -> float:
    """A full scale fixed before rendering, from the designs' output windows, rounded up 1-2-5.

    The op-amp output never leaves its window and the output network and
    controls are passive, so this scale holds every render without knowing
    its peak in advance.
    """
    from .clips import choose_full_scale

    # an AC-coupled output can swing up to twice the window's half-width (a long excursion
    # to one rail, then a jump to the other), and the output-rate samples ring a little past it
    return choose_full_scale([2.2 * max(d.headroom_up_v, d.headroom_down_v) for d in designs])


def clip_seconds(path, *, sample_rate: int) -> float:
    """Duration (s) of a recorded file."""
    _, rate, frames = recorded_info(path)
    return frames / rate
