"""Design and rig files: TOML in, frozen dataclasses out.

One table of field specifications (:data:`SCHEMA`) drives loading, range
checks, defaults, error messages and the README's format table, so the
rules live in one place.

A design file describes one candidate voicing (two coils, their input
networks, the bias divider, the feedback, the output network and the
supply); a rig file describes what the pickup plays into (controls, cable,
amplifier) and the room it hums in.
"""

from __future__ import annotations

import codecs
import difflib
import functools
import hashlib
import math
import tomllib
from dataclasses import dataclass, field, fields, replace
from pathlib import Path
from typing import Any

from . import units as U
from .errors import InputError

INF = math.inf


@dataclass(frozen=True)
class Field:
    """How one key is read: its kind, whether required, default, plausible range."""

    kind: U.Kind | str  # a units.Kind, or "polarity", "taper", "text", "list"
    required: bool = False
    default: Any = None
    lo: float = 0.0  # plausible range (inclusive unless lo_open/hi_open)
    hi: float = INF
    lo_open: bool = True  # zero (or lo) itself not allowed
    hi_open: bool = False
    doc: str = ""


R_RANGE = dict(lo=1.0, hi=1e9, lo_open=False)  # a resistor below 1 Ω or above 1 GΩ is implausible
C_RANGE = dict(lo=1e-14, hi=0.1, lo_open=False)  # 0.01 pF .. 0.1 F

COIL = {
    "inductance": Field(U.INDUCTANCE, True, lo=1e-5, hi=100.0, lo_open=False, doc="inductance of the winding"),
    "resistance": Field(U.RESISTANCE, True, lo=1.0, hi=1e6, lo_open=False, doc="DC resistance of the winding"),
    "capacitance": Field(U.CAPACITANCE, True, lo=1e-13, hi=1e-7, lo_open=False, doc="winding self-capacitance across the coil's terminals"),
    "eddy_resistance": Field(U.RESISTANCE, doc="core loss as a resistance in parallel with the inductance", **R_RANGE),
    "eddy_coupling": Field(U.RATIO, lo=0.0, hi=0.95, hi_open=True, doc="core loss as a shorted secondary: coupling k², 0 < k² < 0.95"),
    "eddy_corner": Field(U.FREQUENCY, lo=1.0, hi=1e7, lo_open=False, doc="the shorted secondary's corner R2/(2π L2)"),
    "sensitivity": Field(U.SENSITIVITY, True, lo=1e-5, hi=1e3, lo_open=False, doc="EMF per m/s of string velocity at the sensing point"),
    "turns_area": Field(U.AREA, True, lo=1e-6, hi=1e3, lo_open=False, doc="turns × effective loop area; hum EMF = turns_area · dB/dt"),
    "position": Field(U.LENGTH, True, lo=1e-3, hi=1.5, lo_open=False, doc="sensing point: distance from the bridge saddle"),
    "aperture": Field(U.LENGTH, default=0.0, lo=0.0, hi=0.2, lo_open=False, doc="width of the sensing window along the string"),
    "signal_polarity": Field("polarity", doc="+1 or -1 (default +1 for coil_a, -1 for coil_b)"),
    "hum_polarity": Field("polarity", default=1, doc="+1 or -1 (default +1: hum is common-mode)"),
}

WINDING = {
    "turns": Field(U.RATIO, True, lo=1.0, hi=1e6, lo_open=False, doc="number of turns"),
    "wire": Field("wire", True, doc='AWG gauge number (e.g. 42) or bare copper diameter ("0.0635mm")'),
    "mean_turn": Field(U.LENGTH, True, lo=5e-3, hi=2.0, lo_open=False, doc="mean length of one turn"),
    "height": Field(U.LENGTH, True, lo=2e-4, hi=0.3, lo_open=False, doc="winding length along the coil's axis"),
    "depth": Field(U.LENGTH, True, lo=1e-4, hi=0.1, lo_open=False, doc="radial build of the winding"),
    "core_factor": Field("core", True, doc='multiplies the air-core inductance: a number ≥ 1 or "air", "ceramic", "alnico", "steel"'),
    "temperature": Field(U.RATIO, default=20.0, lo=-50.0, hi=200.0, lo_open=False, doc="copper temperature in °C"),
}

