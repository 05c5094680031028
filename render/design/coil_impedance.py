"""A coil's impedance from its winding and core, or from a measurement: the design-file keys.

A coil table gives its impedance in one of three ways:

- typed values: ``inductance``, ``resistance``, ``capacitance`` and a core
  loss (``eddy_resistance`` or ``eddy_coupling`` with ``eddy_corner``), or a
  ``[coil_x.winding]`` estimate, as before;
- **derived**: ``wire`` (an AWG number or a bare diameter) and optionally
  ``wire_outer`` (the insulated diameter) with ``[coil_x.geometry]``. R_dc,
  the air-core inductance (Neumann sum) and the winding capacitance (orderly
  layers) come from :func:`render.impedance.coil_model.derive_coil`; with a
  ``[construction]``, its steel and magnets raise the inductance as the
  construction's own field solve gives (:mod:`render.impedance.construction_core`)
  and add their eddy-current loss, realised as a fitted RL ladder. Without
  one the core is air;
- a **typed ladder**: ``resistance``, ``capacitance`` and a
  ``[coil_x.ladder]`` table (``series_inductance``, ``inductances``,
  ``resistances``), as ``render coil fit`` writes it;
- **measured**: ``measured = "path/to/file.csv"`` (relative to the design
  file): |Z| and phase from an LCR meter or impedance analyser, fitted with
  :func:`render.impedance.measured.fit_measurement`. The file's SHA-256 is
  kept with the coil and so goes into every render's JSON. ``capacitance``
  beside ``measured`` holds the winding capacitance at that value instead of
  fitting it (for a sweep that stops too far below the self-resonance).

The derived and measured coils carry their ladder (``Coil.ladder``); the
engine, the nonlinear loop, the SPICE netlist and the noise model take it in
place of the inductance and its lumped core loss. ``inductance`` is then the
ladder's value at DC.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from .. import units as U
from ..errors import InputError
from ..validate import Field, read_table, where

WIRE_OUTER_RATIO = 1.127  # insulated / bare diameter: heavy-build enamel on AWG 42 (0.071 / 0.063 mm; from memory)
TYPED = ("inductance", "resistance", "capacitance", "eddy_resistance", "eddy_coupling", "eddy_corner")
PLACEHOLDER = {"inductance": 1.0, "resistance": 1e3, "capacitance": 1e-10}  # replaced by resolve()
FIT_VERSION = 5  # bump when the measured fit's numbers change, so cached fits are recomputed
LADDER_VERSION = 2  # likewise for the derived coil's ladder fit (render.impedance.ladder.fit_ladder)
CORE_VERSION = 2  # bump when the cached core parts change (their rises, or their names: poles numbered from the treble side since 2)


def _wire(raw: Any, loc: str):
    from .schema import read_wire

    return read_wire(raw, loc)


def _path(raw: Any, loc: str) -> str:
    if not isinstance(raw, str) or not raw.strip():
        raise InputError(f'{loc}={U.shown(raw)}: expected the measurement file\'s path, relative to the design file, e.g. measured = "coils/my-coil.csv"')
    return raw


KEYS = {
    "wire": Field(_wire, doc='derived coil: AWG gauge (e.g. 42) or bare copper diameter ("0.0635mm"); needs [coil_x.geometry]'),
    "wire_outer": Field(U.LENGTH, lo=5e-6, hi=3e-3, lo_open=False, doc="derived coil: the wire's insulated diameter (default 1.127 × bare)"),
    "measured": Field(_path, doc="a measured coil: CSV of frequency, |Z| and phase, relative to the design file"),
}


@dataclass(frozen=True)
class CoilSpec:
    """How a coil's impedance is to be found (what :func:`split_coil` read)."""

    kind: str  # "derived", "measured" or "ladder"
    wire: tuple | None = None  # ("awg", n) or ("diameter", m)
    wire_outer: float | None = None
    measured: str | None = None
    hold_capacitance: bool = False  # measured: the table's capacitance held in the fit
    hold_resistance: bool = False  # measured: the table's resistance (an ohmmeter's R_dc) held in the fit
    ladder: Any = None  # a typed ladder (render.impedance.ladder.Ladder)


