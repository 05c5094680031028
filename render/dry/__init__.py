"""Dry signals: the string velocity each coil senses.

Two sources, one result (:class:`Dry`: velocity of shape (2, n) in m/s, row 0
for coil_a and row 1 for coil_b):

- a phrase (TOML; :mod:`render.dry.phrase`), synthesised by
  :func:`synthesize` at each coil's own sensing point and aperture;
- a recorded file (any format libsndfile reads; :mod:`render.dry.recorded`),
  mono feeding both coils.

:func:`load_dry` picks the right one from the file name.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from render.dry.modal import string_velocity
from render.dry.phrase import MIN_SECONDS, Note, Phrase, describe, load_phrase, parse_phrase
from render.dry.recorded import load_recorded

__all__ = [
    "Dry",
    "Note",
    "Phrase",
    "default_dry_path",
    "describe",
    "load_dry",
    "load_phrase",
    "load_recorded",
    "parse_phrase",
    "string_velocity",
    "synthesize",
]

PHRASE_SUFFIXES = (".toml",)
DEFAULT_DRY = Path("dry_signals") / "default.toml"  # the demo phrase, from the project folder
# A recording shorter than this is refused as a phrase is (render.dry.phrase.MIN_SECONDS).
MIN_RECORDED_SECONDS = MIN_SECONDS
# A blind session's shortest clip (render.runs.blind.MIN_SECONDS, its --seconds): it levels its clips by
# ITU-R BS.1770-4 loudness, which needs at least one 400 ms gating block; 0.5 s holds one with room to spare.
MIN_BLIND_SECONDS = 0.5


@dataclass(frozen=True)
class Dry:
    """What is played, as each coil senses it.

    Attributes
    ----------
    velocity : np.ndarray [shape=(2, n)], m/s
        String velocity at coil_a's sensing point (row 0) and coil_b's (row 1).
    sample_rate : int, Hz
    warnings : tuple of str
        One line each (a recording that clipped, an implausible level).
    description : dict
        JSON-ready record of what was played (the phrase or file, its seed).
    """

    velocity: np.ndarray
    sample_rate: int
    warnings: tuple[str, ...] = ()
    description: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        """Refuse a velocity or a sample rate no render can play, naming the argument, before any work."""
        from ..readonly import lock_arrays
        from ..validate import sample_rate

        object.__setattr__(self, "velocity", velocity_array(self.velocity, rows=2))
        object.__setattr__(self, "sample_rate", sample_rate(self.sample_rate))
        lock_arrays(self)

    @property
    def seconds(self) -> float:
        return self.velocity.shape[1] / self.sample_rate


def velocity_array(value: object, *, rows: int | None = None, name: str = "velocity") -> np.ndarray:
    """String velocity in m/s as a float array: real, finite, shape (2, n) (coil_a's row, then coil_b's) or,
    unless ``rows`` is 2, (n,) for both sensing points; else one :class:`~render.errors.ArgumentError` line
    naming ``name``, what is wrong and what to give. The one check of a velocity a :class:`Dry` holds and
    :func:`render.clip.render_clip` takes as a bare array."""
    from ..errors import ArgumentError
    from ..units import shown

    shapes = "shape (2, n), coil_a's row then coil_b's" + ("" if rows == 2 else ", or (n,) for both sensing points")
    try:
        raw = np.asarray(value)
    except (TypeError, ValueError):  # a ragged list
        raw = np.asarray(None)
    if raw.dtype.kind == "c":
        raise ArgumentError(name, f"array of {raw.dtype} of shape {raw.shape}", "complex samples; give the real string velocity in m/s (np.real(v) if its imaginary part is zero)")
    if raw.dtype.kind not in "iuf" or raw.ndim == 0:
        raise ArgumentError(name, shown(value), f"not an array of real numbers; give string velocity in m/s, {shapes}")
    if not (raw.ndim == 2 and raw.shape[0] == 2) and not (raw.ndim == 1 and rows != 2):
        one = "; for one velocity at both points stack it: np.vstack([v, v])" if rows == 2 and raw.ndim == 1 else ""
        raise ArgumentError(name, f"array of shape {raw.shape}", f"give {shapes}{one}")
    v = raw.astype(float, copy=False)
    bad = np.flatnonzero(~np.isfinite(v).all(axis=0) if v.ndim == 2 else ~np.isfinite(v))
    if bad.size:
        raise ArgumentError(name, f"array of shape {v.shape}", f"holds NaN or infinite samples (the first at sample {bad[0]}); give finite string velocity in m/s")
    return v


def default_dry_path() -> Path:
    """The demo phrase: ``dry_signals/default.toml`` from the current folder if it has one, else the copy shipped in the package."""
    if DEFAULT_DRY.is_file():
        return DEFAULT_DRY
    from ..data import DEFAULT_PHRASE, shipped

    return shipped(DEFAULT_PHRASE)


def check_dry_file(path: str | Path | None, *, seconds: float | None = None, recorded: bool = True, velocity_scale: float = 1.0) -> Path:
    """The dry file a render will play (default: the demo phrase), refused before any work if it cannot be used.

    A phrase is read and checked whole, and ``seconds`` over :data:`~render.dry.phrase.MAX_SECONDS`
    or a ``velocity_scale`` other than 1 (it scales a recording) is refused for it; a recording is
    checked as audio when ``recorded`` (a DI to be un-voiced is not).
    """
    from ..errors import ArgumentError
    from .phrase import MAX_SECONDS

    dry = Path(path) if path else default_dry_path()
    if not dry.exists():
        raise ArgumentError("dry_path", f"{dry}", "no such file; give a phrase (.toml) or an audio file", option="--dry")
    if dry.suffix.lower() in PHRASE_SUFFIXES:
        load_phrase(dry)
        refuse_velocity_scale_with_phrase(dry, velocity_scale)
        if seconds is not None and seconds > MAX_SECONDS:
            raise ArgumentError("seconds", f"{seconds:g}", f"a phrase renders in memory, at most {MAX_SECONDS:g} s; for longer takes use a recording")
    elif recorded:
        check_recording(dry)
    return dry


def refuse_velocity_scale_with_phrase(dry: Path, velocity_scale: float, *, settings: str = "RenderSettings") -> None:
    """Refuse a ``velocity_scale`` other than 1 for a phrase: it scales a recording's samples; the fix names
    ``--strength`` and, from Python, the ``strength`` of ``settings`` (the settings class that holds it)."""
    from ..errors import ArgumentError

    if dry.suffix.lower() in PHRASE_SUFFIXES and velocity_scale != 1.0:
        cli, python = "with --strength", f"with {settings}.strength"
        raise ArgumentError(
            "velocity_scale",
            f"{velocity_scale:g}",
            f"scales a recorded dry file, not the phrase {dry}; pluck a phrase harder or softer {cli}",
            python_why=f"scales a recorded dry file, not the phrase {dry}; leave it at 1 and pluck a phrase harder or softer {python}",
        )


def refuse_strength_with_recording(dry: Path, shown: str) -> None:
    """Refuse a pluck strength (``shown`` as its caller gave it) for a dry file that is not a phrase: it scales a phrase's plucks."""
    from ..errors import ArgumentError

    if dry.suffix.lower() not in PHRASE_SUFFIXES:
        raise ArgumentError(
            "strength",
            shown,
            f"goes with a phrase file, not the recording {dry}; scale a recording with render clips --velocity-scale",
            python_why=f"goes with a phrase file, not the recording {dry}; leave it None and scale a recording with RenderSettings.velocity_scale",
        )


