"""Design and rig files: TOML in, frozen dataclasses out.

A design file describes one candidate voicing (two coils, their input
networks, the bias divider, the feedback, the output network and the
supply); a rig file describes what the pickup plays into (controls, cable,
amplifier) and the room it hums in. Every value is read against
:mod:`render.design.schema`; every refusal is one line.
"""

from __future__ import annotations

import functools
import os
from pathlib import Path
from typing import Any

from .. import units as U
from ..errors import InputError, PassiveGiven
from ..io.hashing import sha256_bytes
from ..io.toml import read_toml
from ..validate import TOP_KEYS, check_document, read_table, where
from .coil_impedance import resolve, split_coil
from .construction import derive, split_tables
from .model import Coil, Design, Feedback, Hum, InputNet, Output, Rig, RigFile, Supply, Winding
from .schema import COIL, COIL_WITH_GEOMETRY, DESIGN_TABLES, HUM, MAX_NAME_CHARS, REQUIRED_TABLES, RIG, WINDING


def _coil(d: dict, default_signal: int) -> Coil:
    d = dict(d)
    d.setdefault("signal_polarity", default_signal)
    return Coil(**d)


def read_winding(data: Any, *, source: str, table: str) -> Winding:
    """Read a [coil_x.winding] table and derive L and R from it (estimates)."""
    from ..circuit.winding import awg_diameter, from_winding

    w = read_table(data, WINDING, source=source, table=table)
    kind, value = w["wire"]
    dia = awg_diameter(value) if kind == "awg" else value
    L, R, length = from_winding(
        turns=w["turns"],
        diameter=dia,
        mean_turn=w["mean_turn"],
        height=w["height"],
        depth=w["depth"],
        core_factor=w["core_factor"],
        temperature_c=w["temperature"],
    )
    return Winding(
        turns=w["turns"],
        wire_diameter=dia,
        wire_awg=value if kind == "awg" else None,
        mean_turn=w["mean_turn"],
        height=w["height"],
        depth=w["depth"],
        core_factor=w["core_factor"],
        temperature=w["temperature"],
        wire_length=length,
        inductance=L,
        resistance=R,
    )


def _read_coil(data: Any, *, source: str, table: str) -> dict:
    """A coil table, with inductance and resistance given or derived from its winding, and its geometry if given."""
    geometry = None
    if isinstance(data, dict) and "geometry" in data:
        data = dict(data)
        geometry = data.pop("geometry")
    out = _read_coil_values(data, source=source, table=table, specs=COIL if geometry is None else COIL_WITH_GEOMETRY)
    if geometry is not None:
        from ..magnetics.schema import read_geometry

        g = read_geometry(geometry, source=source, table=f"{table}.geometry", winding=out.get("winding"))
        out["entered_turns_area"] = out.get("turns_area")
        out["turns_area"] = g.turns_area
        out["geometry"] = g
    return out


def _read_coil_values(data: Any, *, source: str, table: str, specs: dict) -> dict:
    if not isinstance(data, dict) or "winding" not in data:
        return read_table(data, specs, source=source, table=table)
    data = dict(data)
    winding = read_winding(data.pop("winding"), source=source, table=f"{table}.winding")
    both = [k for k in ("inductance", "resistance") if k in data]
    if both:
        raise InputError(f"{where(source, table)}: {' and '.join(both)} given as well as [{table}.winding]; give either the values or the winding, not both")
    data["inductance"], data["resistance"] = winding.inductance, winding.resistance
    try:
        out = read_table(data, specs, source=source, table=table)
    except InputError as exc:
        raise InputError(f"{exc} (derived from [{table}.winding]; check turns, wire and former)") from None
    out["winding"] = winding
    return out


def _read_hum(data: Any, *, source: str, table: str = "hum") -> Hum:
    """A [hum] table, with its [[hum.source]] tables when given (they are then the whole field)."""
    from ..magnetics.schema import all_zero, zero_profile_error

    if not isinstance(data, dict) or ("source" not in data and "sources" not in data):
        values = read_table(data, HUM, source=source, table=table)
        if all_zero(values["harmonics"]):
            raise zero_profile_error(where(source, table), values["harmonics"])
        return Hum(**values)
    if "sources" in data:
        raise InputError(f"{where(source, table)}: unknown key 'sources'; write each source as its own [[hum.source]] table")
    from ..magnetics.schema import read_sources

    data = dict(data)
    items = data.pop("source")
    if "field" in data:
        raise InputError(
            f"{where(source, table, 'field')}={U.shown(data['field'])} given as well as [[hum.source]]: with sources the field is theirs alone;"
            ' remove field, or add it as a source (kind = "uniform", axis = [0, 0, 1])'
        )
    values = read_table(data, HUM, source=source, table=table)
    if all_zero(values["harmonics"]):
        raise zero_profile_error(where(source, table), values["harmonics"])
    values["sources"] = read_sources(items, source=source, n_harmonics=len(values["harmonics"]))
    return Hum(**values)


