"""A passive pickup to compare against: two coils in series, volume and tone pots, cable, amplifier.

A design file with the top-level key ``kind = "passive"`` describes a
pickup with no preamp. Its tables:

- ``[coil_a]``, ``[coil_b]``: the coils, with the keys of an active design's
  coils (:data:`render.design.schema.COIL`, windings and geometries included).
  The polarities are as the coils are connected in the series string:
  ``signal_polarity`` defaults to +1 for both (the string's signals add) and
  ``hum_polarity`` to +1 for coil_a and −1 for coil_b (a humbucker: the
  hum EMFs oppose);
- ``[controls]``: the pickup's own volume and tone pots and tone capacitor
  (:data:`CONTROLS`), which a rig file does not replace;
- ``[rig]``: only the cable and the amplifier input (:data:`CABLE`), which a
  rig file replaces, so the passive pickup plays into the same cable and
  amplifier as the designs beside it;
- ``[hum]``: as in a design.

The circuit is the one the engine already solves for its passive reference
(ground – coil_b reversed – coil_a – jack, the two pots at the jack, the
cable and amplifier at the volume wiper): :func:`carrier` builds a
:class:`~render.design.model.Design` whose passive reference *is* this
pickup, so the response, noise, hum and render of the passive reference
serve it unchanged. The carrier's preamp (a copy of :data:`_PREAMP`) is a
placeholder and is never reported. The two coils' mutual inductance is not
modelled (as in the passive reference).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from .. import units as U
from ..errors import InputError
from ..io.hashing import sha256_bytes
from ..io.toml import read_toml
from ..validate import R_RANGE, TOP_KEYS, Field, check_document, read_table
from .model import Coil, Design, Feedback, Hum, InputNet, Output, Rig, RigFile, Supply
from .schema import MAX_NAME_CHARS, RIG

KIND_KEY = "kind"
PASSIVE_KIND = "passive"

CONTROLS = {
    "pot": Field(U.RESISTANCE, default=500e3, doc="volume and tone pot track resistance", **R_RANGE),
    "tone_cap": Field(U.CAPACITANCE, default=22e-9, doc="tone capacitor", lo=1e-14, hi=0.1, lo_open=False),
    "volume": RIG["volume"],
    "volume_taper": RIG["volume_taper"],
    "tone": RIG["tone"],
    "tone_taper": RIG["tone_taper"],
}
CABLE_KEYS = ("cable_length", "cable_capacitance", "amp_r", "amp_c")
CABLE = {k: RIG[k] for k in CABLE_KEYS}
PASSIVE_TABLES = ("coil_a", "coil_b", "controls", "rig", "hum")

# The carrier's placeholder preamp: never reported, only there because a Design has one.
_PREAMP = dict(
    input_a=InputNet(series_c=1e-6, series_r=22e3),
    input_b=InputNet(series_c=1e-6, series_r=22e3, bias_top=220e3, bias_bottom=220e3),
    feedback=Feedback(r=110e3),
    output=Output(coupling_c=10e-6, series_r=220.0, shunt_r=100e3),
    supply=Supply(battery=9.0),
)


@dataclass(frozen=True)
class Controls:
    """The passive pickup's own controls (SI units; rotations 0..1)."""

    pot: float = 500e3
    tone_cap: float = 22e-9
    volume: float = 1.0
    volume_taper: str = "audio"
    tone: float = 1.0
    tone_taper: str = "linear"


@dataclass(frozen=True)
class PassiveDesign:
    """A passive pickup to compare against, validated, in SI units.

    ``coil_b``'s polarities are as connected in the series string (see the
    module docstring); ``rig`` holds the cable and amplifier input (its other
    fields are unused).
    """

    name: str
    coil_a: Coil
    coil_b: Coil
    controls: Controls = field(default_factory=Controls)
    rig: Rig = field(default_factory=Rig)
    hum: Hum = field(default_factory=Hum)
    notes: str = ""
    source: str = ""
    sha256: str = ""

    def with_rig(self, rig_file: RigFile | None) -> PassiveDesign:
        """Playing into ``rig_file``'s cable and amplifier (and its [hum], if it has one); the controls stay the pickup's own."""
        if rig_file is None:
            return self
        cable = {k: getattr(rig_file.rig, k) for k in CABLE_KEYS}
        return replace(self, rig=replace(self.rig, **cable), hum=rig_file.hum or self.hum)


