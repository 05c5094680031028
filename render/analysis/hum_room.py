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

from ..magnetics.pickup import area_mismatch_warnings, hum_polarities, placed_coils, point_coil_warnings
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


def absent(design) -> tuple[str | None, ...]:
    """Per harmonic, why the room's dipole has no hum there (the ``[hum]`` profile gives it 0), else None.

    The map's and the random places' dipole takes the room's profile, so a harmonic the profile
    lacks has no hum to reject: its cells are words (:data:`render.analysis.undefined.NO_FIELD`), not figures.
    """
    from .undefined import NO_FIELD

    return tuple(NO_FIELD if a == 0 else None for a in design.hum.harmonics)


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
    distances_m : sequence of float, m, from the midpoint between the coils; every place
        must lie 0.1 m or more from each coil's centre (as a ``[[hum.source]]`` must)
    bearings_deg : sequence of float, degrees

    Returns
    -------
    RejectionMap
        ``rejection_db`` of shape (distances, bearings, harmonics); NaN (and
        words in ``to_dict``) at a harmonic the room's profile lacks.
    """
    from ..design import apply_rig

    check_places(apply_rig(design, rig), distances_m=distances_m, bearings_deg=bearings_deg, plane=plane)
    d, coils, f = _setup(design, rig)
    fa, fb = engine_gains(d, f)
    return rejection_map(coils, from_a=fa, from_b=fb, frequency_hz=f, hum_polarity=hum_polarities(d), distances_m=distances_m, bearings_deg=bearings_deg, plane=plane, absent=absent(d))


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
    shell : (float, float), m, inner and outer radius (0.3 m and 2 m by default), from the
        midpoint between the coils; its nearest places must lie 0.1 m or more from each coil's centre
    joint : bool
        Also draw the part tolerances, trial by trial with the places: the
        same part draws as the tolerance Monte Carlo of the same ``seed`` and
        ``trials`` (:func:`render.analysis.hum.hum_tolerances`).
    tolerances : dict or None
        With ``joint``: part class ("resistor", "capacitor", "turns") to a
        relative half-width from 0 to 0.5 (0.01 is ±1 %); the defaults (1 %, 5 %, 2 %) for classes not given.
    jobs : int, worker processes for ``joint`` (results identical to one)

    Returns
    -------
    PositionMonteCarlo
        ``summary()`` gives the median and 5th percentile per harmonic.
    """
    from dataclasses import replace

    from .. import arguments as A
    from ..design import apply_rig
    from ..magnetics.rejection import without_absent
    from .hum import check_tolerances

    trials, seed, jobs, joint = A.whole("trials", trials), A.seed("seed", seed), A.whole("jobs", jobs), A.flag("joint", joint)
    check_tolerances(tolerances)  # refused before any work, with or without joint
    check_places(apply_rig(design, rig), shell=shell)
    d, coils, f = _setup(design, rig)
    if joint:
        mc = joint_monte_carlo(d, coils, frequency_hz=f, tolerances=tolerances, trials=trials, seed=seed, shell=shell, jobs=jobs)
    else:
        fa, fb = engine_gains(d, f)
        mc = position_monte_carlo(coils, from_a=fa, from_b=fb, frequency_hz=f, hum_polarity=hum_polarities(d), trials=trials, seed=seed, shell=shell)
    gone = absent(d)
    return replace(mc, rejection_db=without_absent(mc.rejection_db, gone), absent=gone) if any(gone) else mc


def check_places(design, *, distances_m=None, bearings_deg=DEFAULT_BEARINGS_DEG, plane: str = "xy", shell=None) -> None:
    """Refuse a map's or a shell's dipole within 0.1 m of either coil's centre, as a rig file's ``[[hum.source]]`` is.

    The rule (:data:`render.magnetics.schema.NEAR_DIPOLE_M`, common practice, no source) is each
    coil's: the map's distances and the shell's radii are measured from the midpoint between
    the coils, so a place that far from the midpoint can be nearer one coil. The refusal words the
    distance as :func:`render.magnetics.schema.near_dipole` does for a source, with the fix for the
    map (larger ``distances_m``) or the shell (a larger inner radius, ``--shell``).

    design : the design (its coils' positions); distances_m : the map's, or None for no map;
    shell : (inner, outer) m, or None for no random places
    """
    from ..errors import ArgumentError
    from ..magnetics.coil import coil_centres
    from ..magnetics.rejection import _check_shell, map_positions
    from ..magnetics.schema import NEAR_DIPOLE_M, near_dipole

    centres = np.array(coil_centres(design.coil_a.position, design.coil_b.position))
    need = NEAR_DIPOLE_M + float(np.max(np.linalg.norm(centres, axis=1)))  # every place this far from the midpoint keeps clear of both
    names = ("coil_a", "coil_b")
    if distances_m is not None:
        p = map_positions(distances_m, bearings_deg, plane)  # (D, B, 3); refuses distances that are no positive numbers
        r = np.linalg.norm(p[None, ...] - centres[:, None, None, :], axis=-1)  # (2, D, B)
        c, i, j = np.unravel_index(int(np.argmin(r)), r.shape)
        if r[c, i, j] < NEAR_DIPOLE_M:
            dist, bearing = float(np.ravel(distances_m)[i]), float(np.ravel(bearings_deg)[j])
            place = f"the map's place at {dist:g} m, bearing {bearing:g}°, is {near_dipole(float(r[c, i, j]), names[c])}"
            raise ArgumentError(
                "distances_m",
                f"{dist:g}",
                f"{place}; give distances of {need:.3g} m or more",
                cli=f"--map: {place}; the command line's map starts at {DEFAULT_DISTANCES_M[0]:g} m, so map coils this far apart from Python: render.hum_map(design, distances_m=[...]) with distances of {need:.3g} m or more",
            )
    if shell is not None:
        r1, r2 = _check_shell(shell)
        d = np.linalg.norm(centres, axis=1)
        gap = np.where(d < r1, r1 - d, np.where(d > r2, d - r2, 0.0))  # each centre to the shell's nearest place
        k = int(np.argmin(gap))
        if gap[k] < NEAR_DIPOLE_M:
            why = f"the shell's nearest places are {near_dipole(float(gap[k]), names[k])}; give an inner radius of {need:.3g} m or more"
            raise ArgumentError("shell", f"({r1:g}, {r2:g})", why, option="--shell", cli=f"--shell {r1:g}m {r2:g}m: {why}")


