"""Where the limit is reached when the sensing is not linear: renders at scaled pluck strength and a root find.

:mod:`render.analysis.headroom` predicts the strongest pluck s* at which the
op-amp output reaches the limit's onset from one render, s* = s·10^(m/20)
(s the phrase's strongest pluck, m the smaller margin), which holds when every
coil EMF is linear in the pluck. A design with a ``[construction]`` senses the
string through its magnets' and steel's field (:mod:`render.magnetics.sensing`):
the flux through a coil is not linear in the string's displacement, and a
string that swings far enough leaves the computed flux table (its flux is then
held at the table's edge). There the prediction is off (the demo
slipway-steel-blades: 8.86 mm predicted, yet still +0.8 dB of margin at 8.86 mm).

So for such a design the phrase is rendered again with every pluck scaled
alike (:func:`render.runs.strength.phrase_at_strength`), and m(s), the smaller
margin, is driven to zero by the secant method on log s (m is close to linear in
log s, exactly so for linear sensing), starting from the phrase (s, m) and the
linear prediction. It stops when |m| ≤ :data:`TOLERANCE_DB`; the strength found
is then one whose own render has a margin within that tolerance of 0 dB. When
a render's strings swing past the computed flux range (its flux held at the
table's edge, so its margin is not the design's; with the motion kept, the
strength at which they first would is known without a render,
:func:`render.dry.construction.range_strength_m`, and the search stays below
it, so a limit past it costs one render at the edge), when m stops falling, or
when :data:`MOST_RENDERS` renders do not get there, no strength is claimed:
the figure is None with its reason, and the linear prediction stays in the
record as an estimate.

The strings' motion is linear in the pluck (:mod:`render.dry.strength`); only
the flux sensed from it is not. So the motion is synthesised once and kept
(:class:`render.dry.construction.PhraseMotion`, in float32: the EMF differs from
a new synthesis by about 1e-7 of itself), and each render at another strength
only senses it again; a phrase too long to keep is synthesised again instead.

Numerical method: secant iteration (e.g. Press et al., Numerical Recipes, 3rd
ed., 2007, §9.2).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

TOLERANCE_DB = 0.1  # the margin at the strength found is within this of 0 dB
MOST_RENDERS = 6
STEP_MOST = math.log(2.0)  # the strength changes by at most a factor of 2 from one render to the next after the first
EDGE_INSIDE = 1e-6  # the range's edge is rendered this share inside it (rounding)
RANGE_STEP = math.log(1.02)  # the flux range is taken to end here when it ends within 2 % of a strength inside it (our own choice)


@dataclass(frozen=True)
class LimitSearch:
    """The result of :func:`search_limit_strength`.

    Attributes
    ----------
    strength_m : float or None, m
        The strongest pluck at which the limit is reached (None: not found).
    margin_db : float or None, dB
        The smaller margin of the render at ``strength_m`` (within :data:`TOLERANCE_DB` of 0).
    renders : int
        Renders made.
    trail : tuple of (float, float)
        Every (strength m, margin dB) tried, the phrase's own first.
    reason : str or None
        Why ``strength_m`` is None (:data:`render.analysis.headroom.NOT_FOUND` or ``LEFT_RANGE``).
    range_edge_m : float or None, m
        The strongest pluck whose strings stay inside the computed flux range
        (:func:`render.dry.construction.range_strength_m`; None when not known).
    """

    strength_m: float | None
    margin_db: float | None
    renders: int
    trail: tuple[tuple[float, float], ...]
    reason: str | None = None
    range_edge_m: float | None = None


def margin_at(design, dry_path: Path, settings, strength_m: float, *, motion=None, left: list | None = None) -> float | None:
    """The smaller played margin (dB) of ``design`` playing the phrase with its strongest pluck at ``strength_m`` (no noise: it does not move the extremes it is measured on).

    motion : :class:`render.dry.construction.PhraseMotion` or None
        The phrase's string motion, kept from an earlier call (:func:`design_phrase_motion`): then
        only the flux is sensed again, not the strings synthesised.
    left : list or None
        When given, True is appended when a string swung past the computed flux range in this render, else False.
    """
    from ..chain.stream import render_signal
    from ..clip import render_headroom
    from ..dry.construction import LeftRange
    from .dry_input import dry_for

    if motion is not None:
        from ..design.construction import pickup_for
        from ..dry.construction import motion_velocity

        velocity, warnings = motion_velocity(motion, pickup_for(design), strongest_m=strength_m)
        sample_rate = settings.sample_rate
    else:
        dry = dry_for(design, Path(dry_path), replace(settings, strength=strength_m))
        velocity, sample_rate, warnings = dry.velocity, dry.sample_rate, dry.warnings
    if left is not None:
        left.append(any(isinstance(w, LeftRange) for w in warnings))
    r = render_signal(design, velocity, sample_rate=sample_rate, hum=settings.hum)
    return render_headroom(design, r, strongest_pluck_m=strength_m).margin_db


def design_phrase_motion(design, dry_path: Path, settings):
    """The phrase's string motion at ``design``'s coils, kept for the renders at other strengths (None: not a constructed design, or too long to keep)."""
    from ..design.construction import pickup_for
    from ..dry.construction import phrase_motion as motion
    from ..dry.phrase import load_phrase

    pickup = pickup_for(design)
    if pickup is None:
        return None
    return motion(load_phrase(Path(dry_path)), pickup.sensing, cores=pickup.cores, outers=pickup.outers, sample_rate=settings.sample_rate, seed=settings.seed, seconds=settings.seconds)


def search_limit_strength(design, dry_path: Path, settings, *, strongest_m: float, margin_db: float, tolerance_db: float = TOLERANCE_DB, most: int = MOST_RENDERS, motion=None) -> LimitSearch:
    """The strongest pluck (m) at which ``design``'s op-amp output reaches the limit's onset, by renders at scaled strength.

    Parameters
    ----------
    design : Design
    dry_path : Path
        A phrase (.toml).
    settings : RenderSettings
    strongest_m : float, m
        The phrase's strongest pluck as rendered.
    margin_db : float, dB
        The smaller margin of that render.
    motion : :class:`render.dry.construction.PhraseMotion` or None
        The phrase's string motion kept from that render (else synthesised here once, when needed).
    """
    from ..analysis.headroom import LEFT_RANGE, NOT_FOUND

    trail = [(strongest_m, margin_db)]
    if abs(margin_db) <= tolerance_db:
        return LimitSearch(strongest_m, margin_db, 0, tuple(trail))
    xp, mp = math.log(strongest_m), margin_db  # the last strength rendered inside the flux range, and its margin
    x1 = xp + margin_db / 20.0 * math.log(10.0)  # the linear prediction
    x_out = None  # the weakest strength found whose strings leave the computed flux range
    # the strings' motion is linear in the pluck: synthesised once, then only sensed again at each strength
    if motion is None and design is not None:
        motion = design_phrase_motion(design, dry_path, settings)
    kept = {"motion": motion} if motion is not None else {}
    edge = None  # the range's edge, from the kept motion (no render needed): the search stays inside it
    if motion is not None:
        from ..dry.construction import range_strength_m

        edge = range_strength_m(motion) * (1.0 - EDGE_INSIDE)
        x1 = min(x1, math.log(edge)) if edge > 0 else x1
    for n in range(1, most + 1):
        left: list[bool] = []
        m1 = margin_at(design, dry_path, settings, math.exp(x1), left=left, **kept)
        if m1 is None:
            break
        trail.append((math.exp(x1), m1))
        if left and left[-1]:  # the flux there is held at the table's edge: this margin is not the design's
            x_out = x1
            if x_out - xp < RANGE_STEP:  # the range ends just past a strength that still has margin
                return LimitSearch(None, None, n, tuple(trail), reason=LEFT_RANGE, range_edge_m=edge)
            x1 = 0.5 * (xp + x_out)  # back inside: halve the step
            continue
        if abs(m1) <= tolerance_db:
            return LimitSearch(math.exp(x1), m1, n, tuple(trail), range_edge_m=edge)
        if edge and m1 > tolerance_db and x1 >= math.log(edge) - 1e-12:  # margin left at the range's edge: the limit lies past it
            return LimitSearch(None, None, n, tuple(trail), reason=LEFT_RANGE, range_edge_m=edge)
        slope = (m1 - mp) / (x1 - xp)
        if not slope < -0.5:  # dB per neper; linear sensing gives -8.7: a margin that barely falls
            break
        step = max(-STEP_MOST, min(STEP_MOST, -m1 / slope))  # no wild jumps where the margin bends
        xp, mp, x1 = x1, m1, x1 + step
        if x_out is not None and x1 >= x_out:
            x1 = 0.5 * (xp + x_out)
        if edge:
            x1 = min(x1, math.log(edge))
    return LimitSearch(None, None, len(trail) - 1, tuple(trail), reason=LEFT_RANGE if x_out is not None and mp > tolerance_db else NOT_FOUND, range_edge_m=edge)
