"""``render hum``'s options read into values: tolerances as fractions, the random sources' shell as metres."""

from __future__ import annotations


def _percent(text, name):
    from ..errors import InputError

    if text is None:
        return None
    t = str(text).strip().rstrip("%")
    try:
        v = float(t) / 100.0
    except ValueError:
        raise InputError(f"{name}={text!r}: expected a percentage such as 1% or 0.5") from None
    if not 0 <= v <= 0.5:
        raise InputError(f"{name}={text!r}: a tolerance must be from 0 % to 50 %")
    return v


def read_tolerances(tolerance, *, resistor, capacitor, turns) -> dict:
    """The Monte Carlo's tolerances per part class from ``--tolerance`` and its per-class options (empty: none)."""
    tol = {}
    if tolerance is not None:
        v = _percent(tolerance, "--tolerance")
        tol = {"resistor": v, "capacitor": v, "turns": v}
    for cls, text in (("resistor", resistor), ("capacitor", capacitor), ("turns", turns)):
        if text is not None:
            tol[cls] = _percent(text, f"--tolerance-{cls}")
    return tol


def read_shell(shell):
    from .. import units as U
    from ..errors import InputError

    if not shell:
        return None
    try:
        return tuple(U.parse_quantity(x, U.LENGTH) for x in shell)
    except U.QuantityError as exc:
        raise InputError(f"--shell {' '.join(shell)}: {exc}; give two radii such as 0.3m 2m") from None
