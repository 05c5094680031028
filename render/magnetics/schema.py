"""Reading the coil geometry and hum source tables (not yet wired into the design reader).

``[coil_x.geometry]`` (:data:`GEOMETRY`) gives a coil's turns their place;
``[[hum.source]]`` (:data:`DIPOLE`, :data:`UNIFORM`) lists the hum sources
of a rig. The readers use the design file's field specifications and
one-line messages (:func:`render.design.read_table`), so the rules read as
everywhere else.

With a ``[coil_x.winding]`` table, the geometry table takes only
``window_width``: the winding carries the turns, the height, the build
(its ``depth``) and the mean turn (:func:`~render.magnetics.coil.geometry_from_winding`);
turns given in both is an error.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .. import units as U
from ..errors import ArgumentError, InputError
from ..validate import Field, did_you_mean, read_table, read_value
from .coil import CoilGeometry, coil_pair, geometry_from_winding
from .hum import DipoleSource, UniformSource

SIZE: dict[str, Any] = dict(lo=1e-4, hi=0.3, lo_open=False)  # 0.1 mm .. 30 cm: any pickup bobbin
GEOMETRY = {
    "turns": Field(U.RATIO, True, lo=1.0, hi=1e6, lo_open=False, doc="number of turns"),
    "length": Field(U.LENGTH, True, doc="outer size of the winding across the strings (along y)", **SIZE),
    "width": Field(U.LENGTH, True, doc="outer size of the winding along the string (along x)", **SIZE),
    "window_length": Field(U.LENGTH, True, doc="the bobbin's opening across the strings", **SIZE),
    "window_width": Field(U.LENGTH, True, doc="the bobbin's opening along the string", **SIZE),
    "height": Field(U.LENGTH, True, doc="winding height along the coil's axis (z)", **SIZE),
}
MAX_SOURCES = 64
# A point dipole stands for a source seen from a few times its own size; nearer than this to a
# coil's centre it would sit in the pickup's own field region, where a transformer or an adapter
# is no point at all, and its figures mean nothing (common practice, no source).
NEAR_DIPOLE_M = 0.10
PLACE_M = 100.0  # a source's coordinates, ± this many metres
COMMON = {
    "harmonics": Field("list", doc="relative amplitudes of harmonics 1, 2, …; default the [hum] profile"),
    "phase": Field(U.RATIO, default=0.0, lo=-360.0, hi=360.0, lo_open=False, doc="degrees of the fundamental; harmonic h is shifted by h·phase"),
}
DIPOLE = {
    "moment": Field(
        U.RATIO,
        True,
        lo=0.0,
        hi=1e3,
        lo_open=False,
        doc="dipole moment, A·m², the reference peak: harmonic h peaks at moment × harmonics[h−1] (the fundamental at moment when harmonics starts with 1)",
    ),
    **COMMON,
}
UNIFORM = {
    "field": Field(
        U.FLUX_DENSITY, True, lo=0.0, hi=1e-2, lo_open=False, doc="reference peak flux density: harmonic h peaks at field × harmonics[h−1] (the fundamental at field when harmonics starts with 1)"
    ),
    **COMMON,
}
VECTORS = ("kind", "at", "axis")  # read here, not by read_table


def all_zero(profile) -> bool:
    """True when a harmonic profile has no non-zero amplitude (no field at any harmonic)."""
    return profile is not None and not any(profile)


def zero_profile_error(loc: str, profile) -> InputError:
    """The refusal of a harmonic profile that is all zero: there would be no hum to measure."""
    shown = "[" + ", ".join(f"{x:g}" for x in profile) + "]"
    return InputError(
        f"{loc} harmonics={shown}: every amplitude is 0, so there is no hum field; give the fundamental 1.0 (e.g. harmonics = [1.0, 0.05, 0.3]), or leave harmonics out for the default profile"
    )


def too_many_sources() -> str:
    """The limit on a room's sources (:data:`MAX_SOURCES`) and what to do over it, for a rig file and for Python alike."""
    return (
        f"at most {MAX_SOURCES} sources are allowed; merge sources that sit close together into one (seen from afar, dipoles side by side act as one of their summed moment) or leave out the weakest"
    )


def near_dipole(r: float, coil: str) -> str:
    """The one wording of a dipole nearer a coil's centre than :data:`NEAR_DIPOLE_M` (a source, a map's place, a shell's), r in m."""
    return f"{r * 100:.3g} cm from {coil}'s centre, closer than {NEAR_DIPOLE_M * 100:g} cm: a point dipole there stands for no real source (the pickup's own field region)"


def check_source_places(sources, *, coil_a, coil_b, source: str = "", argument: str | None = None) -> None:
    """Refuse a dipole within :data:`NEAR_DIPOLE_M` of either coil's centre (one line; a dipole inside a winding says so).

    coil_a, coil_b : the design's :class:`render.design.Coil` (position, geometry or turns_area)
    source : the file the sources were read from, named with each source's table
    argument : instead, the Python argument that gave them (``"sources"``): the refusal is an
        :class:`~render.errors.ArgumentError` naming ``sources[i]``
    """
    if not any(s.kind == "dipole" for s in sources):
        return
    specs = [c.geometry if c.geometry is not None else c.turns_area for c in (coil_a, coil_b)]
    placed = coil_pair(*specs, position_a=coil_a.position, position_b=coil_b.position)
    for i, s in enumerate(sources):
        if s.kind != "dipole":
            continue
        at = np.asarray(s.at, dtype=float)
        shown_at = f"[{', '.join(f'{x:g}' for x in s.at)}]"
        why = None
        for name, c in zip(("coil_a", "coil_b"), placed):
            if c.inside(at):
                why = f"lies within {name}'s winding; a dipole source must sit outside the pickup, {NEAR_DIPOLE_M * 100:g} cm or more from each coil"
                break
        r, name = min((float(np.linalg.norm(at - np.asarray(c.centre))), name) for name, c in zip(("coil_a", "coil_b"), placed))  # the nearer coil
        if why is None and r < NEAR_DIPOLE_M:
            why = f"{near_dipole(r, name)}; move it {NEAR_DIPOLE_M * 100:g} cm or more from both coils"
        if why is None:
            continue
        if argument is not None:
            raise ArgumentError(f"{argument}[{i}]", f"DipoleSource(at={shown_at} m)", why)
        raise InputError(f"{_loc(source, f'hum.source {i + 1}')} at={shown_at} m: {why}")