# a phrase's own tables (render.dry.phrase), shown as written there, to name a phrase given where a design belongs
PHRASE_TABLES = {"note": "[[note]]", "chord": "[[chord]]", "instrument": "[instrument]", "playing": "[playing]"}


def parse_design(data: dict, *, source: str = "<design>", name: str | None = None, sha256: str = "", text: str = "", changes: tuple = ()) -> Design:
    """Build a :class:`Design` from parsed TOML; every error is one line.

    ``text`` is the TOML text ``data`` was parsed from and ``changes`` the :func:`render.with_values`
    changes made to the file at ``source`` (both kept on the design for its records).
    """
    if isinstance(data, dict) and "from" in data and ("aim" in data or "free" in data):  # render.analysis.fit's file, given where a design belongs
        raise InputError(f"{source}: an aim file for render fit (from, [aim], [free]), not a design; run render fit {source}, or give the design it starts from ({U.shown(data['from'])})")
    phrase_table = next((t for t in PHRASE_TABLES if isinstance(data, dict) and t in data), None)
    if phrase_table is not None and not any(t in data for t in REQUIRED_TABLES):
        raise InputError(
            f"{source}: this looks like a phrase file (it has a {PHRASE_TABLES[phrase_table]} table), not a design; give it as the dry signal (--dry; render.load_phrase from Python), and as the design a file with [coil_a] and [coil_b] tables"
        )
    check_document(data, source, list(DESIGN_TABLES) + list(TOP_KEYS))
    for t in REQUIRED_TABLES:
        if t not in data:
            raise InputError(f"{source}: missing table [{t}]; every design needs {', '.join('[' + x + ']' for x in REQUIRED_TABLES)}")
    data, construction = split_tables(data, source=source)
    data, impedance_specs = _split_coils(data, source=source)
    if "name" in data and (len(data["name"]) > MAX_NAME_CHARS or not data["name"].isprintable()):
        raise InputError(f"{source}: name={U.shown(data['name'])}: expected one line of at most {MAX_NAME_CHARS} printable characters (it heads every report); put the rest in notes")
    tables = {}
    hum = Hum()
    for t in DESIGN_TABLES:
        if t == "hum" and t in data:
            hum = _read_hum(data[t], source=source)
        elif t in data:
            read = _read_coil if t in ("coil_a", "coil_b") else functools.partial(read_table, specs=DESIGN_TABLES[t])
            tables[t] = read(data[t], source=source, table=t)
    for t in ("coil_a", "coil_b"):
        c = tables[t]
        if ("eddy_coupling" in c) != ("eddy_corner" in c):
            raise InputError(f"{where(source, t)}: eddy_coupling and eddy_corner go together; give both or neither")
    sup = tables["supply"]
    window = sup["battery"] - sup["margin_low"] - sup["margin_high"] - 2 * sup["knee"]
    if window <= 0:
        raise InputError(
            f"{where(source, 'supply')}: margin_low + margin_high + 2·knee = "
            f"{sup['margin_low'] + sup['margin_high'] + 2 * sup['knee']:g} V must be below battery={sup['battery']:g} V; lower the margins or the knee"
        )
    if "slew_rate" in sup and "gbw" not in sup:
        raise InputError(f'{where(source, "supply", "slew_rate")}: limits the rate of the op-amp\'s dominant-pole state, which needs gbw; add gbw (e.g. gbw = "3MHz") or leave slew_rate out')
    design = Design(
        name=data.get("name") or name or Path(source).stem,
        notes=data.get("notes", ""),
        coil_a=_coil(tables["coil_a"], 1),
        coil_b=_coil(tables["coil_b"], -1),
        input_a=InputNet(**tables["input_a"]),
        input_b=InputNet(**tables["input_b"]),
        feedback=Feedback(**tables["feedback"]),
        output=Output(**tables["output"]),
        supply=Supply(**sup),
        rig=Rig(**tables["rig"]) if "rig" in tables else Rig(),
        hum=hum,
        source=source,
        sha256=sha256,
        text=text,
        changes=changes,
    )
    bias = design.bias_v
    if not (design.limit_low_v + sup["knee"] < bias < design.limit_high_v - sup["knee"]):
        from ..usual import usual

        lo_v, hi_v = design.limit_low_v + sup["knee"], design.limit_high_v - sup["knee"]
        values = {k: tables["input_b"][k] for k in ("bias_top", "bias_bottom")}
        odd = [k for k, v in values.items() if not usual("input_b", k).holds(v)]  # type: ignore[union-attr]

        def centred(k: str, v: float) -> bool:  # the bias with this one resistor changed lies in the window
            top, bottom = (v, values["bias_bottom"]) if k == "bias_top" else (values["bias_top"], v)
            return lo_v < sup["battery"] * bottom / (top + bottom) < hi_v

        written = data["input_b"]
        fixes = [f'{k}="{p}"' for k in odd if (p := _same_digits(written[k], "input_b", k, lambda v, k=k: centred(k, v)))]
        fix = f"; did you mean {' and '.join(fixes)}?" if fixes else "; bring the two resistors closer to equal"
        raise InputError(
            f"{where(source, 'input_b')}: bias_top={U.format_si(tables['input_b']['bias_top'], 'Ω')}, bias_bottom={U.format_si(tables['input_b']['bias_bottom'], 'Ω')} "
            f"put the bias at {bias:.3g} V, outside the output's linear window {design.limit_low_v + sup['knee']:.3g}..{design.limit_high_v - sup['knee']:.3g} V{fix}"
        )
    _check_places(design, source)
    return resolve(derive(design, construction), impedance_specs)


