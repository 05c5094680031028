"""Hum rejection with sources in space: per harmonic, mapped, and over random rooms.

Each coil's hum EMF e_c (:mod:`.hum`) reaches the amp input through that
coil's own transfer function H_c (the engine's ``from_a``/``from_b``, V/V,
the circuit unchanged), so at harmonic h

    V_A = H_a(f_h)·e_a,   V_B = H_b(f_h)·e_b,   V_out = V_A + V_B,
    rejection_db = 20·log10( max(|V_A|, |V_B|) / |V_A + V_B| ),

the definition of :func:`render.analysis.figures.rejection_db` (capped the
same way). With one source, e_c ∝ hum_polarity_c·k_c (its coupling) and the
rejection no longer depends on the source's strength or profile: it is
set by the ratio k_b/k_a of the two coils' couplings and by the networks.
A uniform field along z gives k_a/k_b = turns_area_a/turns_area_b, as in
the one-number room; a dipole at distance r gives the two coils different
flux: for r along the strings and a moment along z, k_b/k_a − 1 ≈ ±3s/r
(s the coils' spacing, from B_z's 1/r³ law there), which bounds a matched
design's rejection near 20·log10(r/(3s)); a moment along the strings links
the windings only through their height (B_z ∝ z/r⁴), ±4s/r; one across
them links neither (tests/test_readme_hum.py holds these against magpylib).

The map puts a dipole of axis z at distance d and bearing θ in a plane:
``"xy"`` (the plane of the top faces; θ from +x, the neck side, towards +y,
the treble side) or ``"xz"`` (the vertical plane along the strings; θ from
+x towards +z, up). The Monte Carlo draws source places uniformly in a
spherical shell (r³ uniform between the radii cubed, the direction
uniform on the sphere) and axes uniformly on the sphere; common practice
for a room about which nothing is known, no source.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..analysis import undefined as U
from ..analysis.figures import rejection_db
from ..analysis.undefined import REJECTION_CAP_DB
from ..errors import ArgumentError, InputError
from ..units import shown
from .hum import HumEmf

DEFAULT_DISTANCES_M = (0.2, 0.3, 0.5, 0.7, 1.0, 1.5, 2.0, 3.0)
DEFAULT_BEARINGS_DEG = tuple(float(b) for b in range(0, 181, 15))
DEFAULT_SHELL_M = (0.3, 2.0)
POSITION_STREAM = 20  # the position draws' stream: default_rng([seed, POSITION_STREAM])


NO_LINKAGE = U.NO_DIPOLE_LINKAGE
EXACT = U.HUM_CANCELS


def _none(x: float):
    """A rejection as JSON: None where it does not exist (no hum, or at the exact-cancellation cap)."""
    return None if not np.isfinite(x) or x >= REJECTION_CAP_DB else float(x)


def _absent(absent, k: int):
    """The reason harmonic ``k`` has no hum in the room (its profile gives it 0), or None."""
    return absent[k] if k < len(absent) else None


def without_absent(rejection, absent) -> np.ndarray:
    """``rejection`` (shape (..., H)) with NaN at each harmonic ``absent`` names: there is no hum there to reject."""
    out = np.array(rejection, dtype=float)
    for k, why in enumerate(absent):
        if why is not None:
            out[..., k] = np.nan
    return out


def _why(x: float):
    """Why a rejection is None (:func:`_none`), or None where it is a figure."""
    if not np.isfinite(x):
        return NO_LINKAGE
    return EXACT if x >= REJECTION_CAP_DB else None


def engine_gains(design, frequency_hz) -> tuple[np.ndarray, np.ndarray]:
    """(H_a, H_b): each coil's EMF to the amp input at ``frequency_hz`` (V/V complex, shape (H,))."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    resp = responses(from_designs([design]))
    f = np.asarray(frequency_hz, dtype=float)
    return resp.from_a()(f)[0], resp.from_b()(f)[0]


# ----------------------------------------------------------------------------
# Per harmonic, with given sources


