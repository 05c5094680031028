"""Dry signals: the string velocity each coil senses.

Two sources, one result (an array of shape (2, n) in m/s, row 0 for coil_a
and row 1 for coil_b):

- a phrase file (TOML; :mod:`render.dry.phrase`), synthesised by
  :func:`render.dry.modal.string_velocity` at each coil's own sensing point
  and aperture;
- a recorded file (any format libsndfile reads; :mod:`render.dry.recorded`),
  mono feeding both coils.

:func:`dry_velocity` picks the right one from the file name.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from render.dry.modal import string_velocity
from render.dry.phrase import Note, Phrase, describe, load_phrase, parse_phrase
from render.dry.recorded import load_recorded

__all__ = [
    "DrySignal",
    "Note",
    "Phrase",
    "describe",
    "dry_velocity",
    "load_phrase",
    "load_recorded",
    "parse_phrase",
    "string_velocity",
]

PHRASE_SUFFIXES = (".toml",)


@dataclass(frozen=True)
class DrySignal:
    """A dry signal ready for a design.

    velocity : np.ndarray, float64, shape (2, n), m/s (coil_a, coil_b)
    sample_rate : int, Hz
    warnings : tuple of str, one line each
    description : dict, JSON-ready record of what was played
    """

    velocity: np.ndarray
    sample_rate: int
    warnings: tuple[str, ...] = ()
    description: dict = field(default_factory=dict)


def dry_velocity(
    path: str | Path,
    *,
    sample_rate: int,
    positions,
    apertures,
    seed: int = 0,
    seconds: float | None = None,
    velocity_scale: float = 1.0,
) -> DrySignal:
    """String velocity at two sensing points from a phrase or a recorded file.

    Parameters
    ----------
    path : a ``.toml`` phrase file, or any audio file libsndfile reads
    sample_rate : int, Hz
    positions : (x_a, x_b), m from the bridge saddle (used for phrases)
    apertures : (w_a, w_b) or one value, m (used for phrases)
    seed : int, for the phrase's small per-note variations
    seconds : float or None, s; cut or pad with silence to this length (default: the file's own)
    velocity_scale : float, m/s at full scale (used for recorded files)

    Returns
    -------
    DrySignal with velocity of shape (2, n) in m/s.

    Raises
    ------
    InputError
        For any bad file or value, as one line.
    """
    p = Path(path)
    if p.suffix.lower() in PHRASE_SUFFIXES:
        phrase = load_phrase(p)
        velocity = string_velocity(phrase, sample_rate=sample_rate, positions=positions, apertures=apertures, seed=seed, seconds=seconds)
        if velocity.shape[0] == 1:
            velocity = np.vstack([velocity, velocity])
        info = describe(phrase) | {"seed": int(seed)}
        return DrySignal(velocity=velocity, sample_rate=int(sample_rate), warnings=(), description=info)
    velocity, warnings = load_recorded(p, sample_rate=sample_rate, velocity_scale=velocity_scale, seconds=seconds)
    if seconds is not None:  # load_recorded has checked it
        n = int(round(seconds * sample_rate))
        velocity = velocity[:, :n] if velocity.shape[1] >= n else np.pad(velocity, ((0, 0), (0, n - velocity.shape[1])))
    info = {
        "kind": "recorded",
        "file": str(path),
        "seconds": velocity.shape[1] / sample_rate,
        "velocity_scale": float(velocity_scale),
    }
    return DrySignal(velocity=velocity, sample_rate=int(sample_rate), warnings=tuple(warnings), description=info)
