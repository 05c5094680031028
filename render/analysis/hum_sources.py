"""Hum from sources in space, in the figures of ``render hum``: each coil's hum at the amp input, per harmonic and per source.

With ``[[hum.source]]`` tables the room is no longer one uniform field along
z: each coil's EMF phasor E_c,s,h (coil c, source s, harmonic h) comes from
its own flux linkage (:func:`render.magnetics.pickup.design_emf`). The
circuit is linear, so at harmonic h the hum at the amp input is

    V_A = H_a(f_h)·Σ_s E_a,s,h,   V_B = H_b(f_h)·Σ_s E_b,s,h,   V_out = V_A + V_B,

with H_a, H_b each coil's EMF-to-amp-input gain from the engine, and the
rejection is :func:`render.analysis.figures.rejection_db` of V_A and V_B, the
one definition of every command. A source's share is the same with its own
E alone; shares add as phasors, not as magnitudes. The passive reference's
hum is Σ_c H^passive_c·E_c likewise.

Figures that do not exist are None with a reason: no hum at a harmonic
(V_A = V_B = 0: no source has that harmonic, or no coil links it) and an
exact cancellation (the rejection at its cap).

This module is what :mod:`render.analysis.hum` calls when a design has
sources; it must not import that module (nor :mod:`render.magnetics.rejection`,
which does).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..magnetics.pickup import area_mismatch_warnings, design_emf, hum_polarities, placed_coils, point_coil_warnings, room_sources, through
from .figures import rejection_db
from .undefined import REJECTION_CAP_DB, SOURCE_EXACT, SOURCE_NO_HUM, net_hum

NO_HUM = SOURCE_NO_HUM
EXACT = SOURCE_EXACT


def rejection_or_reason(value: float) -> tuple[float | None, str | None]:
    """(figure, None) for a rejection in dB, or (None, reason) where it is undefined or at its cap."""
    v = float(value)
    if not np.isfinite(v):
        return None, NO_HUM
    if v >= REJECTION_CAP_DB:
        return None, EXACT
    return v, None


@dataclass(frozen=True, eq=False)
class SourceVoltages:
    """Hum at the amp input from the design's sources, as complex phasors (V peak).

    frequency_hz : np.ndarray [shape=(H,)], Hz
    source_coil_a, source_coil_b : np.ndarray complex [shape=(S, H)], V, each
        source's hum through coil_a's (coil_b's) path alone
    passive : np.ndarray complex [shape=(H,)], V, the passive reference's hum, all sources
    linkage_wb : np.ndarray [shape=(2, S)], Wb, each coil's peak flux linkage from each source
    sources : the sources, in order
    warnings : one line per approximation in force (a dipole on a coil without geometry)
    """

    frequency_hz: np.ndarray
    source_coil_a: np.ndarray
    source_coil_b: np.ndarray
    passive: np.ndarray
    linkage_wb: np.ndarray
    sources: tuple
    warnings: tuple[str, ...]

    @property
    def coil_a(self) -> np.ndarray:
        return self.source_coil_a.sum(axis=0)

    @property
    def coil_b(self) -> np.ndarray:
        return self.source_coil_b.sum(axis=0)


def source_voltages(design, resp) -> SourceVoltages:
    """The design's hum at the amp input from its sources.

    design : a design whose [hum] has sources (or none: the one-number field, as a uniform source)
    resp : its :class:`render.circuit.engine.Responses` (one design)
    """
    emf = design_emf(design)
    f = emf.frequency_hz
    ga, gb = resp.from_a()(f)[0], resp.from_b()(f)[0]
    return SourceVoltages(
        frequency_hz=f,
        source_coil_a=emf.per_source[0] * ga,
        source_coil_b=emf.per_source[1] * gb,
        passive=through(resp.passive_from_a(f)[0], resp.passive_from_b(f)[0], emf),
        linkage_wb=emf.linkage_wb,
        sources=emf.sources,
        warnings=point_coil_warnings(design) + area_mismatch_warnings(design),
    )


def source_record(j: int, s, linkage_wb) -> dict:
    """One source as JSON: what it is, where, and each coil's peak flux linkage from it."""
    rec: dict = {"source": j + 1, "kind": s.kind}
    if s.kind == "dipole":
        rec.update(moment_a_m2=s.moment, at_m=list(s.at), distance_m=float(np.sqrt(np.dot(s.at, s.at))))
    else:
        rec["field_t"] = s.field
    rec.update(
        axis=list(s.axis),
        harmonics=None if s.harmonics is None else list(s.harmonics),
        phase_deg=s.phase,
        linkage_wb={"coil_a": float(linkage_wb[0, j]), "coil_b": float(linkage_wb[1, j])},
    )
    return rec


def share_rows(sv: SourceVoltages, h: int) -> list[dict]:
    """Each source's share at harmonic index ``h``: its hum at the amp input, each coil alone, its own rejection."""
    a, b = sv.source_coil_a[:, h], sv.source_coil_b[:, h]
    rej = rejection_db(a, b)
    rows = []
    for j, s in enumerate(sv.sources):
        value, reason = rejection_or_reason(rej[j])
        row = {"source": j + 1, "kind": s.kind, "rejection_db": value}
        if reason:
            row["rejection_db_reason"] = reason
        row.update(output_v=float(abs(net_hum(a[j], b[j]))), coil_a_v=float(abs(a[j])), coil_b_v=float(abs(b[j])))
        rows.append(row)
    return rows


def tolerance_rejection(design, resp, frequency_hz, factors: dict) -> np.ndarray:
    """Rejection (dB) of N perturbed copies of ``design`` with its sources: shape (N, H).

    resp : the copies' :class:`~render.circuit.engine.Responses`
    factors : the part factors drawn (a coil's ``turns`` factor scales its
        flux linkage, as it scales turns_area in the one-number room)
    """
    e = design_emf(design).total  # (2, H)
    f = np.asarray(frequency_hz, dtype=float)
    ka = np.broadcast_to(factors.get("coil_a.turns", 1.0), (resp.n,))[:, None]
    kb = np.broadcast_to(factors.get("coil_b.turns", 1.0), (resp.n,))[:, None]
    return rejection_db(resp.from_a()(f) * e[0] * ka, resp.from_b()(f) * e[1] * kb)


def rejection_curve(design, frequency_hz) -> np.ndarray:
    """Rejection (dB) against frequency with the sources' couplings at their strongest harmonic: shape (F,).

    With one source (or several sharing one profile and phase) the ratio of
    the two coils' EMFs is the same at every harmonic, so the curve passes
    through every harmonic's exact figure; otherwise only through that one.
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    e = design_emf(design).total
    h = int(np.argmax(np.abs(e[0]) + np.abs(e[1])))
    resp = responses(from_designs([design]))
    f = np.asarray(frequency_hz, dtype=float)
    return rejection_db(resp.from_a()(f)[0] * e[0, h], resp.from_b()(f)[0] * e[1, h])


def hum_only(design, *, coil: str | None = None, seconds: float = 2.0, sample_rate: int = 48000) -> np.ndarray:
    """A hum-only render at the amp input (V) from the design's sources, in time.

    Each source's dΦ/dt drives its own discretised path
    ``amp.mix(k_a, k_b)`` (k_c = hum_polarity·flux linkage per unit strength
    of coil c), so a balanced pair's cancellation stays exact within each
    source, and the renders add (the hum alone keeps the limiter linear).
    ``coil`` keeps only that coil's EMF (the other's coupling set to zero,
    the circuit unchanged).
    """
    from ..chain import discretize as dz
    from ..chain import hum as hm
    from ..chain.stream import make_plan, render_signal
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..magnetics.hum import coupling, phases, profiles

    h = design.hum
    sources = room_sources(h)
    k = coupling(placed_coils(design), sources) * np.asarray(hum_polarities(design), dtype=float)[:, None]  # (2, S)
    if coil is not None:
        k[1 if coil == "coil_a" else 0] = 0.0
    amps = profiles(sources, harmonics=h.harmonics)
    ph = phases(sources, n_harmonics=amps.shape[1])
    n = int(round(seconds * sample_rate))
    resp = responses(from_designs([design]))
    plan = make_plan(design, sample_rate=sample_rate)
    out = np.zeros(n)
    for j, s in enumerate(sources):
        if k[0, j] == 0.0 and k[1, j] == 0.0:
            continue
        path = dz.discretize_rational(resp.amp.mix(k[0, j], k[1, j]), sample_rate=sample_rate, what="hum path")
        rate = hm.field_rate(n, sample_rate=sample_rate, mains_hz=h.mains, field_t=s.strength, harmonics=amps[j], phases=ph[j])
        out += render_signal(design, np.zeros((2, n)), sample_rate=sample_rate, db_dt=rate, plan=replace(plan, path_hum=path))["out"]
    return out