@dataclass(frozen=True, eq=False)
class SourceHum:
    """Hum at the amp input from given sources, per harmonic (volts peak).

    frequency_hz, coil_a_v, coil_b_v, output_v, rejection_db : shape (H,);
        rejection NaN where there is no hum at that harmonic
    source_coil_a_v, source_coil_b_v, source_output_v, source_rejection_db :
        shape (S, H), each source alone (its share; the shares add as
        phasors, not as magnitudes)
    sources : the sources, in order
    """

    frequency_hz: np.ndarray
    coil_a_v: np.ndarray
    coil_b_v: np.ndarray
    output_v: np.ndarray
    rejection_db: np.ndarray
    source_coil_a_v: np.ndarray
    source_coil_b_v: np.ndarray
    source_output_v: np.ndarray
    source_rejection_db: np.ndarray
    sources: tuple

    def rows(self) -> list[dict]:
        """One JSON-ready dict per harmonic, each source's share under ``sources``."""
        out = []
        for h, f in enumerate(self.frequency_hz):
            out.append(
                {
                    "harmonic": h + 1,
                    "frequency_hz": float(f),
                    "rejection_db": _none(self.rejection_db[h]),
                    "output_v": float(self.output_v[h]),
                    "coil_a_v": float(self.coil_a_v[h]),
                    "coil_b_v": float(self.coil_b_v[h]),
                    "sources": [
                        {
                            "source": j + 1,
                            "kind": s.kind,
                            "output_v": float(self.source_output_v[j, h]),
                            "coil_a_v": float(self.source_coil_a_v[j, h]),
                            "coil_b_v": float(self.source_coil_b_v[j, h]),
                            "rejection_db": _none(self.source_rejection_db[j, h]),
                        }
                        for j, s in enumerate(self.sources)
                    ],
                }
            )
        return out


def source_hum(emf: HumEmf, *, from_a, from_b) -> SourceHum:
    """The hum at the amp input from each coil's EMF phasors.

    emf : :func:`render.magnetics.hum.hum_emf` of both coils
    from_a, from_b : array_like complex [shape=(H,)], V/V, each coil's EMF to
        the amp input at ``emf.frequency_hz`` (:func:`engine_gains`)
    """
    ga = np.asarray(from_a, dtype=complex)
    gb = np.asarray(from_b, dtype=complex)
    if ga.shape != emf.frequency_hz.shape or gb.shape != ga.shape:
        raise ValueError(f"from_a, from_b: expected shape {emf.frequency_hz.shape}, got {ga.shape} and {gb.shape}")
    va_s = emf.per_source[0] * ga  # (S, H)
    vb_s = emf.per_source[1] * gb
    va, vb = va_s.sum(axis=0), vb_s.sum(axis=0)
    return SourceHum(
        frequency_hz=emf.frequency_hz,
        coil_a_v=np.abs(va),
        coil_b_v=np.abs(vb),
        output_v=np.abs(va + vb),
        rejection_db=rejection_db(va, vb),
        source_coil_a_v=np.abs(va_s),
        source_coil_b_v=np.abs(vb_s),
        source_output_v=np.abs(va_s + vb_s),
        source_rejection_db=rejection_db(va_s, vb_s),
        sources=emf.sources,
    )


def coupling_rejection(k_a, k_b, *, from_a, from_b, hum_polarity=(1, 1)) -> np.ndarray:
    """Rejection (dB) of one source from the coils' couplings alone.

    k_a, k_b : array_like [shape=(...)], each coil's flux linkage per unit
        strength (any common unit)
    from_a, from_b : array_like complex [shape=(..., H)] or (H,), V/V
    returns : np.ndarray [shape=(..., H)], dB
    """
    ka = np.asarray(k_a, dtype=float)[..., None] * hum_polarity[0]
    kb = np.asarray(k_b, dtype=float)[..., None] * hum_polarity[1]
    return rejection_db(np.asarray(from_a) * ka, np.asarray(from_b) * kb)


# ----------------------------------------------------------------------------
# The map