def _loc(source: str, table: str, key: str | None = None) -> str:
    return f"{source}: [{table}]" + (f" {key}" if key else "")


def read_geometry(data: Any, *, source: str, table: str, winding=None) -> CoilGeometry:
    """A ``[coil_x.geometry]`` table as a :class:`CoilGeometry`.

    winding : the coil's :class:`render.design.Winding`, if it has one
    """
    where = _loc(source, table)
    if winding is None:
        g = read_table(data, GEOMETRY, source=source, table=table)
        return CoilGeometry(**g, where=where)
    if not isinstance(data, dict):
        raise InputError(f"{where}: expected a table of keys, got {U.shown(data)}")
    if "turns" in data:
        raise InputError(f"{where}: turns given here and in the coil's winding table; give the turns in one place")
    extra = [k for k in data if k != "window_width"]
    if extra:
        raise InputError(f"{where}: {', '.join(extra)} given with a winding table; with a winding, the geometry takes only window_width (the winding gives turns, height, depth and mean_turn)")
    if "window_width" not in data:
        raise InputError(f'{where}: missing window_width (the bobbin\'s opening along the string); the winding gives the rest, e.g. window_width = "3mm"')
    ww = read_value(data["window_width"], GEOMETRY["window_width"], source=source, table=table, key="window_width")
    return geometry_from_winding(turns=winding.turns, mean_turn=winding.mean_turn, height=winding.height, depth=winding.depth, window_width=ww, where=where)


def _vector(raw: Any, *, kind, where: str, limit: float) -> tuple:
    if not isinstance(raw, list) or len(raw) != 3:
        raise InputError(f"{where}={U.shown(raw)}: expected three values [x, y, z]")
    out = []
    for x in raw:
        if isinstance(x, bool):
            raise InputError(f"{where}={U.shown(raw)}: expected three values [x, y, z]")
        try:
            v = U.parse_quantity(x, kind)
        except U.QuantityError as exc:
            raise InputError(f"{where}={U.shown(raw)}: {exc}") from None
        if abs(v) > limit:
            raise InputError(f"{where}={U.shown(raw)}: each value must be within ±{limit:g}")
        out.append(v)
    return tuple(out)


def read_sources(items: Any, *, source: str, n_harmonics: int) -> tuple:
    """The ``[[hum.source]]`` array of tables as dipole and uniform sources.

    n_harmonics : length of the rig's ``[hum]`` profile (a source's own
        ``harmonics`` must match it)
    """
    if not isinstance(items, list) or not items or not all(isinstance(t, dict) for t in items):
        raise InputError(f"{_loc(source, 'hum')} source: expected one or more [[hum.source]] tables")
    if len(items) > MAX_SOURCES:
        raise InputError(f"{_loc(source, 'hum')} source: {len(items)} [[hum.source]] tables; {too_many_sources()}")
    out: list[DipoleSource | UniformSource] = []
    for i, t in enumerate(items):
        table = f"hum.source {i + 1}"
        where = _loc(source, table)
        kind = t.get("kind")
        if kind not in ("dipole", "uniform"):
            raise InputError(f'{where} kind={U.shown(kind)}: expected "dipole" or "uniform"')
        specs = DIPOLE if kind == "dipole" else UNIFORM
        allowed = list(specs) + ["kind", "axis"] + (["at"] if kind == "dipole" else [])
        for key in t:
            if key not in allowed:
                raise InputError(f"{where}: unknown key {U.shown(key)} for a {kind} source{did_you_mean(str(key), allowed)}")
        values = read_table({k: v for k, v in t.items() if k not in VECTORS}, specs, source=source, table=table)
        if "harmonics" in values and len(values["harmonics"]) != n_harmonics:
            raise InputError(f"{where} harmonics: {len(values['harmonics'])} values, but the [hum] profile has {n_harmonics}: give one per harmonic")
        if all_zero(values.get("harmonics")):
            raise zero_profile_error(where, values["harmonics"])
        strength = "moment" if kind == "dipole" else "field"
        if values[strength] == 0.0:
            example = "moment = 0.05" if kind == "dipole" else 'field = "0.1uT"'
            raise InputError(f"{where} {strength}=0: a source of no strength makes no hum; give its {strength} (e.g. {example}), or remove this [[hum.source]] table")
        axis = _vector(t.get("axis", [0, 0, 1]), kind=U.RATIO, where=f"{where} axis", limit=1e6)
        if kind == "dipole":
            if "at" not in t:
                raise InputError(f'{where}: missing required key \'at\' (the dipole\'s place, m); add e.g. at = ["0.5m", "0m", "0m"]')
            at = _vector(t["at"], kind=U.LENGTH, where=f"{where} at", limit=PLACE_M)
            out.append(DipoleSource(moment=values["moment"], at=at, axis=axis, harmonics=values.get("harmonics"), phase=values["phase"], where=where))
        else:
            out.append(UniformSource(field=values["field"], axis=axis, harmonics=values.get("harmonics"), phase=values["phase"], where=where))
    return tuple(out)
