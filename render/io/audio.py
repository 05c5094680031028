"""Audio files in: checks, whole reads, streamed reads with resampling, flat-top detection.

Any file libsndfile reads (WAV, FLAC, AIFF, OGG, ...). Every refusal is one
line naming the file and the fix: no such file, a folder or a pipe, an empty
file, a WAV cut short, a file that is not audio (with a hint when it holds
text), more than two channels, a damaged header, NaN or infinite samples.
"""

from __future__ import annotations

import contextlib
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import InputError

# Sample rates a file's header may declare; outside them the header is damaged.
MIN_FILE_RATE, MAX_FILE_RATE = 1000, 768000
# A sample at or above this magnitude counts as full scale, and this many
# equal ones in a row as a clipped (flat) top (common practice, no source).
CLIP_LEVEL = 0.999
CLIP_RUN = 4
# The largest sample some encodings hold, as libsndfile reads them (a code over 2**15), below CLIP_LEVEL:
# 8-bit PCM tops out at +127/128; G.711's largest decoded magnitudes are 8031/8192 (mu-law) and 4032/4096
# (A-law) (from memory; tests check all four against libsndfile). At those tops a file is at full scale.
_TOPS = {"PCM_S8": 127 / 128, "PCM_U8": 127 / 128, "ULAW": 32124 / 32768, "ALAW": 32256 / 32768}
# Declared sizes that mean "unknown" in a WAV written while recording.
_UNKNOWN_SIZES = (0, 0xFFFFFFFF)
_READ_ERRORS: tuple[type[BaseException], ...] = (RuntimeError, TypeError, ValueError, OSError)


@dataclass(frozen=True)
class AudioInfo:
    """What a usable audio file holds.

    channels : int, 1 or 2
    sample_rate : int, Hz
    frames : int, > 0
    top : float
        The largest sample its encoding holds, as read: 1.0, or less for 8-bit PCM and G.711 (mu-law, A-law).
    """

    channels: int
    sample_rate: int
    frames: int
    top: float = 1.0

    @property
    def clip_level(self) -> float:
        """The magnitude from which a sample of this file is at full scale (:class:`FlatRuns`)."""
        return min(CLIP_LEVEL, self.top)

    @property
    def seconds(self) -> float:
        return self.frames / self.sample_rate


def _wav_shortfall(p: Path) -> tuple[int, int] | None:
    """(declared, present) bytes of a RIFF WAVE file's data chunk when the file is cut short; else None."""
    size = p.stat().st_size
    with open(p, "rb") as fh:
        head = fh.read(12)
        if len(head) < 12 or head[:4] != b"RIFF" or head[8:12] != b"WAVE":
            return None
        pos = 12
        while pos + 8 <= size:
            fh.seek(pos)
            chunk = fh.read(8)
            if len(chunk) < 8:
                return None
            ident, length = chunk[:4], int.from_bytes(chunk[4:], "little")
            if ident == b"data":
                present = size - pos - 8
                if length not in _UNKNOWN_SIZES and length > present:
                    return length, present
                return None
            pos += 8 + length + (length & 1)
    return None


def _looks_like_text(p: Path) -> bool:
    with open(p, "rb") as fh:
        head = fh.read(512)
    if not head or b"\x00" in head:
        return False
    try:
        head.decode("utf-8")
    except UnicodeDecodeError as e:
        return e.start >= len(head) - 3  # a character cut by the 512-byte window
    return True


def _reason(e: BaseException) -> str:
    """libsndfile's own reason, without the file name it repeats."""
    text = str(e).strip().splitlines()[-1] if str(e).strip() else type(e).__name__
    return re.sub(r"^Error opening .*?: ", "", text)


@contextlib.contextmanager
def decoding(name: str) -> Iterator[None]:
    """Around the reads of a file whose header :func:`audio_info` passed: libsndfile failing further in
    (a damaged FLAC that loses sync, a seek that fails) becomes one InputError line naming the file and the fix."""
    import soundfile as sf

    try:
        yield
    except sf.LibsndfileError as e:
        raise InputError(f"{name}: damaged: its header reads but its audio does not decode ({_reason(e)}); copy or export the file again from the original") from None