def map_positions(distances_m, bearings_deg, plane: str) -> np.ndarray:
    """Dipole places for a map: shape (D, B, 3), m (see the module docstring for the planes).

    ``distances_m`` and ``bearings_deg`` are sequences (a single number is refused, with the form to give);
    a bad one is an :class:`~render.errors.ArgumentError` naming it as :func:`render.hum_map` does.
    """
    d = _axis("distances_m", distances_m, "a sequence of positive distances in m, e.g. (0.5, 1.0)", positive=True)
    t = np.deg2rad(_axis("bearings_deg", bearings_deg, "a sequence of finite bearings in degrees, e.g. (0, 90, 180)"))
    p = np.zeros((d.size, t.size, 3))
    p[..., 0] = d[:, None] * np.cos(t)[None, :]
    if plane == "xy":
        p[..., 1] = d[:, None] * np.sin(t)[None, :]
    elif plane == "xz":
        p[..., 2] = d[:, None] * np.sin(t)[None, :]
    else:
        raise ArgumentError("plane", shown(plane), "expected 'xy' (the top faces' plane) or 'xz' (the vertical plane along the strings)")
    return p


def _axis(name: str, value, what: str, *, positive: bool = False) -> np.ndarray:
    """One axis of the map as a 1-D float array, or an ArgumentError: ``name`` must be ``what``."""
    raw = value.tolist() if isinstance(value, (np.ndarray, np.generic)) else value
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        a = np.asarray(np.nan)
    if a.ndim != 1 or a.size == 0 or not np.all(np.isfinite(a)) or (positive and np.any(a <= 0)):
        raise ArgumentError(name, shown(raw), f"must be {what}")
    return a


@dataclass(frozen=True, eq=False)
class RejectionMap:
    """Rejection of a dipole source (axis along z) against distance and bearing.

    Attributes
    ----------
    plane : str
        ``"xy"`` or ``"xz"``.
    distance_m : np.ndarray [shape=(D,)], m
    bearing_deg : np.ndarray [shape=(B,)], degrees
    frequency_hz : np.ndarray [shape=(H,)], Hz
        The mains harmonics.
    rejection_db : np.ndarray [shape=(D, B, H)], dB
        Not finite where there is no hum at that harmonic, and at the cap (``REJECTION_CAP_DB``) for an exact cancellation (see :meth:`to_dict`).
    absent : tuple of (str or None)
        Per harmonic, why the room has no hum there at all (its profile gives it 0), in words; () or None where it has.
    """

    plane: str
    distance_m: np.ndarray
    bearing_deg: np.ndarray
    frequency_hz: np.ndarray
    rejection_db: np.ndarray
    absent: tuple = ()

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    def to_dict(self) -> dict:
        """JSON-ready: axes and ``rejection_db`` as nested lists [distance][bearing][harmonic].

        A rejection that does not exist is null, and ``rejection_db_reason``
        (the same nesting) holds its reason in words there (null elsewhere):
        no hum at that harmonic, or an exact cancellation (a dipole as far
        from both coils, e.g. broadside, on a matched pair).
        """
        why = [[[_absent(self.absent, k) or _why(v) for k, v in enumerate(row)] for row in plane] for plane in self.rejection_db]
        return {
            "plane": self.plane,
            "dipole_axis": [0.0, 0.0, 1.0],
            "distance_m": [float(x) for x in self.distance_m],
            "bearing_deg": [float(x) for x in self.bearing_deg],
            "frequency_hz": [float(x) for x in self.frequency_hz],
            "rejection_db": [[[_none(v) for v in row] for row in plane] for plane in self.rejection_db],
            "rejection_db_reason": why,
        }