@dataclass(frozen=True)
class CorePartShare:
    """One core part's share in a derived coil: DC rise and fill (eq. (2) of :mod:`render.impedance.eddy`)."""

    name: str
    material: str
    rise_h: float
    fill: float


@dataclass(frozen=True)
class DerivedImpedance:
    """What a derived coil's impedance came from."""

    kind = "derived"
    wire_diameter_m: float
    wire_outer_diameter_m: float
    wire_length_m: float
    air_inductance_h: float
    core: str  # "construction" or "air"
    parts: tuple
    ladder_error_db: float
    ladder_error_deg: float
    layers: int
    ladder_error_loss: float | None = None  # largest |ΔRe/Re| of the ladder's loss over 20 Hz–20 kHz; None: below the fit tolerance
    ladder_error_loss_reason: str = ""  # why ladder_error_loss is None ("loss below the fit tolerance (…)"), or ""


@dataclass(frozen=True)
class MeasuredImpedance:
    """The measurement a coil was fitted to, and how well it fits."""

    kind = "measured"
    file: str  # as the design gives it
    path: str  # as read
    sha256: str
    points: int
    band_hz: tuple
    max_residual_db: float
    max_residual_deg: float
    rms_residual_db: float
    rms_residual_deg: float
    capacitance_given: bool = False  # held at the design's capacitance, not fitted
    capacitance_doubt: str = ""  # why the sweep does not determine C (render.impedance.measured), or ""
    resistance_given: bool = False  # R_dc held at the design's resistance, not fitted
    dc_doubt: str = ""  # why the sweep does not determine R_dc or L at DC, its fix included (MeasuredCoil.dc_doubt), or ""
    self_resonance_doubt: str = ""  # why no self-resonance is given (MeasuredCoil.self_resonance_doubt), or ""
    band_doubt: str = ""  # why the top of the band is extrapolated: the sweep ends below 20 kHz (MeasuredCoil.band_doubt), or ""


def _inductances(raw: Any, loc: str, kind) -> tuple:
    if not isinstance(raw, list) or len(raw) > 16:
        raise InputError(f'{loc}={U.shown(raw)}: expected a list of up to 16 values, one per section, e.g. ["598mH", "238mH"]')
    out = []
    for i, x in enumerate(raw):
        try:
            v = U.parse_quantity(x, kind)
        except U.QuantityError as exc:
            raise InputError(f"{loc} (entry {i + 1})={U.shown(x)}: {exc}") from None
        if not (math.isfinite(v) and v > 0):
            raise InputError(f"{loc} (entry {i + 1})={U.shown(x)}: must be above 0")
        out.append(v)
    return tuple(out)


LADDER = {
    "series_inductance": Field(U.INDUCTANCE, True, lo=0.0, hi=100.0, lo_open=False, doc="L0, in series with the sections"),
    "inductances": Field(lambda raw, loc: _inductances(raw, loc, U.INDUCTANCE), default=(), doc="each section's L_k"),
    "resistances": Field(lambda raw, loc: _inductances(raw, loc, U.RESISTANCE), default=(), doc="each section's R_k, in parallel with its L_k"),
}


def _split_ladder(data: dict, *, source: str, table: str):
    from ..impedance.ladder import Ladder

    loc = where(source, table)
    rest = {k: v for k, v in data.items() if k != "ladder"}
    clash = [k for k in ("inductance", "eddy_resistance", "eddy_coupling", "eddy_corner", "winding", *KEYS) if k in rest]
    if clash:
        raise InputError(f"{loc}: {', '.join(clash)} given as well as [{table}.ladder]; the ladder is the inductance with its core loss (inductance is its DC value): remove {', '.join(clash)}")
    t = read_table(data["ladder"], LADDER, source=source, table=f"{table}.ladder")
    try:
        lad = Ladder(t["series_inductance"], t["inductances"], t["resistances"])
    except InputError as exc:
        raise InputError(f"{where(source, table + '.ladder')}: {exc}") from None
    if not lad.dc_inductance > 0:
        raise InputError(f"{where(source, table + '.ladder')}: the ladder has no inductance; give series_inductance or sections")
    return {**rest, "inductance": lad.dc_inductance}, CoilSpec("ladder", ladder=lad)


