"""Which mains harmonics a design's room has hum at, and the one a one-number rejection quotes.

The field's harmonic h peaks at field · a_h and changes at dB_h/dt = field · a_h · 2π·h·f
(:func:`field_derivative`; Faraday's law then multiplies by turns × area). A harmonic the
field's profile or every source lacks has no hum to reject (:func:`absent_harmonics`); a
single quoted rejection takes the lowest harmonic with hum (:func:`quoted_harmonic`), the rule
``render hum``'s Monte Carlo and ``render check``'s figure share.
"""

from __future__ import annotations

import numpy as np


def field_derivative(hum):
    """Frequencies (Hz) and peak dB/dt (T/s) of each harmonic of the field.

    B_h(t) = field · a_h · sin(2π h f t) gives dB_h/dt of peak
    field · a_h · 2π h f (Faraday's law then multiplies by turns × area).
    """
    h = np.arange(1, len(hum.harmonics) + 1)
    f = h * hum.mains
    return f, np.asarray(hum.harmonics) * hum.field * 2 * np.pi * f


def absent_harmonics(design, *, emf=None) -> tuple[str | None, ...]:
    """Per mains harmonic of ``design``'s room, why it has no hum (in words), or None where it has some.

    Without sources: the field's harmonic is zero (:data:`~render.analysis.undefined.NO_FIELD`). With
    ``[[hum.source]]`` tables: no source's EMF reaches either coil at it (``NO_LINKAGE``), for a source
    whose profile lacks it or one that links neither coil. A harmonic whose hum the coils cancel exactly
    is not absent: its hum exists in each coil.

    emf : np.ndarray [shape=(2, H)], complex, V, or None
        With sources: each coil's total EMF per harmonic when already computed
        (:func:`render.magnetics.pickup.design_emf`'s ``total``); computed here when None.
    """
    from . import undefined as U

    if not design.hum.sources:
        _, dbdt = field_derivative(design.hum)
        return tuple(U.NO_FIELD if d == 0 else None for d in dbdt)
    from ..magnetics.pickup import design_emf

    e = design_emf(design).total if emf is None else np.asarray(emf)  # (2, H)
    return tuple(U.unlinked(e[0, i], e[1, i]) for i in range(e.shape[1]))


def quoted_harmonic(absent) -> int | None:
    """Index of the harmonic a one-number rejection quotes: the lowest with hum (the fundamental unless it has none).

    absent : sequence of (str or None), one per harmonic, from :func:`absent_harmonics`

    None where no harmonic has hum. ``render hum``'s Monte Carlo sensitivities and histogram and the
    figures' ``hum_rejection_db`` (``render check``) all quote this one.
    """
    return next((i for i, why in enumerate(absent) if why is None), None)


def quoted_for(design):
    """(harmonic index or None, each coil's EMF per harmonic or None) for ``design``'s room.

    The index is :func:`quoted_harmonic` of :func:`absent_harmonics`; the EMF, shape (2, H), complex, V, is
    :func:`render.magnetics.pickup.design_emf`'s ``total`` where the room has ``[[hum.source]]`` tables
    (None for a one-number field), computed once for both.
    """
    emf = None
    if design.hum.sources:
        from ..magnetics.pickup import design_emf

        emf = design_emf(design).total
    return quoted_harmonic(absent_harmonics(design, emf=emf)), emf
