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
:func:`point_coil_warnings` says so in one line.
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
