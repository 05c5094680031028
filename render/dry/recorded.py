"""Recorded string-velocity signals in, float WAV files out.

A recorded (or prepared) dry signal is any file libsndfile reads. Full
scale (a sample of 1.0) is 1 m/s times ``velocity_scale``. A mono file
feeds both coils; a two-channel file feeds coil_a (first channel) and
coil_b (second).

Output WAVs are IEEE float (format tag 3), written here byte by byte so that
identical inputs give identical files (no time stamps), and atomically: a
temporary file beside the target, flushed to disk, then renamed over it.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np

from render.errors import InputError

# A sample at or above this magnitude counts as full scale, and this many
# equal ones in a row as a clipped (flat) top (common practice, no source).
CLIP_LEVEL = 0.999
CLIP_RUN = 4
# The longest recording read, as for a phrase; anything longer is refused
# before it is read (a render holds the whole signal in memory).
MAX_SECONDS = 600.0
# Sample rates a file's header may declare; outside them the header is damaged.
MIN_FILE_RATE, MAX_FILE_RATE = 1000, 768000
# A plucked string moves at a few m/s; a peak far above this means a wrong
# --velocity-scale or a file at the wrong level (common practice, no source).
PLAUSIBLE_VELOCITY = 100.0
# Declared sizes that mean "unknown" in a WAV written while recording.
_UNKNOWN_SIZES = (0, 0xFFFFFFFF)


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



def _reason(e: Exception) -> str:
    """libsndfile's own reason, without the file name it repeats."""
    text = str(e).strip().splitlines()[-1] if str(e).strip() else type(e).__name__
    return re.sub(r"^Error opening .*?: ", "", text)