def rejection_map(
    coils,
    *,
    from_a,
    from_b,
    frequency_hz,
    hum_polarity=(1, 1),
    distances_m=DEFAULT_DISTANCES_M,
    bearings_deg=DEFAULT_BEARINGS_DEG,
    plane: str = "xy",
    absent=(),
) -> RejectionMap:
    """Rejection of a z-axis dipole at each distance and bearing in ``plane``.

    coils : the two placed coils; from_a, from_b : shape (H,) V/V at ``frequency_hz``
    absent : per harmonic, why the room has no hum there (None where it has): NaN there, the reason in :meth:`RejectionMap.to_dict`
    """
    p = map_positions(distances_m, bearings_deg, plane)
    _refuse_inside(coils, p.reshape(-1, 3), MAP_FIX)
    axis = np.array([0.0, 0.0, 1.0])
    ka = coils[0].dipole_linkage(p, axis)
    kb = coils[1].dipole_linkage(p, axis)
    rej = coupling_rejection(ka, kb, from_a=from_a, from_b=from_b, hum_polarity=hum_polarity)
    return RejectionMap(
        plane=plane,
        distance_m=np.asarray(distances_m, dtype=float),
        bearing_deg=np.asarray(bearings_deg, dtype=float),
        frequency_hz=np.asarray(frequency_hz, dtype=float),
        rejection_db=without_absent(rej, absent),
        absent=tuple(absent),
    )


COIL_NAMES = ("coil_a", "coil_b")
MAP_FIX = (
    f"larger distances keep it outside; from Python give render.hum_map(design, distances_m=[...]) larger ones (the command line's --map uses {DEFAULT_DISTANCES_M[0]:g}–{DEFAULT_DISTANCES_M[-1]:g} m)"
)
SHELL_FIX = "give the random sources' shell a larger inner radius (--shell INNER OUTER on the command line, shell=(inner, outer) from Python)"


def _refuse_inside(coils, points, fix: str):
    for i, c in enumerate(coils):
        bad = c.inside(points)
        if np.any(bad):
            q = points[np.argmax(bad)]
            raise InputError(f"a dipole at {[round(float(v), 4) for v in q]} m lies within {COIL_NAMES[i]}'s winding: {fix}")


# ----------------------------------------------------------------------------
# Random rooms


def _check_shell(shell) -> tuple[float, float]:
    try:
        r1, r2 = (float(x) for x in shell)
    except (TypeError, ValueError):
        raise InputError(f"shell={shown(shell)}: expected two radii in metres, inner and outer") from None
    if not (np.isfinite(r1) and np.isfinite(r2) and 0 < r1 <= r2):
        raise InputError(f"shell={shown(shell)}: expected 0 < inner ≤ outer radius (m)")
    return r1, r2


def random_sources(trials: int, *, seed: int = 0, shell=DEFAULT_SHELL_M) -> tuple[np.ndarray, np.ndarray]:
    """(places, axes) of ``trials`` dipoles, each shape (trials, 3).

    Places uniform in the shell's volume, axes uniform on the sphere, from
    ``numpy.random.default_rng([seed, POSITION_STREAM])`` (a stream of its
    own, so the part draws of the same seed are untouched): radii, then
    directions, then axes.
    """
    r1, r2 = _check_shell(shell)
    rng = np.random.default_rng([int(seed), POSITION_STREAM])
    u = rng.uniform(0.0, 1.0, trials)
    r = np.cbrt(r1**3 + u * (r2**3 - r1**3))
    d = rng.standard_normal((trials, 3))
    a = rng.standard_normal((trials, 3))
    d /= np.linalg.norm(d, axis=1, keepdims=True)
    a /= np.linalg.norm(a, axis=1, keepdims=True)
    return r[:, None] * d, a