def check_room(design, *, map_on: bool, plane: str = "xy", bearings_deg=None, positions: bool = False, shell=None) -> None:
    """:func:`check_places` for what ``render hum`` will do (its map's default distances, its shell or the default one), before any work."""
    check_places(
        design,
        distances_m=DEFAULT_DISTANCES_M if map_on else None,
        bearings_deg=bearings_deg or DEFAULT_BEARINGS_DEG,
        plane=plane,
        shell=(shell or DEFAULT_SHELL_M) if positions else None,
    )


def room_warnings(design, *, rig=None) -> tuple[str, ...]:
    """The point-coil warning for a map or random places (both put dipoles near the pickup), and the coils' area mismatch."""
    from ..design import apply_rig

    d = apply_rig(design, rig)
    return point_coil_warnings(d, dipoles=True) + area_mismatch_warnings(d)


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
        "harmonics": [{**{k: v for k, v in row.items() if k != "absent"}, **_finite(row)} for row in mc.summary()],
    }
    if mc.tolerances is not None:
        rec["tolerances"] = dict(mc.tolerances)
        rec["tolerance_distribution"] = "uniform within ± the tolerance"
    return rec


def quantile_line(row: dict) -> str:
    """One harmonic of a Monte Carlo's summary as ``render hum`` prints it; words where the room has no hum there."""
    from .undefined import NO_FIELD, figure_or_reason

    head = f"    H{row['harmonic']} {row['frequency_hz']:5.0f} Hz: "
    if row.get("median_db") is None and row.get("median_db_reason") == NO_FIELD:
        return head + f"no field at this harmonic ({NO_FIELD}), so no hum to reject"
    return head + f"median {figure_or_reason(row, 'median_db', '.1f', ' dB')}, 5th percentile {figure_or_reason(row, 'p5_db', '.1f', ' dB')}"


def map_lines(m: RejectionMap) -> list[str]:
    """The map at the fundamental as ``render hum --map`` prints it: a table of dB, or words where there is no figure.

    A cell that does not exist is its reason's short word (:mod:`render.analysis.undefined`), each
    word explained below the table; a fundamental the room lacks is one line of words, not a table.
    """
    from .undefined import cell

    where = "the x–y plane (top faces; 0° neck side, 90° treble side)" if m.plane == "xy" else "the x–z plane (along the strings; 0° neck side, 90° straight above, -90° below)"
    head = f"  rejection (dB) at {m.frequency_hz[0]:g} Hz of a dipole (axis z) in {where}"
    if m.absent and m.absent[0] is not None:
        return [f"{head}: no field at this harmonic ({m.absent[0]}), so no hum to reject; the JSON's map has the other harmonics"]
    digits = next((k for k in range(4) if len({round(b, k) for b in m.bearing_deg}) == len(m.bearing_deg)), 3)  # enough to tell bearings apart
    lines = [f"{head}:", "    distance" + "".join(f"{b:>6.{digits}f}°" for b in m.bearing_deg)]
    js = m.to_dict()

    def map_cell(i, j, reason=None):
        rec = {"r": js["rejection_db"][i][j][0], "r_reason": js["rejection_db_reason"][i][j][0]} if reason is None else {"r": None, "r_reason": reason}
        return cell(rec, "r", "6.1f", "")

    for i, dist in enumerate(m.distance_m):
        lines.append(f"    {dist:6.2f} m" + "".join(f"{map_cell(i, j):>7s}" for j in range(len(m.bearing_deg))))
    words = {r for row in js["rejection_db_reason"] for c in row for r in c[:1] if r}
    lines += [f"    {map_cell(0, 0, r).strip()}: {r}" for r in sorted(words)]
    return lines


def _finite(row: dict) -> dict:
    """A quantile that does not exist as None with ``<key>_reason`` beside it (render.analysis.undefined)."""
    from . import undefined as U
    from .undefined import REJECTION_CAP_DB

    out: dict[str, str | None] = {}
    for key in ("median_db", "p5_db"):
        if row.get("absent"):  # the room has no hum at this harmonic at all
            out[key] = None
            out[f"{key}_reason"] = row["absent"]
        elif not np.isfinite(row[key]):
            out[key] = None
            out[f"{key}_reason"] = "some trials have no hum at this harmonic"
        elif row[key] >= REJECTION_CAP_DB:
            out[key] = None
            out[f"{key}_reason"] = U.HUM_CANCELS
    return out
