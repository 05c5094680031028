"""Recorded string-velocity signals, whole or block by block.

A recorded (or prepared) dry signal is any file libsndfile reads
(:mod:`render.io.audio` checks and reads it). Full scale (a sample of 1.0)
is 1 m/s times ``velocity_scale``. A mono file feeds both coils; a
two-channel file feeds coil_a (first channel) and coil_b (second).
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from pathlib import Path

import numpy as np

from ..errors import InputError
from ..io.audio import CLIP_RUN, AudioInfo, FlatRuns, audio_info, iter_audio, read_audio
from ..units import shown

BLOCK = 65536  # frames per block when a recording is streamed
# The longest recording read, as for a phrase; anything longer is refused
# before it is read (a render holds the whole signal in memory).
MAX_SECONDS = 600.0
# A plucked string moves at a few m/s; a peak far above this means a wrong
# --velocity-scale or a file at the wrong level (common practice, no source).
PLAUSIBLE_VELOCITY = 100.0


def implausible_velocity(name: str, peak: float, *, how: str = "", check: str) -> str | None:
    """One warning line when a peak string velocity (m/s) is beyond :data:`PLAUSIBLE_VELOCITY`, else None.

    ``how`` says how the peak was reached (shown after it); ``check`` names what to check.
    """
    if not peak > PLAUSIBLE_VELOCITY:
        return None
    return f"{name}: peak string velocity {peak:.3g} m/s{how} is far beyond a plucked string's few m/s; check {check}"


def load_recorded(path: str | Path, *, sample_rate: int, velocity_scale: float = 1.0, seconds: float | None = None) -> tuple[np.ndarray, list[str]]:
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
        Everything :func:`render.io.audio.audio_info` refuses, NaN or infinite samples,
        or a bad ``sample_rate`` / ``velocity_scale``.
    """
    import soxr

    name = str(path)
    from ..validate import sample_rate as checked_rate

    checked_rate(sample_rate, name="sample_rate")  # the render's rate: the one check of an output rate
    from ..arguments import number

    velocity_scale = number("velocity_scale", velocity_scale, lo=0.0, lo_open=True, hint=" (m/s at full scale)")  # numpy scalars too
    if seconds is not None and not (isinstance(seconds, (int, float)) and 0 < seconds <= MAX_SECONDS):
        raise InputError(f"seconds={shown(seconds)}: the length must be > 0 s and <= {MAX_SECONDS:g} s")
    info = audio_info(path, max_seconds=None if seconds is not None else MAX_SECONDS)
    channels, rate, frames = info.channels, info.sample_rate, info.frames
    wanted = frames if seconds is None else min(frames, int(math.ceil(seconds * rate)) + rate // 10 + 64)  # 0.1 s more for the resampler
    data = read_audio(path, frames=wanted)

    checks = RecordingChecks(name, info=info, velocity_scale=velocity_scale, seconds=seconds)
    checks.add(data)
    warnings = checks.warnings()

    if rate != sample_rate:
        data = soxr.resample(data, rate, int(sample_rate), quality="VHQ")
    return to_velocity(data, channels, velocity_scale), warnings


class RecordingChecks:
    """A recording's own warnings, from its samples as read (whole, or block by block before resampling):
    a peak string velocity far beyond a plucked string's (:data:`PLAUSIBLE_VELOCITY`), and flat tops at
    full scale (:class:`render.io.audio.FlatRuns`: the recording clipped).

    Parameters
    ----------
    name : str
        The file, as the warnings name it.
    info : AudioInfo
        The file's own (its rate times the flat tops; its encoding sets their level).
    velocity_scale : float, m/s per unit sample
    seconds : float or None, s
        Look only at this much of the file (what is played); None: all of it.
    """

    def __init__(self, name: str, *, info: AudioInfo, velocity_scale: float, seconds: float | None = None) -> None:
        self.name, self.rate, self.velocity_scale = name, info.sample_rate, float(velocity_scale)
        self._left = None if seconds is None else int(math.ceil(seconds * self.rate))
        self.peak = 0.0  # of the samples, before velocity_scale
        self.flats = FlatRuns(info.clip_level)
        self.recorded_scale = recorded_velocity_scale(name)

    def add(self, data: np.ndarray) -> None:
        """The next frames as read: shape (frames, channels)."""
        if self._left is not None:
            data = data[: self._left]
            self._left -= data.shape[0]
        if data.size:
            self.peak = max(self.peak, float(np.max(np.abs(data))))
            self.flats.add(data)

    def warnings(self) -> list[str]:
        """One line each, for what has been added."""
        out = []
        far = implausible_velocity(
            self.name,
            self.peak * self.velocity_scale,
            how=f" (sample × velocity_scale={self.velocity_scale:g})",
            check="the velocity scale (--velocity-scale, velocity_scale= in Python) and the file's level",
        )
        if far:
            out.append(far)
        said = self.recorded_scale
        if said is not None and not math.isclose(said[1], self.velocity_scale, rel_tol=1e-9):
            out.append(
                f"{self.name}: its record {said[0]} (render unvoice) says a sample of 1.0 is {said[1]:g} m/s, but it is read at velocity_scale={self.velocity_scale:g}"
                f" (every level {20 * math.log10(self.velocity_scale / said[1]):+.1f} dB off); pass --velocity-scale {said[1]:g} (velocity_scale= in Python)"
            )
        if self.flats.runs:
            out.append(
                f"{self.name}: {self.flats.runs} flat run(s) of {CLIP_RUN}+ equal samples at full scale (|x| >= {self.flats.level:.4g}), the first at {self.flats.first / self.rate:.3f} s; "
                "the recording probably clipped, so its peaks are flattened"
            )
        return out


def recorded_velocity_scale(path: str | Path) -> tuple[Path, float] | None:
    """(the record, its velocity_scale in m/s) when ``path`` has the JSON record ``render unvoice`` writes beside it
    (``FILE.json``, kind "unvoice", naming this file), else None: a velocity WAV's full scale is kept there, not in the WAV."""
    import json

    record = Path(path).with_suffix(".json")
    if Path(path).suffix.lower() == ".json" or not record.is_file():
        return None
    try:
        data = json.loads(record.read_text(encoding="utf-8"))
        if data.get("kind") != "unvoice" or Path(data["velocity"]["file"]).name != Path(path).name:
            return None
        scale = data["velocity"]["velocity_scale"]
    except (OSError, ValueError, TypeError, KeyError, AttributeError):
        return None  # not such a record: nothing to say
    if isinstance(scale, bool) or not isinstance(scale, (int, float)) or not (math.isfinite(scale) and scale > 0):
        return None
    return record, float(scale)


def to_velocity(data: np.ndarray, channels: int, velocity_scale: float) -> np.ndarray:
    """Samples (frames, channels) as string velocity (2, frames) in m/s; a mono file feeds both coils."""
    velocity = np.ascontiguousarray(np.asarray(data, dtype=np.float64).reshape(-1, channels).T) * float(velocity_scale)
    if channels == 1:
        velocity = np.vstack([velocity, velocity])
    return velocity


def recorded_seconds(path: str | Path) -> float:
    """Duration (s) of a recorded file (any length)."""
    return audio_info(path).seconds


def iter_recorded(path: str | Path, *, sample_rate: int, velocity_scale: float = 1.0, seconds: float | None = None, block: int = BLOCK, checks: RecordingChecks | None = None) -> Iterator[np.ndarray]:
    """Blocks of string velocity, m/s, shape (2, k), at ``sample_rate``, for a recording of any length.

    Mono feeds both coils; two channels feed coil_a and coil_b. Every block
    is checked for NaN or infinite samples (InputError naming the time).
    With ``seconds`` the stream is cut, or padded with silence, to that length.
    ``checks`` (made with the file's own :class:`AudioInfo`) is given every block as read, for the recording's own warnings.
    """
    channels = audio_info(path).channels
    total_out = None if seconds is None else int(round(seconds * sample_rate))
    produced = 0
    for data in iter_audio(path, block=block, sample_rate=sample_rate, raw=None if checks is None else checks.add):
        out = to_velocity(data, channels, velocity_scale)
        if total_out is not None:
            out = out[:, : max(0, total_out - produced)]
        if out.shape[1]:
            produced += out.shape[1]
            yield out
        if total_out is not None and produced >= total_out:
            return
    if total_out is not None:
        while produced < total_out:
            k = min(block, total_out - produced)
            produced += k
            yield np.zeros((2, k))