INPUT_A = {
    "load_r": Field(U.RESISTANCE, doc="loading resistor across the coil", **R_RANGE),
    "load_c": Field(U.CAPACITANCE, doc="loading capacitor across the coil", **C_RANGE),
    "series_c": Field(U.CAPACITANCE, True, doc="from the coil towards the amplifier input (bass cut)", **C_RANGE),
    "series_r": Field(U.RESISTANCE, True, doc="in series with series_c, into the amplifier input", **R_RANGE),
}
INPUT_B = {
    **INPUT_A,
    "bias_top": Field(U.RESISTANCE, True, doc="battery + to the non-inverting input node", **R_RANGE),
    "bias_bottom": Field(U.RESISTANCE, True, doc="non-inverting input node to ground", **R_RANGE),
    "shunt_c": Field(U.CAPACITANCE, doc="non-inverting input node to ground", **C_RANGE),
}
FEEDBACK = {
    "r": Field(U.RESISTANCE, True, doc="amplifier output to the inverting input", **R_RANGE),
    "c": Field(U.CAPACITANCE, doc="in parallel with r", **C_RANGE),
}
OUTPUT = {
    "coupling_c": Field(U.CAPACITANCE, True, doc="amplifier output to series_r (blocks the DC bias)", **C_RANGE),
    "series_r": Field(U.RESISTANCE, True, doc="to the output jack (sets the output impedance)", **R_RANGE),
    "shunt_r": Field(U.RESISTANCE, doc="output jack to ground", **R_RANGE),
}
SUPPLY = {
    "battery": Field(U.VOLTAGE, True, lo=1.5, hi=60.0, lo_open=False, doc="battery voltage, e.g. 9 or 18"),
    "margin_low": Field(U.VOLTAGE, default=1.0, lo=0.0, hi=30.0, lo_open=False, doc="closest the amplifier output gets to ground"),
    "margin_high": Field(U.VOLTAGE, default=1.0, lo=0.0, hi=30.0, lo_open=False, doc="closest it gets to the battery +"),
    "knee": Field(U.VOLTAGE, default=0.5, lo=1e-3, hi=10.0, lo_open=False, doc="width of the soft transition into each limit"),
    "gbw": Field(U.FREQUENCY, lo=1e3, hi=1e10, lo_open=False, doc="op-amp gain-bandwidth product (absent: no bandwidth limit)"),
    "open_loop_gain": Field(U.RATIO, default=1e5, lo=1e2, hi=1e9, lo_open=False, doc="op-amp DC open-loop gain (default 1e5, from memory: typical of general-purpose op-amps)"),
    "slew_rate": Field(U.SLEW_RATE, lo=1e3, hi=1e11, lo_open=False, doc='op-amp output slew rate, e.g. "13MV/s" (needs gbw; absent: no limit)'),
    "noise_voltage": Field(U.VOLTAGE_DENSITY, default=10e-9, lo=1e-11, hi=1e-5, lo_open=False, doc="op-amp input voltage noise density"),
    "noise_current": Field(U.CURRENT_DENSITY, default=1e-14, lo=1e-17, hi=1e-8, lo_open=False, doc="op-amp input current noise density"),
}
RIG = {
    "volume_pot": Field(U.RESISTANCE, default=25e3, doc="volume pot track resistance", **R_RANGE),
    "volume": Field(U.RATIO, default=1.0, lo=0.0, hi=1.0, lo_open=False, doc="volume knob rotation 0..1"),
    "volume_taper": Field("taper", default="audio", doc='"audio" or "linear"'),
    "tone_pot": Field(U.RESISTANCE, default=25e3, doc="tone pot resistance", **R_RANGE),
    "tone": Field(U.RATIO, default=1.0, lo=0.0, hi=1.0, lo_open=False, doc="tone knob rotation 0..1"),
    "tone_taper": Field("taper", default="linear", doc='"audio" or "linear"'),
    "tone_cap": Field(U.CAPACITANCE, default=22e-9, doc="tone capacitor", **C_RANGE),
    "cable_length": Field(U.LENGTH, default=6.0, lo=0.0, hi=200.0, lo_open=False, doc="cable length"),
    "cable_capacitance": Field(U.CAP_PER_LENGTH, default=100e-12, lo=1e-12, hi=1e-9, lo_open=False, doc="cable capacitance per metre"),
    "amp_r": Field(U.RESISTANCE, default=1e6, doc="amplifier input resistance", **R_RANGE),
    "amp_c": Field(U.CAPACITANCE, default=50e-12, lo=0.0, hi=1e-6, lo_open=False, doc="amplifier input capacitance"),
    "passive_pot": Field(U.RESISTANCE, default=500e3, doc="passive reference: volume and tone pots", **R_RANGE),
    "passive_tone_cap": Field(U.CAPACITANCE, default=22e-9, doc="passive reference: tone capacitor", **C_RANGE),
}
# Default buzz profile: relative field amplitudes of mains harmonics 1..9.
# Our own choice for the demo (odd harmonics stronger, as rectifier loads
# make them); not a measurement of any room (common practice, no source).
DEFAULT_HARMONICS = (1.0, 0.05, 0.3, 0.03, 0.2, 0.02, 0.12, 0.01, 0.06)
HUM = {
    "mains": Field(U.FREQUENCY, default=50.0, lo=40.0, hi=70.0, lo_open=False, doc="mains frequency (50 or 60)"),
    "field": Field(U.FLUX_DENSITY, default=1e-6, lo=1e-10, hi=1e-2, lo_open=False, doc="peak flux density of the fundamental"),
    "harmonics": Field("list", default=DEFAULT_HARMONICS, doc="relative field amplitudes of harmonics 1, 2, 3, …"),
}

