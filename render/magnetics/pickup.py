"""A design's two coils in its room: their places, the room's sources and each coil's hum EMF.

The bridge from a validated design (:class:`render.design.Design`) to the
physics of :mod:`.coil` and :mod:`.hum`:

- each coil is placed from its ``position`` (:func:`.coil.coil_pair`): a
  winding in space when it has a ``[coil_x.geometry]``, else a point coil of
  its ``turns_area`` at its centre; with a ``[construction]``, with its
  steel (:mod:`.coil_steel`);
- the room's sources are the ``[[hum.source]]`` tables, or, without them,
  the one-number ``field`` as a uniform source along +z
  (:func:`.hum.room_source`), which gives exactly the single-field samples;
- each coil's hum EMF is ``hum_polarity · dΦ/dt`` (:func:`.hum.hum_emf`),
  and a network's steady-state hum is Σ_c G_c(f_h)·E_c,h, with G_c that
  coil's EMF-to-output gain (V/V) and E_c,h its EMF phasor at harmonic h
  (linear superposition; the cosine reference of
  :func:`render.chain.hum.steady_response`).

A point coil seeing a dipole is the uniform-field approximation at its
centre, fair only for sources far away compared with the coil:
:func:`point_coil_warnings` says so in one line. Two more lines name a
``turns_area`` the hum figures rest on but the design does not back:
:func:`area_mismatch_warnings` when one coil's comes from its geometry and
the other's is entered and they differ (a uniform field through matched
networks is then rejected by only 20·log10(larger/|A_a − A_b|)), and
:func:`winding_area_warnings` when a winding without a geometry implies an
area far from the entered one.
"""

from __future__ import annotations

import numpy as np

from .coil import DEFAULT_NODES, PlacedCoil, coil_pair
from .hum import HumEmf, hum_emf, room_source

COILS = ("coil_a", "coil_b")


def placed_coils(design, *, nodes=DEFAULT_NODES) -> tuple[PlacedCoil, PlacedCoil]:
    """The design's two coils at their places: windings when they have a geometry, else point coils.

    With a ``[construction]`` each coil carries its steel's response
    (:mod:`.coil_steel`, from the construction's cached solve), so every
    source's flux linkage includes the pole pieces' and magnets' share.
    """
    from ..design.construction import steel_responses

    a, b = design.coil_a, design.coil_b
    spec_a = a.geometry if a.geometry is not None else a.turns_area
    spec_b = b.geometry if b.geometry is not None else b.turns_area
    return coil_pair(spec_a, spec_b, position_a=a.position, position_b=b.position, nodes=nodes, steel=steel_responses(design))


def room_sources(hum) -> tuple:
    """The room's sources: ``hum.sources``, or the one-number field as a uniform source along +z."""
    return tuple(hum.sources) if hum.sources else (room_source(hum),)


def hum_polarities(design) -> tuple[int, int]:
    return (design.coil_a.hum_polarity, design.coil_b.hum_polarity)


def design_emf(design) -> HumEmf:
    """Each coil's hum EMF phasors (V peak) per source and harmonic, from the design's [hum]."""
    h = design.hum
    return hum_emf(placed_coils(design), room_sources(h), mains_hz=h.mains, harmonics=h.harmonics, hum_polarity=hum_polarities(design))


def through(gain_a, gain_b, emf: HumEmf) -> np.ndarray:
    """Σ_c G_c·E_c per harmonic: the steady-state hum phasors at a network's output, shape (H,), complex.

    gain_a, gain_b : array_like complex [shape=(H,)], V/V, each coil's EMF to
        that output at ``emf.frequency_hz``

    Where the two coils' parts cancel to rounding the hum is exactly zero
    (:func:`render.analysis.undefined.net_hum`, the same test as a uniform field's).
    """
    from ..analysis.undefined import net_hum

    e = emf.total
    return net_hum(np.asarray(gain_a, dtype=complex) * e[0], np.asarray(gain_b, dtype=complex) * e[1])


def amp_output_phasors(design, resp) -> np.ndarray:
    """Steady-state hum at the op-amp output from the design's sources, per harmonic: shape (H,), V peak, complex.

    resp : the design's :class:`render.circuit.engine.Responses` (one design)
    """
    emf = design_emf(design)
    f = emf.frequency_hz
    return through(resp.amp.from_a()(f)[0], resp.amp.from_b()(f)[0], emf)


def passive_phasors(design, resp) -> np.ndarray:
    """Steady-state hum of the passive reference at the amp input from the design's sources: shape (H,), V peak, complex."""
    emf = design_emf(design)
    f = emf.frequency_hz
    return through(resp.passive_from_a(f)[0], resp.passive_from_b(f)[0], emf)


