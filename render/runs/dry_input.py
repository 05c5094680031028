"""The dry signal a design hears: at its two sensing points, through its construction, at a chosen pluck strength."""

from __future__ import annotations

from pathlib import Path

from ..clip import RenderSettings
from ..design import Design
from ..dry import Dry


def dry_for(design: Design, dry_path: Path, settings: RenderSettings) -> Dry:
    """The dry signal at this design's two sensing points (a phrase's plucks scaled to ``settings.strength`` when given)."""
    from ..design.construction import pickup_for
    from ..dry import load_dry

    if settings.strength is not None:
        from .strength import phrase_at_strength

        return phrase_at_strength(dry_path, design, settings, settings.strength)

    a, b = design.coil_a, design.coil_b
    return load_dry(
        dry_path,
        sample_rate=settings.sample_rate,
        positions=(a.position, b.position),
        apertures=(a.aperture, b.aperture),
        seed=settings.seed,
        seconds=settings.seconds,
        velocity_scale=settings.velocity_scale,
        pickup=pickup_for(design),
    )


def dry_with_motion(design: Design, dry_path: Path, settings: RenderSettings):
    """:func:`dry_for`, and for a design with a ``[construction]`` playing a phrase, the strings' motion kept
    (:class:`render.dry.construction.PhraseMotion`, or None) so that the limit search senses it again instead of
    synthesising the phrase at each strength."""
    from ..design.construction import pickup_for
    from ..dry import PHRASE_SUFFIXES
    from ..dry.construction import pickup_velocity
    from ..dry.phrase import load_phrase
    from ..dry.strength import scale_plucks

    pickup = pickup_for(design)
    if pickup is None or Path(dry_path).suffix.lower() not in PHRASE_SUFFIXES:
        return dry_for(design, dry_path, settings), None
    phrase = load_phrase(Path(dry_path))
    if settings.strength is not None:
        phrase = scale_plucks(phrase, settings.strength)
    v, warnings, info, motion = pickup_velocity(phrase, pickup, sample_rate=settings.sample_rate, seed=settings.seed, seconds=settings.seconds, keep_motion=True)
    return Dry(velocity=v, sample_rate=int(settings.sample_rate), warnings=warnings, description=info), motion