DESIGN_TABLES = {
    "coil_a": COIL,
    "coil_b": COIL,
    "input_a": INPUT_A,
    "input_b": INPUT_B,
    "feedback": FEEDBACK,
    "output": OUTPUT,
    "supply": SUPPLY,
    "rig": RIG,
    "hum": HUM,
}
REQUIRED_TABLES = ("coil_a", "coil_b", "input_a", "input_b", "feedback", "output", "supply")
TOP_KEYS = ("name", "notes")
MAX_FILE_BYTES = 1_000_000  # a design file is a few kB; refuse anything huge
MAX_NAME_CHARS = 120  # a design's name heads tables, plots and messages (common practice, no source)


# ----------------------------------------------------------------------------
# The in-memory design


@dataclass(frozen=True)
class Coil:
    inductance: float
    resistance: float
    capacitance: float
    sensitivity: float
    turns_area: float
    position: float
    aperture: float = 0.0
    eddy_resistance: float | None = None
    eddy_coupling: float | None = None
    eddy_corner: float | None = None
    signal_polarity: int = 1
    hum_polarity: int = 1
    winding: "Winding | None" = None  # when L and R were derived from a winding


@dataclass(frozen=True)
class Winding:
    """A winding as given, and what was derived from it (estimates)."""

    turns: float
    wire_diameter: float  # m, bare copper
    wire_awg: float | None
    mean_turn: float
    height: float
    depth: float
    core_factor: float
    temperature: float
    wire_length: float  # m, derived
    inductance: float  # H, derived (estimate)
    resistance: float  # Ω, derived (estimate)


@dataclass(frozen=True)
class InputNet:
    series_c: float
    series_r: float
    load_r: float | None = None
    load_c: float | None = None
    bias_top: float | None = None  # input_b only
    bias_bottom: float | None = None
    shunt_c: float | None = None


@dataclass(frozen=True)
class Feedback:
    r: float
    c: float | None = None


@dataclass(frozen=True)
class Output:
    coupling_c: float
    series_r: float
    shunt_r: float | None = None


@dataclass(frozen=True)
class Supply:
    battery: float
    margin_low: float = 1.0
    margin_high: float = 1.0
    knee: float = 0.5
    gbw: float | None = None
    open_loop_gain: float = 1e5
    slew_rate: float | None = None
    noise_voltage: float = 10e-9
    noise_current: float = 1e-14


@dataclass(frozen=True)
class Rig:
    volume_pot: float = 25e3
    volume: float = 1.0
    volume_taper: str = "audio"
    tone_pot: float = 25e3
    tone: float = 1.0
    tone_taper: str = "linear"
    tone_cap: float = 22e-9
    cable_length: float = 6.0
    cable_capacitance: float = 100e-12
    amp_r: float = 1e6
    amp_c: float = 50e-12
    passive_pot: float = 500e3
    passive_tone_cap: float = 22e-9


@dataclass(frozen=True)
class Hum:
    mains: float = 50.0
    field: float = 1e-6
    harmonics: tuple[float, ...] = DEFAULT_HARMONICS


