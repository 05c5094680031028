"""``render hum``'s options read into values: tolerances as fractions, the random sources' shell as metres, the map's bearings."""

from __future__ import annotations

import click
import numpy as np

from .values import OutFile, given

MAX_BEARINGS = 73  # a map's columns at most (every 5° round the circle)


def map_options(f):
    """The map's options: --map, --map-plane, --map-bearings and --map-png (each implies --map)."""
    f = click.option("--map-png", type=OutFile("map.png"), help="Plot the map at the fundamental (implies --map; the first MODEL).")(f)
    f = click.option(
        "--map-bearings",
        "map_bearings",
        default=None,
        metavar="DEGREES",
        help="The map's bearings: a list (0,45,90) or start:stop:step (-90:180:15, below the pickup in xz); default 0:180:15. Implies --map.",
    )(f)
    f = click.option(
        "--map-plane",
        type=click.Choice(["xy", "xz"]),
        default=None,
        help="xy (the default): the top faces' plane (90° treble side); xz: the vertical plane along the strings (90° above, -90° below). Implies --map.",
    )(f)
    return click.option("--map", "map_on", is_flag=True, help="Rejection against a dipole source's distance (0.2–3 m) and bearing: a table and JSON.")(f)


def read_bearings(text) -> tuple[float, ...] | None:
    """``--map-bearings`` in degrees: "0,45,90" or "start:stop:step" (stop included); None when not given."""
    from ..errors import InputError

    if text is None:
        return None
    t = str(text).strip().replace("\u2212", "-").replace("°", "")
    fix = "give a list such as 0,45,90 or start:stop:step such as -90:180:15"
    try:
        if ":" in t:
            start, stop, step = (float(x) for x in t.split(":"))
            if not step > 0 or stop < start:
                raise ValueError
            values = tuple(float(x) for x in np.arange(start, stop + step / 2, step))
        else:
            values = tuple(float(x) for x in t.split(","))
    except ValueError:
        raise InputError(f"--map-bearings={text!r}: cannot read it; {fix}") from None
    if not values or not all(np.isfinite(values)) or len(values) > MAX_BEARINGS:
        raise InputError(f"--map-bearings={text!r}: expected 1 to {MAX_BEARINGS} finite bearings; {fix}")
    return values


def _percent(text, name):
    from ..errors import InputError

    if text is None:
        return None
    t = str(text).strip().rstrip("%")
    try:
        v = float(t) / 100.0
    except ValueError:
        raise InputError(f"{name}={text!r}: expected a percentage such as 1% or 0.5") from None
    from ..analysis.hum import TOLERANCE_MAX, TOLERANCE_RANGE

    if not 0 <= v <= TOLERANCE_MAX:
        raise InputError(f"{name}={text!r}: {TOLERANCE_RANGE}")
    return v


def read_tolerances(tolerance, *, resistor, capacitor, turns) -> dict:
    """The Monte Carlo's tolerances per part class from ``--tolerance`` and its per-class options (empty: none).

    ``--trials`` typed without any of them is refused: it counts the tolerance Monte Carlo's draws only.
    """
    from ..errors import InputError

    tol = {}
    if tolerance is not None:
        v = _percent(tolerance, "--tolerance")
        tol = {"resistor": v, "capacitor": v, "turns": v}
    for cls, text in (("resistor", resistor), ("capacitor", capacitor), ("turns", turns)):
        if text is not None:
            tol[cls] = _percent(text, f"--tolerance-{cls}")
    if not tol and given("trials"):
        raise InputError("--trials counts the tolerance Monte Carlo's draws: add --tolerance (e.g. --tolerance 1%), or leave --trials out (--positions N sets the random sources' count)")
    return tol


def read_shell(shell):
    from .. import units as U
    from ..errors import InputError

    if not shell:
        return None
    try:
        inner, outer = (U.parse_quantity(x, U.LENGTH) for x in shell)
    except U.QuantityError as exc:
        raise InputError(f"--shell {' '.join(shell)}: {exc}; give two radii such as 0.3m 2m") from None
    if not 0 < inner <= outer:
        raise InputError(f"--shell {' '.join(shell)}: expected 0 < inner ≤ outer radius; give two radii such as 0.3m 2m")
    return inner, outer  # each coil's 10 cm is checked with the design's coils (render.analysis.hum_room.check_places)