def _same_digits(raw: Any, table: str, key: str, ok) -> str | None:
    """A resistance as written (``"1k"``, ``"4k7"``, ``1000``) with the digits kept and the prefix changed so that the value
    is in the part's usual range and ``ok(value)`` holds, nearest the range's middle; None if no prefix does."""
    import math
    import re

    from ..usual import usual

    text = f"{raw:g}" if isinstance(raw, (int, float)) else str(raw).strip()
    for sym in ("ohms", "ohm", "Ω"):
        text = text.removesuffix(sym)
    m = re.match(r"^(\d*)(?:\.(\d+))?([pnumkKMGR]?)$", text) or re.match(r"^(\d*)()([pnumkKMGRE])(\d+)$", text)
    if not m:
        return None
    whole, frac, letter = m.group(1), m.group(2) or (m.group(4) if m.re.groups == 4 else ""), m.group(3)
    rkm = m.re.groups == 4
    mantissa = float(f"{whole or '0'}.{frac or '0'}")
    rng = usual(table, key)
    if rng is None or mantissa <= 0:
        return None
    middle, best = math.sqrt(rng.lo * rng.hi), None
    for new in ("R", "k", "M"):
        if new == letter.replace("K", "k").replace("E", "R") or (new == "R" and not letter):
            continue
        v = mantissa * 10.0 ** U.PREFIXES.get(new, 0)
        if rng.holds(v) and ok(v) and (best is None or abs(math.log(v / middle)) < abs(math.log(best[1] / middle))):
            shown = f"{whole}{new}{frac}" if rkm or (frac and new == "R") else f"{whole}{'.' + frac if frac else ''}{'' if new == 'R' else new}"
            best = (shown, v)
    return None if best is None else best[0]


def _check_places(design: Design, source: str) -> None:
    """Refuse a hum source of ``source`` placed where its figures would mean nothing (too near a coil)."""
    if design.hum.sources:
        from ..magnetics.schema import check_source_places

        check_source_places(design.hum.sources, coil_a=design.coil_a, coil_b=design.coil_b, source=source)


def _split_coils(data: dict, *, source: str) -> tuple[dict, dict]:
    """The coils' ``wire``/``measured`` keys taken out (:mod:`render.design.coil_impedance`)."""
    specs = {}
    out = dict(data)
    for t in ("coil_a", "coil_b"):
        if t in out:
            out[t], specs[t] = split_coil(out[t], source=source, table=t)
    return out, specs


def _file_path(value: Any, argument: str, what: str) -> str:
    """``value`` if it names a file (str or os.PathLike), else an InputError naming ``argument`` and what to pass."""
    if isinstance(value, (str, os.PathLike)):
        return os.fspath(value)
    raise InputError(f"{argument}: got {type(value).__name__}; pass {what}")


DESIGN_FORMS = "a design file's path (str or Path) or a render.Design (render.load_design)"
RIG_FORM = "a rig file's path (str or Path) or a render.RigFile (render.load_rig)"
RIG_FORMS = "a rig file's path (str or Path), a render.RigFile (render.load_rig) or None"


def load_design(path: str | os.PathLike | Design, *, argument: str = "path") -> Design:
    """Load and validate one design file; a :class:`Design` already loaded is returned as it is.

    Parameters
    ----------
    path : str or Path or Design
        The design file (TOML), or a design already loaded.
    argument : str
        The name a refusal gives the value (a caller's own argument's name).

    Returns
    -------
    Design

    Raises
    ------
    InputError
        One line for a file that cannot be read or is not a valid design; anything else
        than a path or a Design is refused naming ``argument``.
    """
    if isinstance(path, Design):
        return path
    path = _file_path(path, argument, DESIGN_FORMS)
    data, raw = read_toml(path)
    if isinstance(data, dict) and data.get("kind") == "passive":  # render.design.passive
        raise PassiveGiven(path)
    return parse_design(data, source=str(path), name=Path(path).stem, sha256=sha256_bytes(raw), text=raw.decode("utf-8"))


