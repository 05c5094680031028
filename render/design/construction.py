"""A design's ``[construction]`` table: reading it, and what it derives in the coils.

With ``[construction]`` given, each coil needs ``[coil_x.geometry]`` (its
turns in space, which also derives its ``turns_area``), and the coils'
``sensitivity``, ``aperture`` and ``signal_polarity`` are derived from the field solve
(:func:`render.magnetics.sensing.pickup_sensing`), not typed:

- ``signal_polarity`` is the sign of the coil's EMF at its input,
  ``hum_polarity``·dΦ/dt, for a string moving up (the wiring stays
  ``hum_polarity``);
- ``sensitivity`` is the mean over the strings of |dΦ/dz| (V·s/m): the
  EMF per m/s of a string of average output moving up as a whole;
- ``aperture`` is the RMS width of the vertical sensing function times √12
  (a rectangular window of that width has the same second moment), a
  figure for the reader; the dry synthesis uses the sensing function itself;
- ``turns_area`` (the one-number room's flux linkage per tesla along z)
  includes the steel's share (:mod:`render.magnetics.coil_steel`), as every
  hum source's coupling does.

The field solve takes seconds; its result is kept in memory and on disk
(:mod:`render.io.cache`), keyed by a hash of the construction, the coils'
geometries and positions, and the model's version.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from .. import units as U
from ..errors import InputError
from ..magnetics.coil import CoilGeometry
from ..magnetics.construction import KINDS, STEEL_PERMEABILITY, STRING_PERMEABILITY, STRING_SATURATION, WRAP_SHARE, Construction, Strings, magnet_figures
from ..magnetics.magnets import GRADES
from ..validate import Field, read_table, where, with_example

MAX_STRINGS = 12
DERIVED = ("sensitivity", "aperture", "signal_polarity")


def _choice(choices):
    def read(raw: Any, loc: str) -> str:
        if raw not in choices:
            from ..validate import close_name

            raise InputError(f"{loc}={U.shown(raw)}: expected one of {', '.join(repr(c) for c in choices)}{close_name(str(raw), choices)}")
        return raw

    return with_example(read, f'"{choices[0]}"')


def _mm(v: float) -> str:
    return f'"{float(f"{v * 1e3:.2g}"):g}mm"'


def _length(raw: Any, loc: str, lo: float, hi: float) -> float:
    try:
        v = U.parse_quantity(raw, U.LENGTH)
    except U.QuantityError as exc:
        raise InputError(f"{loc}={U.shown(raw)}: {exc}") from None
    if not lo <= v <= hi:
        mm = isinstance(raw, (int, float)) and not isinstance(raw, bool) and lo <= v * 1e-3 <= hi
        hint = f"; {U.metres_hint(v)}" if mm else ""
        raise InputError(f"{loc}={U.shown(raw)}: expected a length from {U.format_si(lo, 'm')} to {U.format_si(hi, 'm')}{hint}")
    return v


def _lengths(lo: float, hi: float, *, single: bool = False):
    """A list of lengths (one per string, lowest first), or one length for all when ``single``."""

    def read(raw: Any, loc: str):
        if single and not isinstance(raw, list):
            return _length(raw, loc, lo, hi)
        if not isinstance(raw, list) or not 1 <= len(raw) <= MAX_STRINGS:
            raise InputError(f'{loc}={U.shown(raw)}: expected a list of 1 to {MAX_STRINGS} lengths, lowest string first, e.g. ["0.46mm", "0.43mm"]')
        return tuple(_length(x, f"{loc} (entry {i + 1})", lo, hi) for i, x in enumerate(raw))

    mid = math.sqrt(lo * hi)  # a round length near the middle of the range; a list: two strings, the lower one thicker
    return with_example(read, _mm(mid) if single else f"[{_mm(mid * 1.3)}, {_mm(mid / 1.3)}]")


def _count(raw: Any, loc: str) -> int:
    if isinstance(raw, bool) or not isinstance(raw, int) or not 1 <= raw <= MAX_STRINGS:
        raise InputError(f"{loc}={U.shown(raw)}: expected a whole number of poles from 1 to {MAX_STRINGS}")
    return raw


with_example(_count, "6")


PART: dict[str, Any] = dict(lo=1e-4, hi=0.1, lo_open=False)  # 0.1 mm .. 10 cm
CONSTRUCTION = {
    "kind": Field(_choice(KINDS), True, doc='"magnet-blades", "steel-blades" or "steel-poles"'),
    "magnet_grade": Field(_choice(tuple(GRADES)), doc=f"a grade with typical remanence: {', '.join(GRADES)}"),
    "remanence": Field(U.FLUX_DENSITY, lo=0.01, hi=2.0, lo_open=False, doc="the magnets' remanence (overrides the grade's)"),
    "magnet_permeability": Field(U.RATIO, lo=1.0, hi=20.0, lo_open=False, doc="the magnets' recoil permeability (default the grade's, else 1.05)"),
    "magnet_width": Field(U.LENGTH, True, doc="magnet size along the string (x)", **PART),
    "magnet_length": Field(U.LENGTH, True, doc="magnet size across the strings (y)", **PART),
    "magnet_height": Field(U.LENGTH, True, doc="magnet size along z", **PART),
    "steel_width": Field(U.LENGTH, doc="blade thickness along the string, or a screw's diameter", **PART),
    "steel_length": Field(U.LENGTH, doc="blade length across the strings", **PART),
    "steel_height": Field(U.LENGTH, doc="blade or screw height along z", **PART),
    "poles": Field(_count, doc="screws per coil (default: one per string)"),
    "pole_spacing": Field(U.LENGTH, lo=2e-3, hi=0.03, lo_open=False, doc="screws' spacing, centre to centre (default: string_spacing)"),
    "steel_permeability": Field(U.RATIO, default=STEEL_PERMEABILITY, lo=1.0, hi=1e5, lo_open=False, doc="relative permeability of the blades and screws"),
    "top": Field(U.LENGTH, default=0.0, lo=-0.01, hi=0.01, lo_open=False, doc="z of the pole pieces' top faces (0: the coils' top faces)"),
    "string_cores": Field(_lengths(5e-5, 2e-3), True, doc="magnetic core diameters, lowest string first"),
    "string_diameters": Field(_lengths(5e-5, 3e-3), doc="outer diameters, lowest first (default: the cores; plain strings)"),
    "string_spacing": Field(U.LENGTH, True, lo=3e-3, hi=0.03, lo_open=False, doc="centre to centre at the pickup"),
    "string_height": Field(_lengths(2e-4, 0.02, single=True), True, doc="gap from the coils' top faces to each string's underside at rest: one value or a list"),
    "wrap_share": Field(U.RATIO, default=WRAP_SHARE, lo=0.0, hi=1.0, lo_open=False, doc="share of a wound string's wrap counted as magnetic"),
    "string_permeability": Field(
        U.RATIO,
        default=STRING_PERMEABILITY,
        lo=1.0,
        hi=1e4,  # soft irons reach some thousands (from memory); the strings' nonlinear solve is checked to 1e4 (tests)
        lo_open=True,
        doc="initial relative permeability of the strings' steel (above 1: a string of μr = 1 is not magnetised, and a magnetic pickup does not sense it)",
    ),
    "string_saturation": Field(
        U.FLUX_DENSITY,
        default=STRING_SATURATION,
        lo=0.1,
        hi=2.5,
        lo_open=False,
        doc="saturation polarisation µ0·Ms of the strings' steel, where its magnetisation along the string levels off",
    ),
}


@dataclass(frozen=True)
class PickupBuild:
    """A design's construction and its coils' geometries (what the field solve needs)."""

    construction: Construction
    geometry_a: CoilGeometry
    geometry_b: CoilGeometry


def read_construction(data: Any, *, source: str) -> Construction:
    """The ``[construction]`` table as a :class:`~render.magnetics.construction.Construction`."""
    t = read_table(data, CONSTRUCTION, source=source, table="construction")
    loc = where(source, "construction")
    cores = t["string_cores"]
    n = len(cores)
    outers = t.get("string_diameters", cores)
    if len(outers) != n:
        raise InputError(f"{loc} string_diameters: {len(outers)} values for {n} string_cores; give one per string, lowest first")
    for i, (c, o) in enumerate(zip(cores, outers)):
        if o < c:
            raise InputError(f"{loc} string_diameters: entry {i + 1} ({o * 1e3:g} mm) is smaller than its core ({c * 1e3:g} mm)")
    heights = t["string_height"]
    heights = (heights,) * n if isinstance(heights, float) else heights
    if len(heights) != n:
        raise InputError(f"{loc} string_height: {len(heights)} values for {n} strings; give one, or one per string")
    try:
        br, mu = magnet_figures(t.get("magnet_grade"), t.get("remanence"), t.get("magnet_permeability"))
    except InputError as exc:
        raise InputError(f"{source}: {exc}") from None
    kind = t["kind"]
    steel_keys = [k for k in ("steel_width", "steel_length", "steel_height") if k in t]
    steel = None
    if kind == "magnet-blades":
        if steel_keys or "poles" in t or "pole_spacing" in t:
            extra = steel_keys + [k for k in ("poles", "pole_spacing") if k in t]
            raise InputError(f"{loc}: {', '.join(extra)} given, but magnet-blades has no steel pieces; leave them out")
    else:
        need = ["steel_width", "steel_height"] + (["steel_length"] if kind == "steel-blades" else [])
        missing = [k for k in need if k not in t]
        if missing:
            raise InputError(f'{loc}: kind="{kind}" needs {", ".join(missing)} (the steel\'s size)')
        if kind == "steel-poles" and "steel_length" in t:
            raise InputError(f"{loc}: steel_length given for steel-poles; a screw's size is its diameter (steel_width) and steel_height")
        w = t["steel_width"]
        steel = (w, t.get("steel_length", w), t["steel_height"])
    if kind != "steel-poles" and ("poles" in t or "pole_spacing" in t):
        raise InputError(f'{loc}: poles and pole_spacing go with kind="steel-poles"')
    strings = Strings(
        cores=cores, outers=tuple(outers), spacing=t["string_spacing"], heights=tuple(heights), wrap_share=t["wrap_share"], permeability=t["string_permeability"], saturation=t["string_saturation"]
    )
    try:
        return Construction(
            kind=kind,
            magnet=(t["magnet_width"], t["magnet_length"], t["magnet_height"]),
            remanence=br,
            magnet_permeability=mu,
            grade=t.get("magnet_grade"),
            steel=steel,
            poles=t.get("poles", n) if kind == "steel-poles" else 0,
            pole_spacing=t.get("pole_spacing", t["string_spacing"]) if kind == "steel-poles" else 0.0,
            steel_permeability=t["steel_permeability"],
            top=t["top"],
            strings=strings,
        )
    except InputError as exc:
        raise InputError(f"{source}: {exc}") from None


def split_tables(data: dict, *, source: str) -> tuple[dict, Construction | None]:
    """Take ``[construction]`` out of a design document, and check the coils' tables against it.

    Returns the document as the coil tables' reader expects it (the derived
    ``sensitivity`` filled with a placeholder, replaced by :func:`derive`) and
    the construction, or the document unchanged and None without one. Each
    coil needs its ``[coil_x.geometry]`` (read with the coil, as without a
    construction).
    """
    if not isinstance(data, dict) or "construction" not in data:
        return data, None
    construction = read_construction(data["construction"], source=source)
    out = {k: v for k, v in data.items() if k != "construction"}
    for name in ("coil_a", "coil_b"):
        coil = out.get(name)
        if not isinstance(coil, dict):
            return out, None  # the coil reader refuses it with its own message
        if "geometry" not in coil:
            raise InputError(f"{where(source, name)}: [construction] needs [{name}.geometry] (the coil's turns in space), e.g. turns, length, width, window_length, window_width, height")
        typed = [k for k in DERIVED if k in coil]
        if typed:
            raise InputError(
                f"{where(source, name)}: {', '.join(typed)} given, but with [construction] {'they are' if len(typed) > 1 else 'it is'} derived from the field solve; remove "
                + ("them" if len(typed) > 1 else "it")
            )
        out[name] = {**coil, "sensitivity": 1.0}  # a placeholder until derive()
    return out, construction


@functools.lru_cache(maxsize=16)
def _sensing(build: PickupBuild, position_a: float, position_b: float):
    from ..io import cache
    from ..magnetics.sensing import PickupSensing, pickup_sensing, settings

    key = build.construction.digest(build.geometry_a, build.geometry_b, position_a, position_b, 1.0, settings())
    stored = cache.load("construction", key)
    if stored is not None:
        try:
            return PickupSensing.from_arrays(stored)
        except (KeyError, ValueError, TypeError):
            pass
    result = pickup_sensing(build.construction, build.geometry_a, build.geometry_b, position_a=position_a, position_b=position_b)
    cache.store("construction", key, result.to_arrays())
    return result


def sensing(design):
    """The design's :class:`~render.magnetics.sensing.PickupSensing`, or None without a construction (cached)."""
    build = getattr(design, "construction", None)
    if build is None:
        return None
    return _sensing(build, float(design.coil_a.position), float(design.coil_b.position))