@dataclass(frozen=True)
class Design:
    """One candidate voicing, validated, in SI units."""

    name: str
    coil_a: Coil
    coil_b: Coil
    input_a: InputNet
    input_b: InputNet
    feedback: Feedback
    output: Output
    supply: Supply
    rig: Rig = field(default_factory=Rig)
    hum: Hum = field(default_factory=Hum)
    notes: str = ""
    source: str = ""  # the file it came from, as given
    sha256: str = ""  # of the file's bytes, recorded in every render

    @property
    def bias_v(self) -> float:
        """DC bias at the non-inverting input: battery · bottom / (top + bottom) (V)."""
        b = self.input_b
        return self.supply.battery * b.bias_bottom / (b.bias_top + b.bias_bottom)

    @property
    def limit_low_v(self) -> float:
        return self.supply.margin_low

    @property
    def limit_high_v(self) -> float:
        return self.supply.battery - self.supply.margin_high

    @property
    def headroom_up_v(self) -> float:
        """From the bias point up to the upper limit of the amplifier output (V)."""
        return self.limit_high_v - self.bias_v

    @property
    def headroom_down_v(self) -> float:
        """From the bias point down to the lower limit of the amplifier output (V)."""
        return self.bias_v - self.limit_low_v

    def with_rig(self, rig: Rig | None = None, hum: Hum | None = None) -> "Design":
        return replace(self, rig=rig or self.rig, hum=hum or self.hum)


# ----------------------------------------------------------------------------
# Reading


def _where(source: str, table: str | None, key: str | None = None) -> str:
    loc = source
    if table:
        loc += f": [{table}]"
    if key:
        loc += f" {key}"
    return loc


def _suggest(word: str, choices) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else f"; known keys: {', '.join(choices)}"


def _slip_hint(key: str, raw: Any, value: float, spec: Field) -> str:
    """Suggest the likely fix for a value outside the plausible range."""
    if isinstance(raw, str):
        t = raw.strip()
        body = next((t[: -len(s)] for s in ("ohms", "ohm", "Ω") if t.endswith(s)), t)
        if spec.kind is U.RESISTANCE and body.endswith("m") and value < spec.lo:
            return f' ("m" is milli; for mega write "{body[:-1]}M")'
        if spec.kind is U.CAPACITANCE and value > spec.hi:
            return " (a capacitor that large is unlikely; check the prefix: p, n, u)"
    elif isinstance(raw, (int, float)) and spec.kind in (U.CAPACITANCE, U.INDUCTANCE) and value >= 1:
        return f' (plain numbers are in SI units: {raw} means {raw} {spec.kind.unit}; write e.g. "{raw}n")'
    return ""