def point_coil_warnings(design, *, dipoles: bool | None = None) -> tuple[str, ...]:
    """One line when a dipole meets a coil without geometry (the uniform-field approximation at its centre).

    dipoles : whether dipole sources are involved; default: any among the design's [[hum.source]]
    """
    if dipoles is None:
        dipoles = any(s.kind == "dipole" for s in design.hum.sources)
    bare = [name for name in COILS if getattr(design, name).geometry is None]
    if not dipoles or not bare:
        return ()
    which = " and ".join(bare)
    tables = " and ".join(f"[{n}.geometry]" for n in bare)
    verb, whose = ("have", "each coil's") if len(bare) > 1 else ("has", "its")
    return (
        f"{design.source or design.name}: {which} {verb} no geometry: a dipole source is taken as a uniform field at "
        f"{whose} centre times turns_area, fair only for distant sources; give {tables} for near ones",
    )


def _src(design) -> str:
    return design.source or design.name


def area_mismatch_warnings(design) -> tuple[str, ...]:
    """One line when exactly one coil has a geometry and the two coils' ``turns_area`` differ.

    The geometry's coil takes its derived area, the other its entered one, so
    the pair's hum no longer cancels by construction: for a uniform field and
    matched networks, V_A ∝ A_a and V_B ∝ −A_b, and the rejection
    20·log10(max(|V_A|, |V_B|)/|V_A + V_B|) becomes 20·log10(max(A_a, A_b)/|A_a − A_b|).
    """
    a, b = design.coil_a, design.coil_b
    if (a.geometry is None) == (b.geometry is None):
        return ()
    big, small = max(a.turns_area, b.turns_area), min(a.turns_area, b.turns_area)
    if big - small <= 1e-9 * big:  # equal to rounding
        return ()
    shaped, bare = ("coil_a", "coil_b") if a.geometry is not None else ("coil_b", "coil_a")
    area = {"coil_a": a.turns_area, "coil_b": b.turns_area}
    more = "more" if area[shaped] > area[bare] else "less"
    cap = 20 * np.log10(big / (big - small))
    hint = " (beside its winding, window_width alone)" if getattr(design, bare).winding is not None else ""
    return (
        f"{_src(design)}: {shaped}'s turns_area {area[shaped]:.3g} m² comes from its [{shaped}.geometry], {bare}'s {area[bare]:.3g} m² is entered; "
        f"{shaped}'s is {abs(area[shaped] / area[bare] - 1) * 100:.0f} % {more} ({20 * np.log10(big / small):.2f} dB), and the hum rejection hinges on the two matching "
        f"(a uniform field through matched networks: 20·log10({big:.3g}/{big - small:.3g}) = {cap:.1f} dB); give [{bare}.geometry] too{hint}, so both areas come from the bobbin",
    )


# The window a winding without a geometry is taken to surround when its area is checked: the slot of a
# single row of pole pieces, as the demo bobbin's 58 × 3 mm (common practice, no source).
SLOT_WINDOW_M = 3e-3
# An entered turns_area more than 25 % from the winding's is flagged (common practice, no source). A ±1 mm
# error in the assumed window moves the demo winding's area (1400 turns, 150 mm mean turn, 3 mm build) by
# ±15 %, so a 25 % gap is more than the assumption alone explains.
WINDING_AREA_DOUBT = 1.25


def winding_area(winding, *, window_width: float = SLOT_WINDOW_M) -> float | None:
    """turns_area (m²) of a winding mapped to a geometry around a window ``window_width`` (m) wide; None when its mean turn is too short.

    The mapping of :func:`.coil.geometry_from_winding` (the README's winding plus ``window_width``), then
    :attr:`.coil.CoilGeometry.turns_area`.
    """
    from ..errors import InputError
    from .coil import geometry_from_winding

    try:
        g = geometry_from_winding(turns=winding.turns, mean_turn=winding.mean_turn, height=winding.height, depth=winding.depth, window_width=window_width)
    except InputError:
        return None
    return float(g.turns_area)


def winding_area_warnings(design) -> tuple[str, ...]:
    """One line per coil with a winding and no geometry whose entered ``turns_area`` is far from the winding's.

    The winding's area is :func:`winding_area` around :data:`SLOT_WINDOW_M`; "far" is a ratio over
    :data:`WINDING_AREA_DOUBT` either way.
    """
    out = []
    for name in COILS:
        c = getattr(design, name)
        w = c.winding
        implied = winding_area(w) if w is not None and c.geometry is None else None
        entered = c.turns_area
        if implied is None or max(implied, entered) / min(implied, entered) <= WINDING_AREA_DOUBT:
            continue
        more = "more" if implied > entered else "less"
        low = "low" if implied > entered else "high"
        out.append(
            f"{_src(design)}: {name}'s winding ({w.turns:.0f} turns, {w.mean_turn * 1e3:.3g} mm mean turn, {w.depth * 1e3:.3g} mm build) around a"
            f" {SLOT_WINDOW_M * 1e3:g} mm window encloses turns_area {implied:.3g} m², {abs(implied / entered - 1) * 100:.0f} % {more} than the entered"
            f" {entered:.3g} m²; the hum figures use the entered value, so {name}'s hum reads {abs(20 * np.log10(implied / entered)):.1f} dB {low} if the"
            f" window is {SLOT_WINDOW_M * 1e3:g} mm; give both coils a [coil_x.geometry] with the bobbin's window_width, or enter the area you measured"
        )
    return tuple(out)