def split_coil(data: Any, *, source: str, table: str) -> tuple[Any, CoilSpec | None]:
    """Take ``wire``, ``wire_outer``, ``measured`` and ``[coil_x.ladder]`` out of a coil table.

    Returns the table as the coil reader expects it (placeholders for the
    values to be derived) and the spec, or the table unchanged and None.
    """
    if isinstance(data, dict) and "ladder" in data:
        return _split_ladder(data, source=source, table=table)
    if not isinstance(data, dict) or not any(k in data for k in KEYS):
        return data, None
    given = {k: data[k] for k in KEYS if k in data}
    rest = {k: v for k, v in data.items() if k not in KEYS}
    spec = read_table(given, KEYS, source=source, table=table)
    loc = where(source, table)
    if "measured" in spec and ("wire" in spec or "wire_outer" in spec):
        raise InputError(f"{loc}: measured and wire both given; the coil comes either from a measurement or from its geometry and wire: remove one")
    if "wire_outer" in spec and "wire" not in spec:
        raise InputError(f"{loc}: wire_outer given without wire; add wire (e.g. wire = 42) or remove wire_outer")
    how = "measured" if "measured" in spec else "wire"
    typed = [k for k in TYPED if k in rest and not (how == "measured" and k in ("capacitance", "resistance"))]
    if typed:
        what = "from the measurement" if how == "measured" else f"from [{table}.geometry] and wire"
        raise InputError(f"{loc}: {', '.join(typed)} given as well as {how}; the coil's impedance comes {what}: remove {', '.join(typed)}, or remove {how} to type the values")
    if "winding" in rest:
        raise InputError(f"{loc}: [{table}.winding] given as well as {how}; give one of them (the winding's values are rough estimates)")
    if how == "wire" and "geometry" not in rest:
        raise InputError(f"{loc}: wire needs [{table}.geometry] (turns, length, width, window_length, window_width, height) to derive the coil; add it, or type inductance, resistance and capacitance")
    if how == "wire":
        outer = spec.get("wire_outer")
        out = CoilSpec("derived", wire=spec["wire"], wire_outer=outer)
    else:
        out = CoilSpec("measured", measured=spec["measured"], hold_capacitance="capacitance" in rest, hold_resistance="resistance" in rest)
    return {**rest, **{k: v for k, v in PLACEHOLDER.items() if k not in rest}}, out


# --- resolving ------------------------------------------------------------------------


def _bare(wire) -> float:
    from ..circuit.winding import awg_diameter

    kind, value = wire
    return awg_diameter(value) if kind == "awg" else value


def _rises(build, position_a: float, position_b: float):
    """Eq. (1) of :mod:`render.impedance.construction_core` per coil, cached in memory and on disk."""
    return _rises_cached(build, float(position_a), float(position_b))


@functools.lru_cache(maxsize=16)
def _rises_cached(build, position_a, position_b):
    from ..impedance.construction_core import VERSION, PartRise, part_rises
    from ..io import cache
    from ..magnetics.sensing import settings

    c = build.construction
    key = c.digest(build.geometry_a, build.geometry_b, position_a, position_b, "coil-core", VERSION, CORE_VERSION, settings())
    stored = cache.load("coil-core", key)
    names = ("coil_a", "coil_b")
    if stored is not None:
        try:
            return {
                n: tuple(
                    PartRise(str(nm), float(r), str(sh), float(sz), tuple(float(v) for v in dm), bool(mg))
                    for nm, r, sh, sz, dm, mg in zip(stored[f"{n}_name"], stored[f"{n}_rise"], stored[f"{n}_shape"], stored[f"{n}_size"], stored[f"{n}_dims"], stored[f"{n}_magnet"])
                )
                for n in names
            }
        except (KeyError, ValueError, TypeError):
            pass
    from .construction import _sensing

    # the construction's sensing solve (made, and cached, when the design loads) holds the cells' answer to each coil's field
    result = part_rises(c, build.geometry_a, build.geometry_b, position_a=position_a, position_b=position_b, solved=_sensing(build, position_a, position_b).steel)
    arrays = {}
    for n in names:
        items = result[n]
        arrays[f"{n}_name"] = np.array([p.name for p in items], dtype=str)
        arrays[f"{n}_rise"] = np.array([p.rise for p in items], float)
        arrays[f"{n}_shape"] = np.array([p.shape for p in items], dtype=str)
        arrays[f"{n}_size"] = np.array([p.size for p in items], float)
        arrays[f"{n}_dims"] = np.array([p.dims for p in items], float).reshape(len(items), 3)
        arrays[f"{n}_magnet"] = np.array([p.magnet for p in items], bool)
    cache.store("coil-core", key, arrays)
    return result


