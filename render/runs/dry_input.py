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