def check_recording(path: Path, *, blind: bool = False) -> None:
    """Refuse an audio file a render cannot play (:func:`render.io.audio.audio_info`), or one too short to measure (for ``blind``, to level)."""
    from ..io.audio import audio_info, too_short

    least, why = (MIN_BLIND_SECONDS, "to level a blind session's clips (one BS.1770-4 loudness block)") if blind else (MIN_RECORDED_SECONDS, "to measure a clip")
    short = too_short(str(path), audio_info(path), least, why)
    if short:
        raise short


def synthesize(phrase: Phrase | str | os.PathLike, *, positions=None, apertures=None, sample_rate: int, seed: int = 0, seconds: float | None = None, pickup=None) -> Dry:
    """The string velocity a phrase gives at two sensing points.

    Parameters
    ----------
    phrase : Phrase or str or Path
        From :func:`load_phrase` or :func:`parse_phrase`, or a phrase file's path (read with :func:`load_phrase`).
    positions : (float, float), m
        coil_a's and coil_b's sensing points, from the bridge saddle.
    apertures : (float, float) or float, m
        The sensing windows' widths along the string.
    sample_rate : int, Hz
    seed : int
        The phrase's small per-note variations.
    seconds : float or None, s
        Length (default: the phrase's own).
    pickup : render.dry.construction.Pickup or None
        A design's construction (:func:`render.design.construction.pickup_for`):
        then each coil's EMF from the field solve, in two polarisations and
        nonlinear (:mod:`render.dry.construction`); positions and apertures are unused.

    Returns
    -------
    Dry
    """
    from ..arguments import instance, pair

    if isinstance(phrase, (str, os.PathLike)):
        phrase = load_phrase(os.fspath(phrase))
    instance("phrase", phrase, Phrase, "a render.Phrase (render.load_phrase(path)) or a phrase file's path")
    if pickup is not None:
        from .construction import pickup_velocity

        v, warnings, info, _ = pickup_velocity(phrase, pickup, sample_rate=sample_rate, seed=seed, seconds=seconds)
        return Dry(velocity=v, sample_rate=int(sample_rate), warnings=warnings, description=info)
    positions = pair("positions", positions, "coil_a's and coil_b's sensing points from the bridge saddle, in m or as \"40mm\", e.g. (0.1, 0.05)")
    velocity = string_velocity(phrase, sample_rate=sample_rate, positions=positions, apertures=apertures, seed=seed, seconds=seconds)
    return phrase_dry(phrase, velocity, positions=positions, sample_rate=sample_rate, seed=seed)