@functools.lru_cache(maxsize=32)
def _derive(winding, bare: float, outer: float, parts):
    from ..impedance.coil_model import derive_coil

    return derive_coil(winding, bare_diameter=bare, outer_diameter=outer, parts=parts, fit=ladder_fit_cached)


def _ladder_arrays(lad) -> dict:
    """A :class:`render.impedance.ladder.Ladder` as the cache's arrays (``l0``, ``lk``, ``rk``)."""
    return {"l0": np.array(lad.series_inductance), "lk": np.array(lad.inductances, float), "rk": np.array(lad.resistances, float)}


def _ladder_from(stored: dict):
    """The :class:`render.impedance.ladder.Ladder` kept by :func:`_ladder_arrays`."""
    from ..impedance.ladder import Ladder

    return Ladder(float(stored["l0"]), tuple(float(v) for v in stored["lk"]), tuple(float(v) for v in stored["rk"]))


def ladder_fit_cached(frequency_hz: np.ndarray, impedance: np.ndarray):
    """:func:`render.impedance.ladder.fit_ladder` of the impedance, kept on disk by the hash of its input
    (:mod:`render.io.cache`): the fit takes about 60 ms a coil, a design's every load needs it."""
    from ..impedance.ladder import LadderFit, fit_ladder
    from ..io import cache
    from ..io.hashing import sha256_bytes

    f = np.ascontiguousarray(frequency_hz, "<f8")
    z = np.ascontiguousarray(impedance, "<c16")
    key = sha256_bytes(f"ladder-v{LADDER_VERSION}-{f.size}".encode() + f.tobytes() + z.tobytes())
    stored = cache.load("coil-ladder", key)
    if stored is not None:
        try:
            band = stored["band"]
            loss = float(stored["error_loss"])
            return LadderFit(
                _ladder_from(stored), float(stored["error_db"]), float(stored["error_deg"]), (float(band[0]), float(band[1])), None if np.isnan(loss) else loss, float(stored["loss_angle"])
            )
        except (KeyError, ValueError, TypeError, IndexError, InputError):
            pass
    fit = fit_ladder(f, z)
    errors = {"error_db": np.array(fit.error_db), "error_deg": np.array(fit.error_deg), "error_loss": np.array(np.nan if fit.error_loss is None else fit.error_loss)}
    cache.store("coil-ladder", key, _ladder_arrays(fit.ladder) | errors | {"loss_angle": np.array(fit.loss_angle_deg), "band": np.array(fit.band_hz, float)})
    return fit