def read_value(raw: Any, spec: Field, *, source: str, table: str, key: str) -> Any:
    """Read and range-check one value; raise InputError with a one-line message."""
    where = _where(source, table, key)
    if spec.kind == "polarity":
        if raw in (1, -1) and not isinstance(raw, bool):
            return int(raw)
        raise InputError(f"{where}={U.shown(raw)}: a polarity must be +1 or -1")
    if spec.kind == "taper":
        if raw in ("audio", "linear"):
            return raw
        raise InputError(f'{where}={U.shown(raw)}: a taper must be "audio" or "linear"')
    if spec.kind == "wire":
        if isinstance(raw, (int, float)) and not isinstance(raw, bool):
            if not 20 <= raw <= 60:
                raise InputError(f"{where}={U.shown(raw)}: an AWG gauge must be from 20 to 60 (pickup wire is usually 41 to 44), or give a bare diameter like \"0.0635mm\"")
            return ("awg", float(raw))
        try:
            dia = U.parse_quantity(raw, U.LENGTH)
        except U.QuantityError as exc:
            raise InputError(f"{where}={U.shown(raw)}: {exc}; give an AWG number like 42 or a bare diameter like \"0.0635mm\"") from None
        if not 5e-6 <= dia <= 2e-3:
            raise InputError(f"{where}={U.shown(raw)}: a bare wire diameter must be from 5 µm to 2 mm")
        return ("diameter", dia)
    if spec.kind == "core":
        from .circuit.winding import CORE_FACTORS

        if isinstance(raw, str) and raw in CORE_FACTORS:
            return float(CORE_FACTORS[raw])
        if isinstance(raw, (int, float)) and not isinstance(raw, bool) and 1.0 <= raw <= 20.0:
            return float(raw)
        raise InputError(f"{where}={U.shown(raw)}: expected a number from 1 to 20 or one of {', '.join(repr(k) for k in CORE_FACTORS)} (rough estimates)")
    if spec.kind == "list":
        if not isinstance(raw, list) or not raw or len(raw) > 64:
            raise InputError(f"{where}={U.shown(raw)}: expected a list of 1 to 64 relative amplitudes, e.g. [1.0, 0.1, 0.3]")
        out = []
        for x in raw:
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not 0 <= x <= 100:  # NaN fails the comparison; a huge int is never converted
                raise InputError(f"{where}={U.shown(raw)}: each relative amplitude must be a number from 0 to 100")
            out.append(float(x))
        return tuple(out)
    try:
        value = U.parse_quantity(raw, spec.kind)
    except U.QuantityError as exc:
        raise InputError(f"{where}={U.shown(raw)}: {exc}") from None
    unit = spec.kind.unit
    if value < 0 and spec.lo >= 0:
        raise InputError(f"{where}={U.shown(raw)}: must not be negative")
    too_low = value < spec.lo or (spec.lo_open and value <= spec.lo)
    too_high = value > spec.hi or (spec.hi_open and value >= spec.hi)
    if too_low or too_high:
        # a plain number (k², a knob rotation) without SI prefixes: "0.95", not "950 m"
        fmt = (lambda x: U.format_si(x, unit)) if unit else (lambda x: f"{x:g}")
        lo = fmt(spec.lo) if spec.lo else "0"
        rng = f"{'above' if spec.lo_open else 'at least'} {lo} and {'below' if spec.hi_open else 'at most'} {fmt(spec.hi)}"
        raise InputError(f"{where}={U.shown(raw)} ({fmt(value)}): expected a plausible value, {rng}{_slip_hint(key, raw, value, spec)}")
    return value


def read_table(data: Any, specs: dict[str, Field], *, source: str, table: str) -> dict[str, Any]:
    """Read one TOML table against its field specs (unknown keys refused)."""
    if not isinstance(data, dict):
        raise InputError(f"{_where(source, table)}: expected a table of keys, got {U.shown(data)}; write a [{table}] section with its keys")
    for key in data:
        if key not in specs:
            raise InputError(f"{_where(source, table)}: unknown key {U.shown(key)}{_suggest(key, specs)}")
    out: dict[str, Any] = {}
    for key, spec in specs.items():
        if key in data:
            out[key] = read_value(data[key], spec, source=source, table=table, key=key)
        elif spec.required:
            raise InputError(f"{_where(source, table)}: missing required key '{key}' ({spec.doc}); add e.g. {key} = {U.example(spec.kind) if isinstance(spec.kind, U.Kind) else '1'}")
        elif spec.default is not None:
            out[key] = spec.default
    return out


def read_file_bytes(path: str | Path, *, limit: int, what: str, missing: str = "check the path") -> bytes:
    """The bytes of a regular file of at most ``limit`` bytes; every failure is one line.

    what : how the file is named in messages ("a design, rig or phrase file")
    missing : the fix offered when there is no such file
    """
    p = Path(path)
    try:
        st = p.stat()
    except FileNotFoundError:
        raise InputError(f"{path}: no such file; {missing}") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the path and its permissions") from None
    if p.is_dir():
        raise InputError(f"{path}: is a folder, expected a .toml file")
    if not p.is_file():
        raise InputError(f"{path}: is not a regular file (a device or a pipe?); give {what} saved on disk")
    if st.st_size > limit:
        raise InputError(f"{path}: file is {st.st_size} bytes; {what} must be under {limit} bytes")
    try:
        with open(p, "rb") as fh:
            raw = fh.read(limit + 1)  # never trust the size alone: the file may grow while read
    except OSError as exc:
        raise InputError(f"{path}: cannot be read ({exc.strerror}); check the path and its permissions") from None
    if len(raw) > limit:
        raise InputError(f"{path}: file is over {limit} bytes; {what} must be under {limit} bytes")
    return raw


