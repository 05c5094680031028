"""Values that are legal but unlikely: the usual range of each part, the likely prefix, and warnings.

A design file is refused only for values no circuit can have (the ranges of
:mod:`render.design.schema`). Within them, some values are far from what
pickups and their preamps use and are most often a slipped prefix: a
feedback capacitor of "22n" instead of "22p" puts the feedback corner at
72 Hz with 100 kΩ. This module knows the usual ranges and turns them into

- :func:`likely_prefix`: the prefix that puts a bare number in its part's
  usual range (``inductance = 120`` is most likely ``"120m"``), for the hint
  of a refusal;
- :func:`design_warnings`: one line per unlikely value of a loaded design
  (a network corner inside the band, or past it, where it normally lies far outside it; a
  coil's resonance with its load capacitor inside the band where pickups put
  it at 2-12 kHz; an op-amp gain-bandwidth that puts the stage's
  closed-loop corner inside the band; a coil's inductance, capacitance, DC
  resistance or core-loss resistance or a resistor outside its usual range;
  a stage gain far from an active pickup's; a derived coil whose turns fill its winding's
  section far from what wound coils do; a measured coil whose sweep stops
  too far below its self-resonance to determine its capacitance; two coils whose string signals
  largely cancel, :func:`polarity_warnings`), each naming the range, its origin,
  and the value with the likely prefix (``series_r = "22"`` is most likely
  ``"22k"``).

Every range here is marked as a rule of thumb ("common practice, no source")
or as recalled ("from memory"); none is a refusal.
"""

from __future__ import annotations

import math

from . import units as U
from .usual import (
    CLOSED_LOOP_CORNER_MIN_HZ,
    COUPLING_CORNER_MAX_HZ,
    FEEDBACK_CORNER_MIN_HZ,
    LOADED_RESONANCE_MIN_HZ,
    STAGE_GAIN_RANGE,
    USUAL,
    Usual,
    band_place,
    likely_prefix,
    prefixed_alternatives,
    usual,
)

# Share of a winding's section its insulated wire takes (π·d_o²/4 per turn over height × mean
# build): scatter-wound pickup coils to careful layer winding (common practice, no source); round
# wire cannot pass 0.785 in square packing or 0.907 in hexagonal (geometry).
WINDING_FILL = (0.4, 0.85)

__all__ = ["COUPLING_CORNER_MAX_HZ", "FEEDBACK_CORNER_MIN_HZ", "STAGE_GAIN_RANGE", "USUAL", "Usual", "design_warnings", "likely_prefix", "prefixed_alternatives", "usual"]

RESISTORS = (
    ("input_a", ("series_r", "load_r")),
    ("input_b", ("series_r", "load_r", "bias_top", "bias_bottom")),
    ("feedback", ("r",)),
    ("output", ("series_r", "shunt_r")),
)


# a slipped prefix is offered for an input's series_c only where it puts the coupling corner at or above this
# (a thousandfold slip that puts it at 0.07 Hz is a part nobody fits there; common practice, no source)
SLIP_CORNER_MIN_HZ = 0.1


def _fix_for(x: float, ok, *, bare: str = "") -> str:
    """ "; did you mean "22p"?" for the first alternative prefix of ``x`` that ``ok(value)`` accepts, else "".

    ``bare`` follows an alternative without a prefix ("R" for a resistance, as IEC 60062 writes "520R").
    """
    for text, v in prefixed_alternatives(x):
        if ok(v):
            suffix = bare if text[-1:].isdigit() else ""
            return f'; did you mean "{text}{suffix}"?'
    return ""


def loaded_resonance_hz(inductance_h: float, capacitance_f: float) -> float:
    """The undamped resonance 1/(2π√(LC)) of a coil and the capacitance across it (Hz)."""
    return 1.0 / (2.0 * math.pi * math.sqrt(inductance_h * capacitance_f))