def too_short(name: str, info: AudioInfo, min_seconds: float, needed_for: str) -> InputError | None:
    """The refusal of a file shorter than ``min_seconds`` ("too short: …; at least … s is needed to …"), or None."""
    if info.frames >= min_seconds * info.sample_rate:
        return None
    n = f"{info.frames} sample{'s' if info.frames != 1 else ''}"
    return InputError(f"{name}: too short: {info.seconds * 1e3:.4g} ms ({n} at {info.sample_rate} Hz); at least {min_seconds:g} s is needed {needed_for}; give a longer recording")


def _reads_like_phrase(p: Path) -> bool:
    """Whether a text file holds a phrase's tables (render.dry.phrase): a phrase saved under an audio name."""
    try:
        with open(p, "rb") as fh:
            head = fh.read(65536)
    except OSError:
        return False
    return any(t in head for t in (b"[[note]]", b"[[chord]]", b"[instrument]"))


def audio_info(path: str | Path, *, max_seconds: float | None = None, max_channels: int = 2) -> AudioInfo:
    """What a usable audio file holds; InputError (one line) if it cannot be used.

    Parameters
    ----------
    path : str or Path
    max_seconds : float or None, s
        Refuse a longer file (None: any length).
    max_channels : int
        Refuse more channels than this.
    """
    import soundfile as sf

    name = str(path)
    p = Path(path)
    if not p.exists():
        raise InputError(f"{name}: no such file; give the path of an audio file (WAV, FLAC, ...)")
    if p.is_dir():
        raise InputError(f"{name}: is a folder; give the path of an audio file (WAV, FLAC, ...)")
    if not p.is_file():
        raise InputError(f"{name}: is not a regular file (a device or a pipe?); give an audio file saved on disk")
    try:
        if p.stat().st_size == 0:
            raise InputError(f"{name}: is empty (0 bytes); record or export it again")
        short = _wav_shortfall(p)
        text = _looks_like_text(p)
    except OSError as e:
        raise InputError(f"{name}: cannot be read ({e.strerror}); check the path and its permissions") from None
    if short:
        raise InputError(f"{name}: cut short: its header declares {short[0]} bytes of audio but the file holds {short[1]}; the copy or export stopped early, so copy or export it again")
    try:
        info = sf.info(name)
    except (sf.LibsndfileError, *_READ_ERRORS) as e:
        if text and p.suffix.lower() == ".toml":
            hint = "; it is a TOML file (a design or phrase), not a recording: check the order of the arguments"
        else:
            hint = ("; it holds text, not audio, and reads like a phrase: a phrase file's name ends in .toml" if _reads_like_phrase(p) else "; it holds text, not audio") if text else ""
        raise InputError(f"{name}: cannot be read as audio ({_reason(e)}); convert it to WAV or FLAC{hint}") from None
    channels, rate, frames = int(info.channels), int(info.samplerate), int(info.frames)
    if channels > max_channels:
        what = "mono feeds both coils, two channels feed coil_a and coil_b" if max_channels == 2 else "mono"
        raise InputError(f"{name}: channels={channels}: at most {max_channels} ({what}); mix down or split the file")
    if not MIN_FILE_RATE <= rate <= MAX_FILE_RATE:
        raise InputError(f"{name}: samplerate={rate} in its header: expected {MIN_FILE_RATE} to {MAX_FILE_RATE} Hz; the header is probably damaged, export the file again")
    if frames <= 0:
        raise InputError(f"{name}: frames=0: the file holds no audio; record or export it again")
    if max_seconds is not None and frames > max_seconds * rate:
        raise InputError(f"{name}: {frames / rate:.1f} s long: at most {max_seconds:g} s of a recording is read at once; cut out the part you want to hear")
    return AudioInfo(channels=channels, sample_rate=rate, frames=frames, top=_TOPS.get(str(info.subtype), 1.0))


def check_finite(name: str, data: np.ndarray, rate: int, *, start: int = 0) -> None:
    """InputError naming the first NaN or infinite sample of ``data`` (frames, channels), frame ``start`` onwards."""
    bad = ~np.isfinite(data)
    if bad.any():
        i, c = np.argwhere(bad.reshape(data.shape[0], -1))[0]
        k = start + int(i)
        value = float(data.reshape(data.shape[0], -1)[i, c])
        raise InputError(f"{name}: sample {k} (channel {int(c) + 1}, {k / rate:.4f} s) = {value}: every sample must be finite; repair the file or export it again")