def parse_rig(data: dict, *, source: str = "<rig>", sha256: str = "") -> RigFile:
    design_table = next((t for t in REQUIRED_TABLES if isinstance(data, dict) and t in data), None)
    if design_table is not None:
        raise InputError(
            f"{source}: this looks like a design file (it has a [{design_table}] table); give it as a design, and as the rig a rig file, the one with a [rig] table, a [hum] table, or both"
        )
    check_document(data, source, ["rig", "hum", *TOP_KEYS])
    if "rig" not in data and "hum" not in data:
        raise InputError(f"{source}: a rig file needs a [rig] table, a [hum] table, or both")
    rig = Rig(**read_table(data.get("rig", {}), RIG, source=source, table="rig"))
    hum = _read_hum(data["hum"], source=source) if "hum" in data else None
    return RigFile(rig=rig, hum=hum, source=source, sha256=sha256)


def load_rig(path: str | os.PathLike | RigFile, *, argument: str = "path") -> RigFile:
    """Load a rig file; its [rig] replaces a design's own, and so does its [hum] if present.

    Parameters
    ----------
    path : str or Path or RigFile
        The rig file (TOML), or one already loaded (returned as it is).
    argument : str
        The name a refusal gives the value (a caller's own argument's name).

    Returns
    -------
    RigFile

    Raises
    ------
    InputError
        One line for a file that cannot be read or is not a valid rig; anything else is
        refused naming ``argument``.
    """
    if isinstance(path, RigFile):
        return path
    path = _file_path(path, argument, RIG_FORM)
    data, raw = read_toml(path)
    return parse_rig(data, source=str(path), sha256=sha256_bytes(raw))


def as_rig(rig: str | os.PathLike | RigFile | None, argument: str = "rig") -> RigFile | None:
    """The rig file ``rig`` names (a path, or a :class:`RigFile` already loaded), or None for none."""
    if rig is None or isinstance(rig, RigFile):
        return rig
    return load_rig(_file_path(rig, argument, RIG_FORMS), argument=argument)


MODELS = Path("models")  # where designs are looked for when none are named


def load_designs(paths=None, *, rig: str | Path | RigFile | None = None, models: Path = MODELS) -> tuple[list[Design], RigFile | None]:
    """Designs from the given files (default: every ``models/*.toml``), each with the rig file applied.

    Parameters
    ----------
    paths : sequence of (str or Path or Design), or None
        Design files' paths or designs already loaded (None or empty: every ``*.toml`` in ``models``;
        there, a design this installation cannot render is left out with a warning).
    rig : str or Path or RigFile or None
        A rig file (or one loaded) applied to every design.
    models : Path
        The folder searched when ``paths`` is empty.

    Returns
    -------
    (list of Design, RigFile or None)
        The designs in order and the rig file as read (None without one).
    """
    if isinstance(paths, (str, Path, Design)):
        raise InputError(f"paths: got one {type(paths).__name__}; pass a list of them (or load_design for one)")
    paths = list(paths or [])
    if not paths:
        paths = sorted(models.glob("*.toml"))
        if not paths:
            raise InputError(f"{models}/: no *.toml design files here; pass design files or run from the project folder")
        paths = [p for p in paths if _renderable_here(p)]
    rig_file = as_rig(rig)
    return [apply_rig(load_design(p, argument=f"paths[{i}]"), rig_file) for i, p in enumerate(paths)], rig_file


def _renderable_here(path: Path) -> bool:
    """False, with a :class:`SkippedDesign` warning, for a design with ``[construction]`` where the
    magnetics packages are missing (Python 3.10): the default set then renders the rest."""
    import importlib.util
    import warnings

    from ..errors import SkippedDesign

    if importlib.util.find_spec("magpylib_material_response") is not None:
        return True
    data, _ = read_toml(path)
    if "construction" not in data:
        return True
    warnings.warn(f"{path}: skipped: [construction] needs magpylib and magpylib-material-response (Python 3.11 or later)", SkippedDesign, stacklevel=3)
    return False


def apply_rig(design: Design, rig_file: RigFile | None) -> Design:
    """The design as it plays into ``rig_file`` (unchanged when None)."""
    if rig_file is None:
        return design
    played = design.with_rig(rig_file.rig, rig_file.hum)
    if rig_file.hum is not None:
        _check_places(played, rig_file.source)
    return played
