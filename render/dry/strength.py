"""Playing a phrase harder or softer: every pluck scaled by one factor.

A pluck's strength is the string's initial displacement at the pluck point;
the string's velocity, and so every coil's EMF, is linear in it (the modal
string of :mod:`render.dry.modal`: a sum of modes each with an amplitude
proportional to the initial displacement; Fletcher & Rossing, *The Physics of
Musical Instruments*, 2nd ed., Springer 1998, §2.7). Scaling every pluck by
one factor keeps the phrase's dynamics (a muted chug stays softer than the
chord after it) and scales the string's motion by exactly that factor.
"""

from __future__ import annotations

from dataclasses import replace

from ..errors import InputError
from .phrase import Phrase


def pluck_in_range(value: object) -> float:
    """``value`` (m) as a float when it is a finite pluck strength above 0 and at most 50 mm (the range every
    command's ``--strength`` takes); otherwise :class:`~render.errors.ArgumentError` naming it in mm."""
    import math
    import numbers

    from ..errors import ArgumentError

    finite = isinstance(value, numbers.Real) and not isinstance(value, bool) and math.isfinite(value)
    if not (finite and 0 < float(value) <= 0.05):  # type: ignore[arg-type]
        shown = f"{float(value) * 1e3:g}mm" if finite else (f"{value:g}" if isinstance(value, numbers.Real) and not isinstance(value, bool) else repr(value))  # type: ignore[arg-type]
        raise ArgumentError("strength", shown, "must be above 0 and at most 50 mm")
    return float(value)  # type: ignore[arg-type]


def strongest_pluck(phrase: Phrase) -> float:
    """The phrase's strongest pluck, m (the initial displacement of its hardest-plucked note)."""
    if not phrase.notes:
        raise InputError(f"{phrase.source}: the phrase has no notes, so no pluck to scale; add a [[note]] or drop --strength")
    return max(n.strength for n in phrase.notes)


def scale_plucks(phrase: Phrase, strongest_m: float) -> Phrase:
    """``phrase`` with every pluck scaled alike so that its strongest is ``strongest_m`` (m)."""
    k = strongest_m / strongest_pluck(phrase)
    return replace(phrase, notes=tuple(replace(n, strength=n.strength * k) for n in phrase.notes))