def check_recorded(path: str | Path, *, max_seconds: float | None = MAX_SECONDS) -> tuple[int, int, int]:
    """(channels, sample_rate, frames) of a recorded file that can be used; InputError (one line) if not.

    Refuses: no such file, a folder, a device or pipe, a WAV cut short (its
    header declares more audio than the file holds), anything libsndfile
    cannot open (with a hint when it is a text file), more than two
    channels, a header sample rate outside 1 kHz to 768 kHz (a damaged
    header), no frames, and with ``max_seconds`` a file longer than that.
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
        raise InputError(
            f"{name}: cut short: its header declares {short[0]} bytes of audio but the file holds {short[1]}; "
            "the copy or export stopped early, so copy or export it again"
        )
    try:
        info = sf.info(name)
    except (sf.LibsndfileError, RuntimeError, TypeError, ValueError, OSError) as e:
        hint = "; it holds text, and a phrase file must end in .toml" if text else ""
        raise InputError(f"{name}: cannot be read as audio ({_reason(e)}); convert it to WAV or FLAC{hint}") from None
    channels, rate, frames = int(info.channels), int(info.samplerate), int(info.frames)
    if channels > 2:
        raise InputError(
            f"{name}: channels={channels}: at most 2 (mono feeds both coils, two channels feed coil_a and coil_b); "
            "mix down or split the file"
        )
    if not MIN_FILE_RATE <= rate <= MAX_FILE_RATE:
        raise InputError(
            f"{name}: samplerate={rate} in its header: expected {MIN_FILE_RATE} to {MAX_FILE_RATE} Hz; "
            "the header is probably damaged, export the file again"
        )
    if frames <= 0:
        raise InputError(f"{name}: frames=0: the file holds no audio; record or export it again")
    if max_seconds is not None and frames > max_seconds * rate:
        raise InputError(
            f"{name}: {frames / rate:.1f} s long: at most {max_seconds:g} s of a recording is read at once; "
            "cut out the part you want to hear"
        )
    return channels, rate, frames


def load_recorded(
    path: str | Path, *, sample_rate: int, velocity_scale: float = 1.0, seconds: float | None = None
) -> tuple[np.ndarray, list[str]]:
    """Read a recorded string-velocity signal for both coils.

    Parameters
    ----------
    path : str or Path
        Any audio file libsndfile reads (WAV, FLAC, AIFF, OGG, ...), 1 or 2 channels.
    sample_rate : int, Hz
        The rate to return; the file is resampled (soxr, very high quality) if it differs.
    velocity_scale : float, m/s per unit sample, > 0
        Full scale of the file.
    seconds : float or None, s
        Read only about this much of the file (a little more, for the
        resampler); the caller cuts the result to length. None reads it all,
        up to :data:`MAX_SECONDS`.

    Returns
    -------
    velocity : np.ndarray, float64, shape (2, n), m/s; row 0 for coil_a, row 1 for coil_b.
    warnings : list of str, one line each (for example, a file that clips at full scale).

    Raises
    ------
    InputError
        Everything :func:`check_recorded` refuses, NaN or infinite samples,
        or a bad ``sample_rate`` / ``velocity_scale``.
    """
    import soundfile as sf
    import soxr

    name = str(path)
    if isinstance(sample_rate, bool) or not isinstance(sample_rate, (int, np.integer)) or not 1000 <= sample_rate <= 768000:
        raise InputError(f"sample_rate={sample_rate!r}: must be a whole number of Hz from 1000 to 768000; 48000 is usual")
    if isinstance(velocity_scale, bool) or not isinstance(velocity_scale, (int, float)) or not (math.isfinite(velocity_scale) and velocity_scale > 0):
        raise InputError(f"velocity_scale={velocity_scale!r}: must be a number > 0 (m/s at full scale)")
    if seconds is not None and not (isinstance(seconds, (int, float)) and 0 < seconds <= MAX_SECONDS):
        raise InputError(f"seconds={seconds!r}: the length must be > 0 s and <= {MAX_SECONDS:g} s")
    channels, rate, frames = check_recorded(path, max_seconds=None if seconds is not None else MAX_SECONDS)
    wanted = frames if seconds is None else min(frames, int(math.ceil(seconds * rate)) + rate // 10 + 64)  # 0.1 s more for the resampler
    try:
        with sf.SoundFile(name) as f:
            data = f.read(wanted, dtype="float64", always_2d=True)
    except (sf.LibsndfileError, RuntimeError, TypeError, ValueError, OSError) as e:
        raise InputError(f"{name}: cannot be read as audio ({_reason(e)}); convert it to WAV or FLAC") from None
    if data.shape[0] == 0:
        raise InputError(f"{name}: frames=0: the file holds no audio; record or export it again")
    check_finite(name, data, rate)

    warnings = []
    peak = float(np.max(np.abs(data))) * float(velocity_scale)
    if peak > PLAUSIBLE_VELOCITY:
        warnings.append(
            f"{name}: peak string velocity {peak:.3g} m/s (sample × velocity_scale={velocity_scale:g}) is far beyond "
            f"a plucked string's few m/s; check --velocity-scale and the file's level"
        )
    runs, first = _clip_runs(data)
    if runs:
        warnings.append(
            f"{name}: {runs} flat run(s) of {CLIP_RUN}+ equal samples at full scale (|x| >= {CLIP_LEVEL}), the first at {first / rate:.3f} s; "
            "the recording probably clipped, so its peaks are flattened"
        )

    if rate != sample_rate:
        data = soxr.resample(data, rate, int(sample_rate), quality="VHQ")
    return to_velocity(data, channels, velocity_scale), warnings


def check_finite(name: str, data: np.ndarray, rate: int, *, start: int = 0) -> None:
    """InputError naming the first NaN or infinite sample of ``data`` (frames, channels), frame ``start`` onwards."""
    bad = ~np.isfinite(data)
    if bad.any():
        i, c = np.argwhere(bad)[0]
        k = start + int(i)
        raise InputError(
            f"{name}: sample {k} (channel {int(c) + 1}, {k / rate:.4f} s) = {float(data[i, c])}: "
            "every sample must be finite; repair the file or export it again"
        )


def to_velocity(data: np.ndarray, channels: int, velocity_scale: float) -> np.ndarray:
    """Samples (frames, channels) as string velocity (2, frames) in m/s; a mono file feeds both coils."""
    velocity = np.ascontiguousarray(np.asarray(data, dtype=np.float64).reshape(-1, channels).T) * float(velocity_scale)
    if channels == 1:
        velocity = np.vstack([velocity, velocity])
    return velocity


def _clip_runs(data: np.ndarray) -> tuple[int, int]:
    """Flat tops at full scale: runs of CLIP_RUN or more equal samples with |x| >= CLIP_LEVEL.

    Returns the number of such runs (over all channels) and the first one's
    start frame (-1 if none). A float file whose peaks pass 1.0 without
    flattening is not clipped and is not counted.
    """
    runs, first = 0, -1
    for x in data.T:
        flat = (np.abs(x[1:]) >= CLIP_LEVEL) & (x[1:] == x[:-1])  # sample i+1 repeats sample i
        if np.count_nonzero(flat) < CLIP_RUN - 1:
            continue
        edges = np.diff(np.concatenate([[0], flat.astype(np.int8), [0]]))
        starts = np.flatnonzero(edges == 1)
        stops = np.flatnonzero(edges == -1)
        long = (stops - starts) >= CLIP_RUN - 1
        if long.any():
            runs += int(long.sum())
            s0 = int(starts[long][0])
            first = s0 if first < 0 else min(first, s0)
    return runs, first
