"""The phrase a fit's ``phrase_headroom_db`` aim plays: found, synthesised at the start's sensing points, its spectrum kept."""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError


def phrase_file_of(spec, fitfile: Path) -> Path:
    """The fit file's ``phrase`` relative to the fit file (absolute as written); the demo phrase when it names none."""
    from ..dry import default_dry_path

    if spec.phrase is None:
        return default_dry_path()
    p = Path(spec.phrase)
    if not p.is_absolute():
        p = Path(fitfile).parent / p
    if not p.is_file():
        raise InputError(f"{fitfile}: phrase={spec.phrase!r}: no such file ({p}); the path is relative to the fit file's folder")
    return p


def phrase_for_fit(spec, fitfile: Path, start):
    """A :class:`render.analysis.phrase_headroom.PhraseHeadroom` for ``spec``'s phrase aim, or None without one."""
    if not spec.needs_phrase:
        return None
    from ..analysis.phrase_headroom import PhraseHeadroom
    from ..clip import RenderSettings
    from .clips import dry_for

    return PhraseHeadroom(dry_for(start, phrase_file_of(spec, Path(fitfile)), RenderSettings(strength=spec.strength)))