def phrase_dry(phrase: Phrase, velocity: np.ndarray, *, positions, sample_rate: int, seed: int) -> Dry:
    """The :class:`Dry` of a phrase synthesised at two sensing points (one row: the same at both), with the
    phrase's own warnings and one for each note a point does not hear or the sample rate cannot carry
    (:func:`render.dry.modal.unheard_notes`, :func:`render.dry.modal.unsynthesised_notes`)."""
    from .modal import unheard_notes, unsynthesised_notes

    if velocity.shape[0] == 1:
        velocity = np.vstack([velocity, velocity])
    unheard = unheard_notes(phrase, positions, ("coil_a's sensing point", "coil_b's sensing point"))
    warnings = (*phrase.warnings, *unsynthesised_notes(phrase, sample_rate), *unheard)
    return Dry(velocity=velocity, sample_rate=int(sample_rate), warnings=warnings, description=describe(phrase) | {"seed": int(seed)})


def load_dry(
    path: str | Path,
    *,
    sample_rate: int,
    positions=None,
    apertures=None,
    seed: int = 0,
    seconds: float | None = None,
    velocity_scale: float = 1.0,
    pickup=None,
    strength: float | None = None,
) -> Dry:
    """String velocity at two sensing points from a phrase or a recorded file.

    Parameters
    ----------
    path : a ``.toml`` phrase file, or any audio file libsndfile reads
    sample_rate : int, Hz
    positions : (x_a, x_b), m from the bridge saddle; for a phrase without ``pickup`` (:func:`synthesize` refuses it missing), unused for a recording
    apertures : (w_a, w_b) or one value, m; likewise
    seed : int, for the phrase's small per-note variations
    seconds : float or None, s; cut or pad with silence to this length (default: the file's own)
    velocity_scale : float, m/s at full scale (used for recorded files)
    pickup : a design's construction for phrases (see :func:`synthesize`); a
        recording stays linear: its velocity meets the derived sensitivity
    strength : float or None, m; a phrase played harder or softer, every pluck
        scaled alike so that its strongest is this (:mod:`render.dry.strength`);
        refused for a recording

    Returns
    -------
    Dry, with velocity of shape (2, n) in m/s.

    Raises
    ------
    InputError
        For any bad file or value, as one line.
    """
    p = Path(path)
    if strength is not None:
        from ..errors import ArgumentError
        from ..units import shown

        if isinstance(strength, bool) or not isinstance(strength, (int, float, np.floating, np.integer)) or not (math.isfinite(strength) and 0 < strength <= 0.05):
            raise ArgumentError("strength", shown(strength), "must be above 0 and at most 0.05 m (50 mm): the strongest pluck's initial displacement, in metres")
        refuse_strength_with_recording(p, f"{strength * 1e3:g}mm")
    if p.suffix.lower() in PHRASE_SUFFIXES:
        phrase = load_phrase(p)
        if strength is not None:
            from .strength import scale_plucks

            phrase = scale_plucks(phrase, strength)
        return synthesize(phrase, positions=positions, apertures=apertures, sample_rate=sample_rate, seed=seed, seconds=seconds, pickup=pickup)
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
    if pickup is not None:
        info["pickup"] = "recorded input: linear (one velocity at the derived sensitivity); the construction's two polarisations and nonlinearity apply to phrases only"
    return Dry(velocity=velocity, sample_rate=int(sample_rate), warnings=tuple(warnings), description=info)