def read_audio(path: str | Path, *, frames: int | None = None) -> np.ndarray:
    """Up to ``frames`` frames (all when None) of a checked file: float64, shape (frames, channels), every sample finite."""
    import soundfile as sf

    name = str(path)
    try:
        with sf.SoundFile(name) as f:
            rate = f.samplerate
            with decoding(name):
                data = f.read(-1 if frames is None else frames, dtype="float64", always_2d=True)
    except InputError:
        raise
    except (sf.LibsndfileError, *_READ_ERRORS) as e:
        raise InputError(f"{name}: cannot be read as audio ({_reason(e)}); convert it to WAV or FLAC") from None
    if data.shape[0] == 0:
        raise InputError(f"{name}: frames=0: the file holds no audio; record or export it again")
    check_finite(name, data, rate)
    return data


def iter_audio(path: str | Path, *, block: int, sample_rate: int | None = None, raw: Callable[[np.ndarray], None] | None = None) -> Iterator[np.ndarray]:
    """Blocks of a checked file, float64, shape (k, channels), each checked for NaN and infinity.

    With ``sample_rate`` the blocks are resampled on the way (soxr's streaming
    resampler, very high quality), so the whole file is never in memory.
    ``raw`` is called with each block as read, before it is resampled.
    """
    import soundfile as sf

    info = audio_info(path)
    resampler = None
    if sample_rate is not None and info.sample_rate != sample_rate:
        import soxr

        resampler = soxr.ResampleStream(info.sample_rate, sample_rate, info.channels, dtype="float64", quality="VHQ")
    read = 0
    with decoding(str(path)):
        f = sf.SoundFile(str(path))
    with f:
        while True:
            with decoding(str(path)):
                data = f.read(block, dtype="float64", always_2d=True)
            last = data.shape[0] < block
            check_finite(str(path), data, info.sample_rate, start=read)
            read += data.shape[0]
            if raw is not None:
                raw(data)
            if resampler is not None:
                data = resampler.resample_chunk(data, last=last)
            yield data
            if last:
                break


class FlatRuns:
    """Flat tops at full scale (a clipped recording), counted across blocks.

    A flat top is :data:`CLIP_RUN` or more equal samples in a row with
    ``|x| >= level`` in one channel (:attr:`AudioInfo.clip_level`: :data:`CLIP_LEVEL`, or the top of an
    encoding that holds less). A float file whose peaks pass 1.0 without flattening is not clipped and is
    not counted.

    Attributes
    ----------
    runs : int
        Flat tops seen so far, over all channels.
    first : int
        The first one's start frame (-1 if none).
    """

    def __init__(self, level: float = CLIP_LEVEL) -> None:
        self.level = float(level)
        self.runs, self.first, self._at = 0, -1, 0
        self._prev: np.ndarray | None = None  # last frame of the previous block, per channel
        self._carry: np.ndarray | None = None  # equal full-scale pairs running at its end, per channel

    def add(self, data: np.ndarray) -> None:
        """Look at the next block: shape (frames,) or (frames, channels)."""
        x = np.asarray(data, float)
        x = x[:, None] if x.ndim == 1 else x
        if x.shape[0] == 0:
            return
        if self._prev is None:
            self._prev = np.full(x.shape[1], np.nan)  # NaN equals nothing: no pair across the start
            self._carry = np.zeros(x.shape[1], int)
        assert self._carry is not None
        ext = np.vstack([self._prev[None, :], x])
        need = CLIP_RUN - 1  # equal pairs in a run of CLIP_RUN samples
        for c in range(x.shape[1]):
            flat = (np.abs(ext[1:, c]) >= self.level) & (ext[1:, c] == ext[:-1, c])  # frame i repeats frame i - 1
            edges = np.diff(np.concatenate([[0], flat.astype(np.int8), [0]]))
            starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
            for a, b in zip(starts, stops):
                before = int(self._carry[c]) if a == 0 else 0
                total = before + (b - a)
                if total >= need and before < need:
                    self.runs += 1
                    start = self._at + int(a) - 1 - before  # the run's first sample
                    self.first = start if self.first < 0 else min(self.first, start)
            tail = stops[-1] == flat.size if stops.size else False
            self._carry[c] = (int(self._carry[c]) if starts.size and starts[-1] == 0 else 0) + int(stops[-1] - starts[-1]) if tail else 0
        self._prev = x[-1].copy()
        self._at += x.shape[0]