def design_warnings(design) -> tuple[str, ...]:
    """One line per legal but unlikely value of ``design`` (rig applied).

    Corners in the band (blaming a resistor outside its usual range before the
    capacitor beside it), resistors and coil inductances outside their usual
    ranges, and a stage gain r/series_r outside :data:`STAGE_GAIN_RANGE`.
    """
    from .analysis.summary import corners

    out: list[str] = []
    c = corners(design)
    tau = 2 * math.pi
    fb = design.feedback
    odd_r = {(t, k): v for t, keys in RESISTORS for k in keys if (v := getattr(getattr(design, t), k)) is not None and not usual(t, k).holds(v)}  # type: ignore[union-attr]
    blamed: set[tuple[str, str]] = set()
    if fb.c and c["feedback_hz"] is not None and c["feedback_hz"] < FEEDBACK_CORNER_MIN_HZ:
        corner = f"the feedback corner 1/(2π·r·c) is {U.format_si(c['feedback_hz'], 'Hz')}, {band_place(c['feedback_hz'])}; it normally lies above {FEEDBACK_CORNER_MIN_HZ:g} Hz (common practice, no source)"
        if ("feedback", "r") in odd_r:  # the resistor's slipped prefix, not the capacitor
            rng = USUAL[("feedback", "r")]
            fix = _fix_for(fb.r, lambda v: rng.holds(v) and 1 / (tau * v * fb.c) >= FEEDBACK_CORNER_MIN_HZ, bare="R")
            out.append(f"[feedback] r={U.format_si(fb.r, 'Ω')}: {corner}, and r is outside its usual range ({rng.text('Ω')}){fix}")
            blamed.add(("feedback", "r"))
        else:
            rng = USUAL[("feedback", "c")]
            fix = _fix_for(fb.c, lambda v: rng.holds(v) and 1 / (tau * fb.r * v) >= FEEDBACK_CORNER_MIN_HZ)
            out.append(f"[feedback] c={U.format_si(fb.c, 'F')}: {corner}{fix}")
    for name in ("input_a", "input_b"):
        net = getattr(design, name)
        fc = c[f"{name}_hz"]
        if fc > COUPLING_CORNER_MAX_HZ:
            corner = (
                f"the input coupling corner 1/(2π·series_r·series_c) is {U.format_si(fc, 'Hz')}, {band_place(fc)}; it normally lies below {COUPLING_CORNER_MAX_HZ:g} Hz (common practice, no source)"
            )
            if (name, "series_r") in odd_r:  # the resistor's slipped prefix, not the capacitor
                rng = USUAL[("input", "series_r")]
                fix = _fix_for(net.series_r, lambda v, cs=net.series_c, rng=rng: rng.holds(v) and 1 / (tau * v * cs) <= COUPLING_CORNER_MAX_HZ, bare="R")
                out.append(f"[{name}] series_r={U.format_si(net.series_r, 'Ω')}: {corner}, and series_r is outside its usual range ({rng.text('Ω')}){fix}")
                blamed.add((name, "series_r"))
            else:
                # a slipped prefix only where the slip puts the corner where coupling corners sit, not far below the band
                slip = _fix_for(net.series_c, lambda v, r=net.series_r: SLIP_CORNER_MIN_HZ <= 1 / (tau * r * v) <= COUPLING_CORNER_MAX_HZ and USUAL[("input", "series_c")].holds(v))
                least = 1 / (tau * net.series_r * COUPLING_CORNER_MAX_HZ)
                fix = slip or f"; a series_c of {U.format_si(least, 'F')} or more puts it at {COUPLING_CORNER_MAX_HZ:g} Hz or below"
                out.append(f"[{name}] series_c={U.format_si(net.series_c, 'F')}: {corner}{fix}")
    for (table, key), v in odd_r.items():
        if (table, key) not in blamed:
            rng = USUAL[(table.removesuffix("_a").removesuffix("_b"), key)]
            out.append(f"[{table}] {key}={U.format_si(v, 'Ω')}: outside the usual range ({rng.text('Ω')}){_fix_for(v, rng.holds, bare='R')}")
    gain = fb.r / design.input_a.series_r
    lo, hi = STAGE_GAIN_RANGE
    if not lo <= gain <= hi:
        odd = [f"[{t}] {k}" for t, k in (("feedback", "r"), ("input_a", "series_r")) if (t, k) in odd_r]
        why = f"; look at {' and '.join(odd)} first" if odd else ""
        shown = f"{gain:.3g}" if gain < 1000 else f"{gain:.0f}"
        out.append(
            f"[feedback] r / [input_a] series_r = {U.format_si(fb.r, 'Ω')} / {U.format_si(design.input_a.series_r, 'Ω')}: a stage gain of about {shown}"
            f" ({20 * math.log10(gain):+.0f} dB); it is normally {lo:g} to {hi:g} (0 to +40 dB, common practice, no source){why}"
        )
    if c["output_hz"] > COUPLING_CORNER_MAX_HZ:
        cc = design.output.coupling_c
        fix = _fix_for(cc, lambda v: c["output_hz"] * cc / v <= COUPLING_CORNER_MAX_HZ and USUAL[("output", "coupling_c")].holds(v))
        out.append(
            f"[output] coupling_c={U.format_si(cc, 'F')}: the output coupling corner into the controls is {U.format_si(c['output_hz'], 'Hz')}, {band_place(c['output_hz'])};"
            f" it normally lies below {COUPLING_CORNER_MAX_HZ:g} Hz (common practice, no source){fix}"
        )
    out += fill_warnings(design)
    out += measured_warnings(design)
    out += coil_warnings(design)
    out += bandwidth_warnings(design)
    out += polarity_warnings(design)
    from .analysis.sense import construction_warnings

    out += construction_warnings(design)  # the model's limits, not slipped values: AlNiCo past its knee, strings past saturation
    return tuple(out)


