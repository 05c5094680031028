"""Where a hum source sits: a design's rejection against a dipole's place, and over random places.

The library form of ``render hum --map``, ``--positions`` and ``--joint``.
The physics is :mod:`render.magnetics.rejection` (the map's planes and
bearings, the shell's draws, the joint draws' pairing with the part
tolerances); here a design brings its own coils
(:func:`render.magnetics.pickup.placed_coils`: windings where it has a
geometry, point coils otherwise) and its networks' gains at its mains
harmonics. None of these use the rig's ``[[hum.source]]`` tables: each
puts one dipole of its own at each place.
"""

from __future__ import annotations

import numpy as np

from ..magnetics.pickup import hum_polarities, placed_coils, point_coil_warnings
from ..magnetics.rejection import (
    DEFAULT_BEARINGS_DEG,
    DEFAULT_DISTANCES_M,
    DEFAULT_SHELL_M,
    PositionMonteCarlo,
    RejectionMap,
    engine_gains,
    joint_monte_carlo,
    position_monte_carlo,
    rejection_map,
)

NULL_MEANS = "null where the rejection does not exist (no hum at that harmonic, or the coils' hum cancels exactly); rejection_db_reason holds the reason at the same place"


def _setup(design, rig):
    from ..design import apply_rig
    from .hum import field_derivative

    d = apply_rig(design, rig)
    f, _ = field_derivative(d.hum)
    return d, placed_coils(d), f


def hum_map(design, *, rig=None, plane: str = "xy", distances_m=DEFAULT_DISTANCES_M, bearings_deg=DEFAULT_BEARINGS_DEG) -> RejectionMap:
    """Rejection of a dipole source (axis along z) against its distance and bearing.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
        Its controls and mains (``[hum]``) replace the design's own.
    plane : {"xy", "xz"}
        "xy": the plane of the coils' top faces, bearing 0° on the neck side,
        90° on the treble side; "xz": the vertical plane along the strings,
        0° the neck side, 90° straight above, negative bearings below.
    distances_m : sequence of float, m, from the midpoint between the coils
    bearings_deg : sequence of float, degrees

    Returns
    -------
    RejectionMap
        ``rejection_db`` of shape (distances, bearings, harmonics).
    """
    _near_refused(distances_m, "distances_m", "each distance")
    d, coils, f = _setup(design, rig)
    fa, fb = engine_gains(d, f)
    return rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, hum_polarity=hum_polarities(d), distances_m=distances_m, bearings_deg=bearings_deg, plane=plane)


def hum_positions(design, *, rig=None, trials: int = 2000, seed: int = 0, shell=DEFAULT_SHELL_M, joint: bool = False, tolerances=None, jobs: int = 1) -> PositionMonteCarlo:
    """Rejection over random dipole sources: places uniform in a spherical shell, axes uniform.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
    trials : int ≥ 1
    seed : int
        The places come from a stream of their own for this seed, so they do
        not disturb the part draws of the same seed.
    shell : (float, float), m, inner and outer radius (0.3 m and 2 m by default)
    joint : bool
        Also draw the part tolerances, trial by trial with the places: the
        same part draws as the tolerance Monte Carlo of the same ``seed`` and
        ``trials`` (:func:`render.analysis.hum.monte_carlo`).
    tolerances : dict or None
        With ``joint``: part class ("resistor", "capacitor", "turns") to a
        relative half-width from 0 to 0.5 (0.01 is ±1 %); the defaults (1 %, 5 %, 2 %) for classes not given.
    jobs : int, worker processes for ``joint`` (results identical to one)

    Returns
    -------
    PositionMonteCarlo
        ``summary()`` gives the median and 5th percentile per harmonic.
    """
    from .hum import check_tolerances

    check_tolerances(tolerances)  # refused before any work, with or without joint
    if isinstance(shell, (tuple, list)) and len(shell) == 2:
        _near_refused(shell[:1], "shell", "the inner radius")
    d, coils, f = _setup(design, rig)
    if joint:
        return joint_monte_carlo(d, coils, frequency_hz=f, tolerances=tolerances, trials=trials, seed=seed, shell=shell, jobs=jobs)
    fa, fb = engine_gains(d, f)
    return position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, hum_polarity=hum_polarities(d), trials=trials, seed=seed, shell=shell)


def _near_refused(distances_m, argument: str, what: str) -> None:
    """Refuse a dipole nearer the pickup than a ``[[hum.source]]`` may sit (:data:`render.magnetics.schema.NEAR_DIPOLE_M`), as a rig file's is."""
    from ..errors import ArgumentError
    from ..magnetics.schema import NEAR_DIPOLE_M

    try:
        near = [float(r) for r in np.ravel(np.asarray(distances_m, dtype=float)) if float(r) < NEAR_DIPOLE_M]
    except (TypeError, ValueError):
        return  # the physics' own checks name a value that is no number
    if near:
        raise ArgumentError(
            argument,
            f"{near[0]:g}",
            f"{what} must be {NEAR_DIPOLE_M:g} m or more: a point dipole nearer sits in the pickup's own field region, where it stands for no real source (as a [[hum.source]] is refused there)",
        )


def room_warnings(design, *, rig=None) -> tuple[str, ...]:
    """The point-coil warning for a map or random places (both put dipoles near the pickup)."""
    from ..design import apply_rig

    return point_coil_warnings(apply_rig(design, rig), dipoles=True)


def map_record(m: RejectionMap) -> dict:
    """The map as JSON: its axes and ``rejection_db[distance][bearing][harmonic]``, with what null means."""
    return {**m.to_dict(), "rejection_null_means": NULL_MEANS}


def positions_record(mc: PositionMonteCarlo) -> dict:
    """Random places (and, jointly drawn, part tolerances) as JSON."""
    rec = {
        "trials": mc.trials,
        "seed": mc.seed,
        "shell_m": [float(x) for x in mc.shell_m],
        "distribution": "dipoles uniform in the shell's volume, axes uniform over all directions",
        "harmonics": [{**row, **_finite(row)} for row in mc.summary()],
    }
    if mc.tolerances is not None:
        rec["tolerances"] = dict(mc.tolerances)
        rec["tolerance_distribution"] = "uniform within ± the tolerance"
    return rec


def _finite(row: dict) -> dict:
    """A quantile that does not exist as None with ``<key>_reason`` beside it (render.analysis.undefined)."""
    from . import undefined as U
    from .undefined import REJECTION_CAP_DB

    out: dict[str, str | None] = {}
    for key in ("median_db", "p5_db"):
        if not np.isfinite(row[key]):
            out[key] = None
            out[f"{key}_reason"] = "some trials have no hum at this harmonic"
        elif row[key] >= REJECTION_CAP_DB:
            out[key] = None
            out[f"{key}_reason"] = U.HUM_CANCELS
    return out