def decode_toml_text(raw: bytes, path, *, not_utf8: str = "not a UTF-8 text file", fix: str = "save it as UTF-8 TOML") -> str:
    """The UTF-8 text of a TOML file; InputError (one line) for any other encoding.

    A UTF-8 byte-order mark is refused rather than dropped: the text is kept
    as written in session keys and read again later, where it must parse.
    not_utf8, fix : the message's wording for bytes that are not UTF-8
    """
    if raw.startswith(codecs.BOM_UTF8):
        raise InputError(f"{path}: starts with a byte-order mark (BOM); save it as UTF-8 without BOM")
    if raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        raise InputError(f"{path}: {not_utf8} (it starts like UTF-16); {fix}")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise InputError(f"{path}: {not_utf8} (byte {exc.start} is 0x{raw[exc.start]:02x}); {fix}") from None


def read_toml(path: str | Path) -> tuple[dict, bytes]:
    """Read a TOML file with size and encoding checks; errors are one line."""
    raw = read_file_bytes(path, limit=MAX_FILE_BYTES, what="a design, rig or phrase file")
    text = decode_toml_text(raw, path)
    if "\x00" in text:
        raise InputError(f"{path}: contains NUL bytes; expected a TOML text file")
    try:
        return tomllib.loads(text), raw
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"{path}: not valid TOML ({exc}); check quotes and brackets") from None
    except RecursionError:
        raise InputError(f"{path}: arrays or tables nested too deeply to read; a design file needs two levels at most") from None


def _coil(d: dict, default_signal: int) -> Coil:
    d = dict(d)
    d.setdefault("signal_polarity", default_signal)
    return Coil(**d)


def read_winding(data: Any, *, source: str, table: str) -> Winding:
    """Read a [coil_x.winding] table and derive L and R from it (estimates)."""
    from .circuit.winding import awg_diameter, from_winding

    w = read_table(data, WINDING, source=source, table=table)
    kind, value = w["wire"]
    dia = awg_diameter(value) if kind == "awg" else value
    L, R, length = from_winding(
        turns=w["turns"], diameter=dia, mean_turn=w["mean_turn"], height=w["height"], depth=w["depth"],
        core_factor=w["core_factor"], temperature_c=w["temperature"],
    )
    return Winding(
        turns=w["turns"], wire_diameter=dia, wire_awg=value if kind == "awg" else None, mean_turn=w["mean_turn"],
        height=w["height"], depth=w["depth"], core_factor=w["core_factor"], temperature=w["temperature"],
        wire_length=length, inductance=L, resistance=R,
    )


def _read_coil(data: Any, *, source: str, table: str) -> dict:
    """A coil table, with inductance and resistance given or derived from its winding."""
    if not isinstance(data, dict) or "winding" not in data:
        return read_table(data, COIL, source=source, table=table)
    data = dict(data)
    winding = read_winding(data.pop("winding"), source=source, table=f"{table}.winding")
    both = [k for k in ("inductance", "resistance") if k in data]
    if both:
        raise InputError(f"{_where(source, table)}: {' and '.join(both)} given as well as [{table}.winding]; give either the values or the winding, not both")
    data["inductance"], data["resistance"] = winding.inductance, winding.resistance
    try:
        out = read_table(data, COIL, source=source, table=table)
    except InputError as exc:
        raise InputError(f"{exc} (derived from [{table}.winding]; check turns, wire and former)") from None
    out["winding"] = winding
    return out


def _check_document(data: Any, source: str, known: list[str]) -> None:
    """A TOML document of ``known`` tables and keys, with ``name`` and ``notes`` strings when present."""
    if not isinstance(data, dict):
        raise InputError(f"{source}: expected a TOML document of tables")
    for key in data:
        if key not in known:
            raise InputError(f"{source}: unknown table or key {U.shown(key)}{_suggest(key, known)}")
    for key in TOP_KEYS:
        if key in data and not isinstance(data[key], str):
            raise InputError(f"{source}: {key}={U.shown(data[key])}: expected a string")