COIL_UNITS = {"inductance": "H", "capacitance": "F", "resistance": "Ω", "eddy_resistance": "Ω"}


def coil_warnings(design) -> list[str]:
    """One line per coil whose resonance with its load lies inside the band, and per coil value outside its usual range.

    The resonance is 1/(2π√(L·(C + load_c))) (:func:`loaded_resonance_hz`);
    below :data:`LOADED_RESONANCE_MIN_HZ` it blames the coil's inductance or
    capacitance when one is outside its usual range, else the load capacitor.
    """
    out: list[str] = []
    lo_hz = LOADED_RESONANCE_MIN_HZ
    for name, net_name in (("coil_a", "input_a"), ("coil_b", "input_b")):
        coil, net = getattr(design, name), getattr(design, net_name)
        values = {k: v for k in COIL_UNITS if (v := getattr(coil, k, None)) is not None}
        odd = [k for k, v in values.items() if not USUAL[("coil", k)].holds(v)]
        load = net.load_c or 0.0
        f0 = loaded_resonance_hz(coil.inductance, coil.capacitance + load)
        blamed = None
        if f0 < lo_hz:
            what = f"the coil's resonance with its load 1/(2π·√(L·(C + load_c))) is {U.format_si(f0, 'Hz')}, {band_place(f0)}; it normally lies above {lo_hz:g} Hz (common practice, no source)"
            blamed = next((k for k in ("inductance", "capacitance") if k in odd), None)
            if blamed == "inductance":
                rng = USUAL[("coil", "inductance")]
                fix = _fix_for(coil.inductance, lambda v, c=coil.capacitance + load, rng=rng: rng.holds(v) and loaded_resonance_hz(v, c) >= lo_hz)
                out.append(f"[{name}] inductance={U.format_si(coil.inductance, 'H')}: {what}, and inductance is outside its usual range for pickup coils ({rng.text('H')}){fix}")
            elif blamed == "capacitance":
                rng = USUAL[("coil", "capacitance")]
                fix = _fix_for(coil.capacitance, lambda v, L=coil.inductance, c=load, rng=rng: rng.holds(v) and loaded_resonance_hz(L, v + c) >= lo_hz)
                out.append(f"[{name}] capacitance={U.format_si(coil.capacitance, 'F')}: {what}, and capacitance is outside its usual range for pickup coils ({rng.text('F')}){fix}")
            elif net.load_c:
                rng = USUAL[("input", "load_c")]
                fix = _fix_for(net.load_c, lambda v, L=coil.inductance, c=coil.capacitance, rng=rng: rng.holds(v) and loaded_resonance_hz(L, c + v) >= lo_hz)
                out.append(f"[{net_name}] load_c={U.format_si(net.load_c, 'F')}: {what}{fix}")
            else:
                out.append(f"[{name}] inductance={U.format_si(coil.inductance, 'H')}, capacitance={U.format_si(coil.capacitance, 'F')}: {what}")
        for key in odd:
            if key != blamed:
                unit, rng = COIL_UNITS[key], USUAL[("coil", key)]
                fix = _fix_for(values[key], rng.holds, bare="R" if unit == "Ω" else "")
                out.append(f"[{name}] {key}={U.format_si(values[key], unit)}: outside the usual range for pickup coils ({rng.text(unit)}){fix}")
    return out


# How far (dB) the 1 kHz level may lie below the same design's with coil_b's signal_polarity flipped
# before the coils' string signals are said to oppose: 20 dB is |a + b| < |a - b| / 10, the two coils'
# contributions nearly equal and of opposite sign (common practice, no source).
OPPOSED_DB = 20.0


def polarity_warnings(design) -> list[str]:
    """One line when the two coils' string signals largely cancel (a coil wired in reverse).

    Criterion: |H(1 kHz)|, string velocity to amp input, is more than :data:`OPPOSED_DB` below that of the
    same design with coil_b's ``signal_polarity`` flipped (circuit and rig unchanged). Exact cancellation
    is also reported by the figures themselves (``no signal``); this line names the cause.
    """
    from dataclasses import replace

    import numpy as np

    from .circuit.engine import responses
    from .circuit.params import from_designs

    polarity = design.coil_b.signal_polarity
    flipped = replace(design, coil_b=replace(design.coil_b, signal_polarity=-polarity))
    own, other = np.abs(responses(from_designs([design, flipped])).velocity()([1000.0])[:, 0])
    if not other > own * 10 ** (OPPOSED_DB / 20):
        return []
    below = f"{20 * math.log10(other / own):.1f} dB" if own > 0 else "infinitely far"
    return [
        f"[coil_b] signal_polarity={polarity:+d}: the design's level at 1 kHz is {below} below the same design with signal_polarity={-polarity:+d}"
        f" (more than {OPPOSED_DB:g} dB): the two coils' string signals oppose, so the humbucker cancels its strings as it cancels hum"
        " and its peak, Q and corners describe what is left of the difference; check signal_polarity of both coils"
    ]