@dataclass(frozen=True, eq=False)
class PositionMonteCarlo:
    """Rejection over random dipole places and orientations (optionally with part tolerances).

    Attributes
    ----------
    frequency_hz : np.ndarray [shape=(H,)], Hz
        The mains harmonics.
    rejection_db : np.ndarray [shape=(trials, H)], dB
    places_m : np.ndarray [shape=(trials, 3)], m
        Each trial's dipole place.
    axes : np.ndarray [shape=(trials, 3)]
        Each trial's moment direction (unit vectors).
    shell_m : tuple of 2 float, m
        The inner and outer radii the places are drawn between.
    trials, seed : int
    tolerances : dict or None
        The part tolerances drawn jointly (relative, by part kind), or None.
    absent : tuple of (str or None)
        As :class:`RejectionMap`'s: per harmonic, why the room has no hum there.
    """

    frequency_hz: np.ndarray
    rejection_db: np.ndarray
    places_m: np.ndarray
    axes: np.ndarray
    shell_m: tuple
    trials: int
    seed: int
    tolerances: dict | None = None
    absent: tuple = ()

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    def summary(self) -> list[dict]:
        """Per harmonic: median and 5th percentile of the rejection (dB); NaN with ``absent`` (the reason) where the room has no hum."""
        rows = []
        for i, f in enumerate(self.frequency_hz):
            row = {"harmonic": i + 1, "frequency_hz": float(f), "median_db": float(np.median(self.rejection_db[:, i])), "p5_db": float(np.percentile(self.rejection_db[:, i], 5))}
            if _absent(self.absent, i) is not None:
                row.update(median_db=float("nan"), p5_db=float("nan"), absent=self.absent[i])
            rows.append(row)
        return rows


def _check_trials(trials) -> int:
    from ..arguments import whole

    return whole("trials", trials)


def position_monte_carlo(coils, *, from_a, from_b, frequency_hz, hum_polarity=(1, 1), trials: int = 2000, seed: int = 0, shell=DEFAULT_SHELL_M) -> PositionMonteCarlo:
    """Rejection for ``trials`` random dipoles (:func:`random_sources`), the circuit as designed."""
    n = _check_trials(trials)
    places, axes = random_sources(n, seed=seed, shell=shell)
    _refuse_inside(coils, places, SHELL_FIX)
    ka = coils[0].dipole_linkage(places, axes)
    kb = coils[1].dipole_linkage(places, axes)
    rej = coupling_rejection(ka, kb, from_a=from_a, from_b=from_b, hum_polarity=hum_polarity)
    return PositionMonteCarlo(np.asarray(frequency_hz, float), rej, places, axes, _check_shell(shell), n, int(seed))


def _joint_chunk(args):
    from ..analysis.hum import perturbed
    from ..circuit.engine import responses

    design, factors, f, ka, kb, hp = args
    n = ka.size
    resp = responses(perturbed(design, factors, n))
    return coupling_rejection(ka, kb, from_a=resp.from_a()(f), from_b=resp.from_b()(f), hum_polarity=hp)


def joint_monte_carlo(design, coils, *, frequency_hz, tolerances=None, trials: int = 2000, seed: int = 0, shell=DEFAULT_SHELL_M, chunk: int = 500, jobs: int = 1) -> PositionMonteCarlo:
    """Random dipoles and part tolerances drawn together, trial by trial.

    The parts are drawn exactly as :func:`render.analysis.hum.hum_tolerances`
    draws them for the same seed, and the sources as :func:`position_monte_carlo`
    does, so each joint trial pairs the two separate runs' trials. A drawn
    turns factor scales that coil's flux linkage with its turns. Results do
    not depend on ``chunk`` or ``jobs``.
    """
    from ..analysis.hum import part_draws
    from ..parallel import pmap

    n = _check_trials(trials)
    tol, draws = part_draws(design, tolerances=tolerances, trials=n, seed=seed)
    places, axes = random_sources(n, seed=seed, shell=shell)
    _refuse_inside(coils, places, SHELL_FIX)
    ka = coils[0].dipole_linkage(places, axes) * draws.get("coil_a.turns", 1.0)
    kb = coils[1].dipole_linkage(places, axes) * draws.get("coil_b.turns", 1.0)
    hp = (design.coil_a.hum_polarity, design.coil_b.hum_polarity)
    f = np.asarray(frequency_hz, dtype=float)
    spans = [(s, min(n, s + int(chunk))) for s in range(0, n, int(chunk))]
    tasks = [(design, {k: v[s:e] for k, v in draws.items()}, f, ka[s:e], kb[s:e], hp) for s, e in spans]
    rej = np.concatenate(pmap(_joint_chunk, tasks, jobs), axis=0)
    return PositionMonteCarlo(f, rej, places, axes, _check_shell(shell), n, int(seed), tol)