def is_passive(data: Any) -> bool:
    """Whether a parsed TOML document declares a passive pickup."""
    return isinstance(data, dict) and data.get(KIND_KEY) == PASSIVE_KIND


def parse_passive(data: dict, *, source: str = "<passive>", name: str | None = None, sha256: str = "") -> PassiveDesign:
    """Build a :class:`PassiveDesign` from parsed TOML; every error is one line."""
    from .loading import _read_coil, _read_hum

    check_document(data, source, [KIND_KEY, *PASSIVE_TABLES, *TOP_KEYS])
    if data.get(KIND_KEY) != PASSIVE_KIND:
        raise InputError(f'{source}: {KIND_KEY}={U.shown(data.get(KIND_KEY))}: a comparison pickup needs {KIND_KEY} = "{PASSIVE_KIND}"')
    for t in ("coil_a", "coil_b"):
        if t not in data:
            raise InputError(f"{source}: missing table [{t}]; a passive pickup needs [coil_a] and [coil_b] (and may have [controls], [rig], [hum])")
    if "name" in data and (len(data["name"]) > MAX_NAME_CHARS or not data["name"].isprintable()):
        raise InputError(f"{source}: name={U.shown(data['name'])}: expected one line of at most {MAX_NAME_CHARS} printable characters (it heads every report); put the rest in notes")
    if isinstance(data.get("rig"), dict):
        for key in data["rig"]:
            if key not in CABLE and key in RIG:
                raise InputError(
                    f"{source}: [rig] {key}: a passive pickup's pots and tone capacitor go in its [controls] table (pot, tone_cap, volume, tone, volume_taper, tone_taper); [rig] holds only {', '.join(CABLE_KEYS)}"
                )
    coils = {}
    for t, sig, hum_pol in (("coil_a", 1, 1), ("coil_b", 1, -1)):
        values = dict(_read_coil(data[t], source=source, table=t))
        if ("eddy_coupling" in values) != ("eddy_corner" in values):
            raise InputError(f"{source}: [{t}]: eddy_coupling and eddy_corner go together; give both or neither")
        values.setdefault("signal_polarity", sig)
        if "hum_polarity" not in data[t]:
            values["hum_polarity"] = hum_pol
        coils[t] = Coil(**values)
    controls = Controls(**read_table(data.get("controls", {}), CONTROLS, source=source, table="controls"))
    cable = read_table(data.get("rig", {}), CABLE, source=source, table="rig")
    hum = _read_hum(data["hum"], source=source) if "hum" in data else Hum()
    return PassiveDesign(
        name=data.get("name") or name or Path(source).stem,
        coil_a=coils["coil_a"],
        coil_b=coils["coil_b"],
        controls=controls,
        rig=Rig(**cable),
        hum=hum,
        notes=data.get("notes", ""),
        source=source,
        sha256=sha256,
    )


def load_passive(path: str | Path, *, rig: RigFile | None = None) -> PassiveDesign:
    """Load a passive pickup's file (``kind = "passive"``), playing into ``rig``'s cable and amplifier when given."""
    data, raw = read_toml(path)
    if not is_passive(data):
        raise InputError(f'{path}: not a passive pickup; a comparison file starts with {KIND_KEY} = "{PASSIVE_KIND}" (an active design is compared by naming it beside the others)')
    return parse_passive(data, source=str(path), name=Path(path).stem, sha256=sha256_bytes(raw)).with_rig(rig)


def carrier(p: PassiveDesign) -> Design:
    """A :class:`Design` whose passive reference is ``p`` (its preamp is a placeholder).

    The engine's passive reference runs ground – coil_b reversed – coil_a –
    jack with EMFs sig_a·v and −sig_b·v; a coil connected in the string's
    direction with polarity +1 is therefore coil_b with its polarities negated.
    """
    c = p.controls
    rig = replace(p.rig, passive_pot=c.pot, passive_tone_cap=c.tone_cap, volume=c.volume, volume_taper=c.volume_taper, tone=c.tone, tone_taper=c.tone_taper)
    coil_b = replace(p.coil_b, signal_polarity=-p.coil_b.signal_polarity, hum_polarity=-p.coil_b.hum_polarity)
    return Design(name=p.name, coil_a=p.coil_a, coil_b=coil_b, rig=rig, hum=p.hum, notes=p.notes, source=p.source, sha256=p.sha256, **_PREAMP)  # type: ignore[arg-type]