def bandwidth_warnings(design) -> list[str]:
    """One line when the op-amp's gain-bandwidth puts the stage's closed-loop corner inside the band.

    The corner of an inverting stage is gbw / (1 + r/series_r), its noise gain
    (Sedra & Smith, Microelectronic Circuits, 7th ed., 2015, §2.8.2; section from memory).
    Not said when the stage gain is outside :data:`STAGE_GAIN_RANGE`: then the gain warns.
    """
    gbw = design.supply.gbw
    if not gbw:
        return []
    gain = design.feedback.r / design.input_a.series_r
    if not STAGE_GAIN_RANGE[0] <= gain <= STAGE_GAIN_RANGE[1]:
        return []  # the stage gain's own line names the resistors; a gbw that is not the slip would be blamed here
    noise_gain = 1.0 + gain
    corner = gbw / noise_gain
    floor = CLOSED_LOOP_CORNER_MIN_HZ
    if corner >= floor:
        return []
    fix = _fix_for(gbw, lambda v: 1e3 <= v <= 1e10 and v / noise_gain >= floor)
    return [
        f"[supply] gbw={U.format_si(gbw, 'Hz')}: the closed-loop corner gbw / (1 + [feedback] r / [input_a] series_r) is {U.format_si(corner, 'Hz')}, {band_place(corner)};"
        f" it normally lies above {U.format_si(floor, 'Hz')} (common practice, no source){fix}"
    ]


BAND_FIX = "sweep on to 20 kHz"  # what a measured coil's band_doubt asks for


def measured_warnings(design) -> list[str]:
    """One line per measurement file whose sweep does not determine its coil's capacitance, one where it does not
    determine R_dc or the inductance at DC, and one where it ends below 20 kHz (both coils in one line when they share
    the file).

    The judgements are :meth:`render.impedance.measured.MeasuredCoil.capacitance_doubt`'s,
    :meth:`~render.impedance.measured.MeasuredCoil.dc_doubt`'s and :meth:`~render.impedance.measured.MeasuredCoil.band_doubt`'s,
    kept in the coil's record when the design loaded.
    """

    def by_file(key: str) -> dict[tuple[str, str], list[str]]:
        found: dict[tuple[str, str], list[str]] = {}
        for name in ("coil_a", "coil_b"):
            rec = getattr(getattr(design, name), "impedance_from", None)
            if doubt := getattr(rec, key, ""):
                found.setdefault((rec.file, doubt), []).append(f"[{name}]")  # type: ignore[union-attr]
        return found

    c_fix = 'sweep on past the self-resonance, or add capacitance = "…" beside measured to hold C at the coil\'s value'
    fixes = (("capacitance_doubt", f"; {c_fix}"), ("dc_doubt", ""), ("band_doubt", f"; {BAND_FIX}"))
    return [f"{' and '.join(names)} measured={U.shown(file)}: {doubt}{fix}" for key, fix in fixes for (file, doubt), names in by_file(key).items()]


def fill_warnings(design) -> list[str]:
    """One line per derived coil whose turns fill its winding's section far more or less than wound coils do (:data:`WINDING_FILL`)."""
    lo, hi = WINDING_FILL
    out = []
    for name in ("coil_a", "coil_b"):
        c = getattr(design, name)
        g, outer = c.geometry, getattr(getattr(c, "impedance_from", None), "wire_outer_diameter_m", None)
        if g is None or outer is None:
            continue
        depth = g.mean_depth
        per_turn = math.pi * outer**2 / 4.0
        fill = g.turns * per_turn / (g.height * depth)
        if not lo <= fill <= hi:
            n_lo, n_hi = (f * g.height * depth / per_turn for f in WINDING_FILL)
            out.append(
                f"[{name}.geometry] turns={g.turns:g}: wire of {outer * 1e3:.3g} mm (insulated) fills {fill:.0%} of the winding's {g.height * 1e3:.3g} × {depth * 1e3:.3g} mm section;"
                f" wound coils fill {lo:.0%}–{hi:.0%} (common practice, no source), and the derived L, R and C take the turns as spread over the section;"
                f" give {n_lo:.0f}–{n_hi:.0f} turns, another outline or another wire"
            )
    return out