def _derived(coil, spec: CoilSpec, design, name: str):
    from ..impedance.construction_core import core_parts, magnet_material, steel_material
    from ..impedance.inductance import winding_inductance

    g = coil.geometry
    winding = g
    bare = _bare(spec.wire)
    outer = spec.wire_outer if spec.wire_outer is not None else bare * WIRE_OUTER_RATIO
    if outer <= bare:
        raise InputError(f"{where(design.source, name, 'wire_outer')}: {outer * 1e3:.4g} mm is not above the bare wire's {bare * 1e3:.4g} mm; give the insulated diameter")
    parts: tuple = ()
    shares: tuple = ()
    build = design.construction
    if build is not None:
        c = build.construction
        rises = _rises(build, design.coil_a.position, design.coil_b.position)[name]
        l_air = winding_inductance(winding)
        steel, magnet = steel_material(c.steel_permeability), magnet_material(c.grade, c.magnet_permeability)
        pairs = [(r, core_parts((r,), air_inductance=l_air, steel=steel, magnet=magnet)) for r in rises]
        parts = tuple(p for _, ps in pairs for p in ps)
        shares = tuple(CorePartShare(r.name, (magnet if r.magnet else steel).name, float(r.rise), float(ps[0].fill) if ps else 0.0) for r, ps in pairs)
    derived = _derive(winding, bare, outer, parts)
    record = DerivedImpedance(
        wire_diameter_m=float(bare),
        wire_outer_diameter_m=float(outer),
        wire_length_m=float(derived.wire_length),
        air_inductance_h=float(derived.air_inductance),
        core="construction" if build is not None else "air",
        parts=shares,
        ladder_error_db=float(derived.ladder_fit.error_db),
        ladder_error_deg=float(derived.ladder_fit.error_deg),
        layers=int(derived.capacitance.layers),
        ladder_error_loss=derived.ladder_fit.error_loss,
        ladder_error_loss_reason=derived.ladder_fit.loss_reason() or "",
    )
    lad = derived.ladder_fit.ladder
    return replace(coil, inductance=lad.dc_inductance, resistance=float(derived.resistance), capacitance=float(derived.capacitance.capacitance), ladder=lad, impedance_from=record)


def measurement_path(file: str, source: str) -> Path:
    """Where a design's ``measured`` file is: relative to the design file's folder."""
    p = Path(file)
    if p.is_absolute() or not source or source.startswith("<"):
        return p
    return Path(source).parent / p


def read_and_fit(path: Path, *, capacitance: float | None = None, resistance: float | None = None):
    """(Measurement, MeasuredCoil) of a measurement file, the fit cached by the file's hash; ``capacitance`` (F) holds C, ``resistance`` (Ω) R_dc."""
    from ..io.measurement import read_measurement

    m = read_measurement(path)
    return m, _fit_cached(str(path), m.sha256, None if capacitance is None else float(capacitance), None if resistance is None else float(resistance))


@functools.lru_cache(maxsize=32)
def _fit_cached(path: str, sha: str, capacitance: float | None = None, resistance: float | None = None):
    """The fit of the file at ``path`` whose bytes hash to ``sha`` (in memory, and on disk by the hash and the held C and R_dc)."""
    from ..impedance.measured import MeasuredCoil, fit_measurement
    from ..io import cache
    from ..io.measurement import read_measurement

    key = f"{sha}-v{FIT_VERSION}" + ("" if capacitance is None else f"-c{capacitance!r}") + ("" if resistance is None else f"-r{resistance!r}")
    stored = cache.load("coil-fit", key)
    if stored is not None:
        try:
            return MeasuredCoil(
                float(stored["r"]),
                float(stored["c"]),
                _ladder_from(stored),
                np.asarray(stored["f"], float),
                np.asarray(stored["db"], float),
                np.asarray(stored["deg"], float),
                float(stored["c_sd"]),
                bool(stored["c_given"]),
                float(stored["r_sd"]),
                float(stored["l_sd"]),
                bool(stored["r_given"]),
                float(stored["low_deg"]),
            )
        except (KeyError, ValueError, TypeError, InputError):
            pass
    m = read_measurement(path)
    fit = fit_measurement(m.frequency_hz, m.impedance, capacitance=capacitance, resistance=resistance)
    cache.store(
        "coil-fit",
        key,
        _ladder_arrays(fit.ladder)
        | {
            "r": np.array(fit.resistance),
            "c": np.array(fit.capacitance),
            "f": fit.frequency_hz,
            "db": fit.residual_db,
            "deg": fit.residual_deg,
            "c_sd": np.array(fit.capacitance_rel_sd),
            "c_given": np.array(fit.capacitance_given),
            "r_sd": np.array(fit.resistance_rel_sd),
            "l_sd": np.array(fit.inductance_rel_sd),
            "r_given": np.array(fit.resistance_given),
            "low_deg": np.array(fit.lowest_phase_deg),
        },
    )
    return fit