def steel_responses(design) -> tuple:
    """Each coil's :class:`~render.magnetics.coil_steel.SteelResponse` (its hum pickup with the steel), or (None, None) without a construction."""
    result = sensing(design)
    return (None, None) if result is None else result.steel


def derived_figures(result, hum_polarity: int, coil: str) -> dict:
    """sensitivity (V·s/m), signal_polarity and aperture (m) of one coil from its sensing."""
    strings = result.coil(coil)
    sz = np.array([s.sensitivity_z for s in strings])
    sign = hum_polarity * float(np.sign(sz.sum()) or 1.0)
    widths = []
    for s in strings:
        g = s.along_z * np.sign(s.sensitivity_z)
        w = np.clip(g, 0.0, None)
        if w.sum() > 0:
            mean = float((s.x * w).sum() / w.sum())
            widths.append(math.sqrt(12.0 * float(((s.x - mean) ** 2 * w).sum() / w.sum())))
    return {"sensitivity": float(np.abs(sz).mean()), "signal_polarity": int(sign), "aperture": float(np.mean(widths)) if widths else 0.0}


def derive(design, construction: Construction | None):
    """The design with its construction attached and the coils' derived figures in place (unchanged without one)."""
    if construction is None:
        return design
    build = PickupBuild(construction=construction, geometry_a=design.coil_a.geometry, geometry_b=design.coil_b.geometry)
    design = replace(design, construction=build)
    try:
        # refused where the solver is missing even when a cached solve exists, so that a design
        # behaves the same on every machine with the same packages
        from ..magnetics.steel import require_installed

        require_installed()
        from ..magnetics.coil import coil_centres

        construction.parts(*coil_centres(design.coil_a.position, design.coil_b.position), build.geometry_a, build.geometry_b)  # the fit checks, cached solve or not
        result = sensing(design)
    except InputError as exc:
        raise InputError(f"{design.source or design.name}: {exc}") from None
    except ArithmeticError as exc:  # the strings' nonlinear solve (render.magnetics.strings) found no answer
        raise InputError(f"{design.source or design.name}: [construction] {exc}; check string_permeability and string_saturation (steel strings: a few hundred and about 2 T)") from None
    coils = {}
    for name, steel in zip(("coil_a", "coil_b"), result.steel):
        c = getattr(design, name)
        # the one-number room's field is along z: its flux linkage per tesla is the z part of the turns-area vector, steel included
        coils[name] = replace(c, turns_area=float(c.geometry.turns_area + steel.turns_area[2]), **derived_figures(result, c.hum_polarity, name))
    return replace(design, **coils)


def pickup_for(design):
    """What a phrase's synthesis needs of a design's construction, for :func:`render.synthesize`'s ``pickup``.

    Parameters
    ----------
    design : Design
        A design (:func:`render.load_design`); with a ``[construction]`` its field is solved (or read from the
        cache) here.

    Returns
    -------
    render.dry.construction.Pickup or None
        The strings' sensing (two polarisations, per-string balance, the flux's nonlinearity) and each coil's
        gain; None for a design without a ``[construction]``, whose phrases are synthesised at its two
        sensing points instead.
    """
    result = sensing(design)
    if result is None:
        return None
    from ..dry.construction import Pickup

    st = design.construction.construction.strings
    a, b = design.coil_a, design.coil_b
    return Pickup(
        sensing=result,
        hum_polarity=(a.hum_polarity, b.hum_polarity),
        gain=(a.signal_polarity * a.sensitivity, b.signal_polarity * b.sensitivity),
        cores=tuple(st.cores),
        outers=tuple(st.outers),
    )
