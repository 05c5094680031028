"""A phrase played harder or softer for a run: every pluck scaled alike (:mod:`render.dry.strength`), at a design's sensing points."""

from __future__ import annotations

from pathlib import Path


def phrase_at_strength(dry_path: Path, design, settings, strength_m: float):
    """The dry phrase with every pluck scaled alike so that its strongest is ``strength_m`` (m), synthesised at the design's sensing points."""
    from ..design.construction import pickup_for
    from ..dry import synthesize
    from ..dry.phrase import load_phrase
    from ..dry.strength import scale_plucks

    p = scale_plucks(load_phrase(dry_path), strength_m)
    a, b = design.coil_a, design.coil_b
    return synthesize(
        p, sample_rate=settings.sample_rate, positions=(a.position, b.position), apertures=(a.aperture, b.aperture), seed=settings.seed, seconds=settings.seconds, pickup=pickup_for(design)
    )
