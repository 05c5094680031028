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
from pathlib import Path

import numpy as np

from render.errors import InputError

# A sample at or above this magnitude counts as full scale, and this many
# equal ones in a row as a clipped (flat) top (common practice, no source).
CLIP_LEVEL = 0.999
CLIP_RUN = 4



def load_recorded(path: str | Path, *, sample_rate: int, velocity_scale: float = 1.0) -> tuple[np.ndarray, list[str]]:
    """Read a recorded string-velocity signal for both coils.

    Parameters
    ----------
    path : str or Path
        Any audio file libsndfile reads (WAV, FLAC, AIFF, OGG, ...), 1 or 2 channels.
    sample_rate : int, Hz
        The rate to return; the file is resampled (soxr, very high quality) if it differs.
    velocity_scale : float, m/s per unit sample, > 0
        Full scale of the file.

    Returns
    -------
    velocity : np.ndarray, float64, shape (2, n), m/s; row 0 for coil_a, row 1 for coil_b.
    warnings : list of str, one line each (for example, a file that clips at full scale).

    Raises
    ------
    InputError
        Unreadable, empty, more than two channels, NaN or infinite samples,
        or a bad ``sample_rate`` / ``velocity_scale``.
    """
    import soundfile as sf
    import soxr

    name = str(path)
    if isinstance(sample_rate, bool) or not isinstance(sample_rate, (int, np.integer)) or not 1000 <= sample_rate <= 768000:
        raise InputError(f"sample_rate={sample_rate!r}: must be a whole number of Hz from 1000 to 768000; 48000 is usual")
    if isinstance(velocity_scale, bool) or not isinstance(velocity_scale, (int, float)) or not (math.isfinite(velocity_scale) and velocity_scale > 0):
        raise InputError(f"velocity_scale={velocity_scale!r}: must be a number > 0 (m/s at full scale)")
    p = Path(path)
    if not p.exists():
        raise InputError(f"{name}: no such file; give the path of an audio file (WAV, FLAC, ...)")
    if p.is_dir():
        raise InputError(f"{name}: is a folder; give the path of an audio file (WAV, FLAC, ...)")
    try:
        with sf.SoundFile(str(p)) as f:
            channels, rate, frames = f.channels, f.samplerate, f.frames
            if channels > 2:
                raise InputError(
                    f"{name}: channels={channels}: at most 2 (mono feeds both coils, two channels feed coil_a and coil_b); "
                    "mix down or split the file"
                )
            data = f.read(dtype="float64", always_2d=True)
    except InputError:
        raise
    except (sf.LibsndfileError, RuntimeError, TypeError, ValueError) as e:
        reason = str(e).strip().splitlines()[-1] if str(e).strip() else type(e).__name__
        raise InputError(f"{name}: cannot be read as audio ({reason}); convert it to WAV or FLAC") from None
    if frames == 0 or data.shape[0] == 0:
        raise InputError(f"{name}: frames=0: the file holds no audio; record or export it again")
    bad = ~np.isfinite(data)
    if bad.any():
        i, c = np.argwhere(bad)[0]
        raise InputError(
            f"{name}: sample {int(i)} (channel {int(c) + 1}, {i / rate:.4f} s) = {float(data[i, c])}: "
            "every sample must be finite; repair the file or export it again"
        )

    warnings = []
    runs, first = _clip_runs(data)
    if runs:
        warnings.append(
            f"{name}: {runs} flat run(s) of {CLIP_RUN}+ equal samples at full scale (|x| >= {CLIP_LEVEL}), the first at {first / rate:.3f} s; "
            "the recording probably clipped, so its peaks are flattened"
        )

    if rate != sample_rate:
        data = soxr.resample(data, rate, int(sample_rate), quality="VHQ")
        data = np.asarray(data, dtype=np.float64).reshape(-1, channels)
    velocity = np.ascontiguousarray(data.T) * float(velocity_scale)
    if channels == 1:
        velocity = np.vstack([velocity, velocity])
    return velocity, warnings


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