def _measured(coil, spec: CoilSpec, design, name: str):
    from .schema import COIL

    assert spec.measured is not None  # a "measured" spec always has its file
    path = measurement_path(spec.measured, design.source)
    if not path.is_file():
        raise InputError(f"{where(design.source, name, 'measured')}={U.shown(spec.measured)}: no such file ({path}); the path is relative to the design file's folder")
    m, fit = read_and_fit(path, capacitance=coil.capacitance if spec.hold_capacitance else None, resistance=coil.resistance if spec.hold_resistance else None)
    record = MeasuredImpedance(
        file=spec.measured,
        path=str(path),
        sha256=m.sha256,
        points=int(m.frequency_hz.size),
        band_hz=(float(m.frequency_hz[0]), float(m.frequency_hz[-1])),
        max_residual_db=fit.max_residual_db,
        max_residual_deg=fit.max_residual_deg,
        rms_residual_db=fit.rms_residual_db,
        rms_residual_deg=fit.rms_residual_deg,
        capacitance_given=fit.capacitance_given,
        capacitance_doubt=fit.capacitance_doubt() or "",
        resistance_given=fit.resistance_given,
        dc_doubt=fit.dc_doubt() or "",
        self_resonance_doubt=fit.self_resonance_doubt(COIL["capacitance"].lo) or "",
        band_doubt=fit.band_doubt() or "",
    )
    return replace(coil, inductance=fit.inductance, resistance=float(fit.resistance), capacitance=float(fit.capacitance), ladder=fit.ladder, impedance_from=record)


def resolve(design, specs: dict):
    """The design with each coil's impedance derived or fitted as its spec says (unchanged without specs)."""
    if not any(specs.values()):
        return design
    coils = {}
    for name in ("coil_a", "coil_b"):
        spec = specs.get(name)
        if spec is None:
            continue
        coil = getattr(design, name)
        if spec.kind == "ladder":
            coils[name] = replace(coil, inductance=spec.ladder.dc_inductance, ladder=spec.ladder)
        else:
            coils[name] = _derived(coil, spec, design, name) if spec.kind == "derived" else _measured(coil, spec, design, name)
            _check_limits(coils[name], spec, design.source, name)
    return replace(design, **coils)


def _check_limits(coil, spec: CoilSpec, source: str, name: str) -> None:
    """Refuse a fitted or derived coil whose R, L or C lies outside the plausible range a typed value must meet."""
    from ..validate import outside
    from .schema import COIL

    for key in ("resistance", "inductance", "capacitance"):
        value = float(getattr(coil, key))
        rng = outside(value, COIL[key])
        if not rng:
            continue
        shown = U.format_si(value, COIL[key].kind.unit)  # type: ignore[union-attr]
        if spec.kind == "measured":
            raise InputError(
                f"{where(source, name, 'measured')}={U.shown(spec.measured)}: the fitted {key} {shown}: {rng}, as a typed {key} must be;"
                " check the file's units (|Z| in kΩ read as Ω, a frequency in kHz read as Hz) and that it is a sweep of this coil"
            )
        raise InputError(f"{where(source, name, 'wire')}: the {key} derived from the wire and [{name}.geometry], {shown}: {rng}, as a typed {key} must be; check the wire, turns and sizes")


def read_files(design) -> dict[Path, str]:
    """The files a loaded design read besides its own (each measured coil's, as read) and the SHA-256 of the bytes read."""
    out = {}
    for name in ("coil_a", "coil_b"):
        rec = getattr(getattr(design, name), "impedance_from", None)
        if isinstance(rec, MeasuredImpedance):
            out[Path(rec.path)] = rec.sha256
    return out


def measured_files(design) -> list[dict]:
    """``[{"coil", "file", "sha256"}]`` of the design's measured coils, for a render's record."""
    out = []
    for name in ("coil_a", "coil_b"):
        rec = getattr(getattr(design, name), "impedance_from", None)
        if isinstance(rec, MeasuredImpedance):
            out.append({"coil": name, "file": rec.file, "sha256": rec.sha256})
    return out
