"""The design model: one candidate voicing and what it plays into, validated, in SI units.

Frozen dataclasses; :mod:`render.design.loading` builds them from TOML files
(checked against :mod:`render.design.schema`), and
:func:`render.circuit.params.from_designs` turns them into the engine's arrays.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from ..magnetics.coil import CoilGeometry
    from ..magnetics.hum import DipoleSource, UniformSource

# Default buzz profile: relative field amplitudes of mains harmonics 1..9.
# Our own choice for the demo (odd harmonics stronger, as rectifier loads
# make them); not a measurement of any room (common practice, no source).
DEFAULT_HARMONICS = (1.0, 0.05, 0.3, 0.03, 0.2, 0.02, 0.12, 0.01, 0.06)


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
    winding: Winding | None = None  # when L and R were derived from a winding
    geometry: CoilGeometry | None = None  # the turns in space; turns_area is then its derived value
    entered_turns_area: float | None = None  # m², the file's turns_area beside a geometry (shown, not used)
    ladder: Any = None  # render.impedance.ladder.Ladder: the inductance with its core loss, replacing inductance and eddy_* (inductance is then its DC value)
    impedance_from: Any = None  # render.design.coil_impedance.DerivedImpedance or MeasuredImpedance: where the ladder, R and C came from


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
    sources: tuple[DipoleSource | UniformSource, ...] = ()  # [[hum.source]]: when given, the whole field (``field`` unused)


@dataclass(frozen=True)
class Design:
    """One candidate voicing, validated, in SI units (what :func:`render.load_design` returns).

    The tables are those of the design file (README, "The design file"); every
    value in them is in SI base units (Ω, F, H, V, m, T).

    Attributes
    ----------
    name : str
        The file's stem (or its ``name``).
    coil_a, coil_b : Coil
        The two coils: impedance (H, Ω, F), sensitivity (V per m/s), signal
        polarity, position and aperture along the string (m), turns area (m²),
        and their ``geometry`` (a :class:`render.CoilGeometry`, m) when placed in space.
    input_a, input_b : InputNet
        Each coil's input network (series C in F, series and load R in Ω); ``input_b`` holds the bias divider (Ω).
    feedback : Feedback
        The feedback R (Ω) and C (F, or None).
    output : Output
        Coupling C (F), series and shunt R (Ω).
    supply : Supply
        Battery (V), the output's margins below and above (V) and its knee (V).
    rig : Rig
        What the pickup plays into: controls (Ω, 0..1 rotations, F), cable (m, F/m), amp input (Ω, F).
    hum : Hum
        Mains frequency (Hz), the room's field (T), harmonics (relative amplitudes) and hum sources in space.
    notes : str
    source : str
        The file it came from, as given.
    sha256 : str
        Of the file's bytes, kept in every record.
    construction : PickupBuild or None
        What the pickup is built from, when the file has a ``[construction]``.
    text : str
        The design file's text as read ("" for a design built in memory); for a changed
        design (:func:`render.with_values`), the file's text with the changes made.
    changes : tuple of (str, value)
        The ``("table.key", value)`` changes :func:`render.with_values` made to the file
        (empty for a design as its file says); kept in every record.
    stem : str
        The file stem its outputs are named by (property): its file's, or a changed design's name.
    bias_v, limit_low_v, limit_high_v, headroom_up_v, headroom_down_v : float, V
        The bias point, the output's linear window and the room to its edges (properties).
    """

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
    construction: Any = None  # render.design.construction.PickupBuild, when [construction] is given
    text: str = field(default="", repr=False, compare=False)  # the design file's text (with changes made, for a changed design)
    changes: tuple[tuple[str, Any], ...] = field(default=(), compare=False)  # render.with_values' ("table.key", value) pairs

    @property
    def stem(self) -> str:
        """The file stem its outputs are named by: its file's, or a changed design's name (made safe for a file name)."""
        import re
        from pathlib import Path

        if not self.changes:
            return Path(self.source).stem
        return re.sub(r"[^A-Za-z0-9._=+-]+", "-", self.name).strip("-.") or "design"

    @property
    def bias_v(self) -> float:
        """DC bias at the non-inverting input: battery · bottom / (top + bottom) (V)."""
        b = self.input_b
        assert b.bias_top is not None and b.bias_bottom is not None  # input_b always has them
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

    def with_rig(self, rig: Rig | None = None, hum: Hum | None = None) -> Design:
        return replace(self, rig=rig or self.rig, hum=hum or self.hum)

    def with_geometry(self, coil_a: CoilGeometry | None = None, coil_b: CoilGeometry | None = None) -> Design:
        """The design with these coils' turns placed in space (``turns_area`` becomes the geometry's; the entered one is kept beside it)."""
        from ..arguments import instance
        from ..magnetics.coil import CoilGeometry

        coils = {}
        for name, g in (("coil_a", coil_a), ("coil_b", coil_b)):
            if g is not None:
                instance(name, g, CoilGeometry, "a render.CoilGeometry(...) or None")
                c = getattr(self, name)
                entered = c.entered_turns_area if c.geometry is not None else c.turns_area
                coils[name] = replace(c, geometry=g, turns_area=g.turns_area, entered_turns_area=entered)
        return replace(self, **coils)


@dataclass(frozen=True)
class RigFile:
    """A rig file as read (what :func:`render.load_rig` returns): its [rig] (with defaults) and its [hum], if it had one.

    Attributes
    ----------
    rig : Rig
        Controls (pots in Ω, rotations 0..1, tone cap in F), cable (length in m, capacitance in F/m), amp input (Ω, F).
    hum : Hum or None
        Mains frequency (Hz), the room's field (T), harmonics and hum sources; None when the file has no [hum].
    source : str
        The file it came from, as given.
    sha256 : str
        Of the file's bytes, kept in every record.
    """

    rig: Rig
    hum: Hum | None
    source: str
    sha256: str


def design_to_dict(design: Design) -> dict[str, Any]:
    """Every field in SI units, for JSON records."""

    def conv(obj):
        if hasattr(obj, "__dataclass_fields__"):
            kind = {"kind": obj.kind} if isinstance(getattr(type(obj), "kind", None), str) else {}  # a hum source's kind
            return {**kind, **{f.name: conv(getattr(obj, f.name)) for f in fields(obj)}}
        if isinstance(obj, tuple):
            return [conv(x) for x in obj]
        return obj

    out = conv(design)
    hum = out.get("hum")
    if isinstance(hum, dict) and hum.get("sources"):
        # [[hum.source]] tables are the whole field: the uniform default is not in the room (as render hum's field_t)
        hum["field"] = None
        hum["field_reason"] = "the [[hum.source]] tables are the whole field; [hum] field is not used"
    return out