def parse_design(data: dict, *, source: str = "<design>", name: str | None = None, sha256: str = "") -> Design:
    """Build a :class:`Design` from parsed TOML; every error is one line."""
    _check_document(data, source, list(DESIGN_TABLES) + list(TOP_KEYS))
    for t in REQUIRED_TABLES:
        if t not in data:
            raise InputError(f"{source}: missing table [{t}]; every design needs {', '.join('[' + x + ']' for x in REQUIRED_TABLES)}")
    if "name" in data and (len(data["name"]) > MAX_NAME_CHARS or not data["name"].isprintable()):
        raise InputError(f"{source}: name={U.shown(data['name'])}: expected one line of at most {MAX_NAME_CHARS} printable characters (it heads every report); put the rest in notes")
    tables = {}
    for t in DESIGN_TABLES:
        if t in data:
            read = _read_coil if t in ("coil_a", "coil_b") else functools.partial(read_table, specs=DESIGN_TABLES[t])
            tables[t] = read(data[t], source=source, table=t)
    for t in ("coil_a", "coil_b"):
        c = tables[t]
        if ("eddy_coupling" in c) != ("eddy_corner" in c):
            raise InputError(f"{_where(source, t)}: eddy_coupling and eddy_corner go together; give both or neither")
        if c.get("eddy_coupling") == 0.0:
            raise InputError(f"{_where(source, t, 'eddy_coupling')}=0: must be above 0 (leave both eddy_coupling and eddy_corner out for no secondary)")
    sup = tables["supply"]
    window = sup["battery"] - sup["margin_low"] - sup["margin_high"] - 2 * sup["knee"]
    if window <= 0:
        raise InputError(
            f"{_where(source, 'supply')}: margin_low + margin_high + 2·knee = "
            f"{sup['margin_low'] + sup['margin_high'] + 2 * sup['knee']:g} V must be below battery={sup['battery']:g} V; lower the margins or the knee"
        )
    if "slew_rate" in sup and "gbw" not in sup:
        raise InputError(f"{_where(source, 'supply', 'slew_rate')}: limits the rate of the op-amp's dominant-pole state, which needs gbw; add gbw (e.g. gbw = \"3MHz\") or leave slew_rate out")
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
        hum=Hum(**tables["hum"]) if "hum" in tables else Hum(),
        source=source,
        sha256=sha256,
    )
    bias = design.bias_v
    if not (design.limit_low_v + sup["knee"] < bias < design.limit_high_v - sup["knee"]):
        raise InputError(
            f"{_where(source, 'input_b')}: bias_top={U.format_si(design.input_b.bias_top, 'Ω')}, bias_bottom={U.format_si(design.input_b.bias_bottom, 'Ω')} "
            f"put the bias at {bias:.3g} V, outside the output's linear window {design.limit_low_v + sup['knee']:.3g}..{design.limit_high_v - sup['knee']:.3g} V; bring the two resistors closer to equal"
        )
    return design


def load_design(path: str | Path) -> Design:
    """Load and validate one design file."""
    data, raw = read_toml(path)
    return parse_design(data, source=str(path), name=Path(path).stem, sha256=hashlib.sha256(raw).hexdigest())


@dataclass(frozen=True)
class RigFile:
    rig: Rig
    hum: Hum | None
    source: str
    sha256: str


def parse_rig(data: dict, *, source: str = "<rig>", sha256: str = "") -> RigFile:
    _check_document(data, source, ["rig", "hum", *TOP_KEYS])
    if "rig" not in data and "hum" not in data:
        raise InputError(f"{source}: a rig file needs a [rig] table, a [hum] table, or both")
    rig = Rig(**read_table(data.get("rig", {}), RIG, source=source, table="rig"))
    hum = Hum(**read_table(data["hum"], HUM, source=source, table="hum")) if "hum" in data else None
    return RigFile(rig=rig, hum=hum, source=source, sha256=sha256)


def load_rig(path: str | Path) -> RigFile:
    """Load a rig file; its [rig] replaces a design's own, and so does its [hum] if present."""
    data, raw = read_toml(path)
    return parse_rig(data, source=str(path), sha256=hashlib.sha256(raw).hexdigest())


def apply_rig(design: Design, rig_file: RigFile | None) -> Design:
    """The design as it plays into ``rig_file`` (unchanged when None)."""
    if rig_file is None:
        return design
    return design.with_rig(rig_file.rig, rig_file.hum)


def design_to_dict(design: Design) -> dict:
    """Every field in SI units, for JSON records."""

    def conv(obj):
        if hasattr(obj, "__dataclass_fields__"):
            return {f.name: conv(getattr(obj, f.name)) for f in fields(obj)}
        if isinstance(obj, tuple):
            return list(obj)
        return obj

    return conv(design)


def volume_fraction(rotation: float, taper: str) -> float:
    """Fraction of the pot's track between wiper and ground at ``rotation`` (0..1).

    Audio taper: (81^r − 1)/80, 10 % at half rotation (common practice, no source).
    """
    if taper == "audio":
        return (81.0**rotation - 1.0) / 80.0
    return rotation
