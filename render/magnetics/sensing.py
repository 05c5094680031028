"""What a construction senses: per coil and per string, from the solved fields.

The chain, each step in its own module:

1. the magnets' bias field B0 with the steel magnetised by it
   (:func:`render.magnetics.steel.solve` with the remanence);
2. each coil's own field at 1 A, B1, with the steel and the magnets'
   recoil permeability answering it (the same solve, the coil's field
   applied, no remanence);
3. both as fields above the pole pieces' top faces (:mod:`.halfspace`),
   along each string, displaced sideways and vertically;
4. each string's magnetisation in B0 and its flux linkage m·B1 by
   reciprocity (:mod:`.strings`).

Step 2's polarisation of the steel is also each coil's hum pickup with the
steel (:mod:`.coil_steel`), kept with the result.

What comes out, per coil and per string (:class:`StringSensing`):

- the sensing function along the string: dΦ/dw per metre of string, the
  flux linkage's change when the element there moves by w (vertically, and
  sideways), the string's tilt by the slope of w included
  (:meth:`.strings.Rod.sensing`); a mode's coupling is its shape's
  projection on it;
- the sensitivity to vertical and lateral motion of the whole string, its
  integral (V·s/m: the EMF per m/s);
- the vertical sensitivity with the string pushed up to 6 mm sideways,
  towards −y (the bass side) and +y (the treble side): a bend's dropout;
- the flux linkage as a table over the string's displacement (sideways and
  vertically), and the 2nd and 3rd harmonics of the EMF for a 0.5 mm peak
  vertical sine.

Φ is the flux linkage along +z of the coil's turns (counter-clockwise seen
from +z), as in :mod:`.coil`; the EMF at a coil's input is the wiring's
``hum_polarity`` times dΦ/dt (:mod:`render.design.construction`).
"""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import Any

import numpy as np
from scipy.constants import mu_0

from . import halfspace as hs
from .coil import CoilGeometry, coil_centres, placed_coil
from .coil_steel import SteelResponse
from .construction import Construction
from .steel import Excitation, solve_many
from .strings import Rod

STEP_X = 0.5e-3  # m, sample spacing along the string
REACH_X = 30e-3  # m, how far beyond the coils' outer sides the string is followed (farther changes the sensitivity by < 3e-4)
DROPOUT = np.round(np.arange(-12, 13) * 0.5e-3, 12)  # m, the offsets the dropout is reported at (−6 … +6 mm)
LATERAL = np.union1d(np.round(np.arange(-8, 9) * 1e-3, 12), DROPOUT)  # m, sideways offsets of the table (−8 … +8 mm)
VERTICAL = (-1.5e-3, 2.0e-3, 0.5e-3)  # m, the table's vertical offsets: lowest, highest, step
CLEARANCE = 0.5e-3  # m, the lowest a string's underside comes to the top faces in the table
H_AMPLITUDE = 0.5e-3  # m, peak of the vertical sine for h2/h3
WINDING_NODES = 16  # Gauss–Legendre nodes across each winding's build for its own field
APPLIED_NODES = (8, 8)  # the coil's field applied to the cells
DECAY_LENGTHS = hs.DECAY_LENGTHS  # modes kept: see render.magnetics.halfspace


@dataclass(frozen=True, eq=False)
class StringSensing:
    """One string as one coil senses it (Φ: flux linkage per coil, Wb).

    string : as guitarists number it (1 the highest)
    y, z : m, the string's axis at rest
    x : np.ndarray [shape=(n,)], m, samples along the string (pickup axes)
    along_z, along_y : np.ndarray [shape=(n,)], Wb/m² (V·s/m per metre of
        string): dΦ per metre of displacement of the element at each sample
    sensitivity_z, sensitivity_y : Wb/m (V·s/m): dΦ per metre of the whole string's displacement
    lateral : np.ndarray [shape=(m,)], m, sideways offsets (−6 … +6 mm, +y the treble side)
    lateral_sensitivity : np.ndarray [shape=(m,)], Wb/m, the vertical sensitivity there
    dy, dz : np.ndarray, m, the table's offsets (sideways, vertical)
    flux : np.ndarray [shape=(len(dy), len(dz))], Wb, Φ at those offsets minus Φ at rest
    h2_db, h3_db : dB, harmonics of the EMF for a 0.5 mm peak vertical sine, re the fundamental
    polarization : T, the largest |µ0·M| along the string at rest in the
        magnets' field
    differential : the string steel's differential relative permeability
        1 + dM/dH along its axis where it is most polarised at rest (µr of
        the steel for a weak field; lower as it nears saturation)
    """

    string: int
    y: float
    z: float
    x: np.ndarray
    along_z: np.ndarray
    along_y: np.ndarray
    sensitivity_z: float
    sensitivity_y: float
    lateral: np.ndarray
    lateral_sensitivity: np.ndarray
    dy: np.ndarray
    dz: np.ndarray
    flux: np.ndarray
    h2_db: float
    h3_db: float
    polarization: float
    differential: float

    @property
    def lateral_db(self) -> np.ndarray:
        """The vertical sensitivity at each lateral offset, dB re rest."""
        return 20.0 * np.log10(np.abs(self.lateral_sensitivity) / abs(self.sensitivity_z))


@dataclass(frozen=True, eq=False)
class PickupSensing:
    """Both coils' view of every string (lowest string first in each tuple).

    coil_a, coil_b : tuple of :class:`StringSensing`
    positions : (coil_a, coil_b), m from the bridge saddle
    digest : hash of what it was computed from
    steel : (coil_a, coil_b), the steel and magnets answering each coil at
        1 A (:class:`~render.magnetics.coil_steel.SteelResponse`): their hum pickup
    """

    coil_a: tuple
    coil_b: tuple
    positions: tuple
    digest: str
    steel: tuple = (None, None)

    @property
    def x_offset(self) -> float:
        """x_saddle − x (m): the mean of the two coils' positions."""
        return (self.positions[0] + self.positions[1]) / 2.0

    def coil(self, name: str) -> tuple:
        return self.coil_a if name == "coil_a" else self.coil_b

    # --- arrays for a cache -----------------------------------------------------
    def to_arrays(self) -> dict:
        out: dict = {"positions": np.asarray(self.positions, float), "digest": np.asarray(self.digest)}
        for name, st in zip(("coil_a", "coil_b"), self.steel):
            if st is not None:
                out |= {f"steel/{name}/lo": st.lo, f"steel/{name}/hi": st.hi, f"steel/{name}/polarization": st.polarization}
        for name in ("coil_a", "coil_b"):
            for i, s in enumerate(self.coil(name)):
                for f in fields(StringSensing):
                    out[f"{name}/{i}/{f.name}"] = np.asarray(getattr(s, f.name))
        return out

    @classmethod
    def from_arrays(cls, a) -> PickupSensing:
        coils = {}
        for name in ("coil_a", "coil_b"):
            items = []
            i = 0
            while f"{name}/{i}/string" in a:
                kw: dict[str, Any] = {}
                for f in fields(StringSensing):
                    v = np.asarray(a[f"{name}/{i}/{f.name}"])
                    kw[f.name] = v if v.ndim else (int(v) if f.name == "string" else float(v))
                items.append(StringSensing(**kw))
                i += 1
            coils[name] = tuple(items)
        steel = tuple(SteelResponse(a[f"steel/{n}/lo"], a[f"steel/{n}/hi"], a[f"steel/{n}/polarization"]) for n in ("coil_a", "coil_b"))  # KeyError: an older entry
        return cls(coil_a=coils["coil_a"], coil_b=coils["coil_b"], positions=tuple(float(p) for p in a["positions"]), digest=str(a["digest"]), steel=steel)


def pickup_sensing(construction: Construction, geometry_a: CoilGeometry, geometry_b: CoilGeometry, *, position_a: float, position_b: float, refine: float = 1.0) -> PickupSensing:
    """Solve the construction's fields and what each coil senses of each string.

    geometry_a, geometry_b : each coil's winding
    position_a, position_b : m from the bridge saddle (each coil's centre)
    refine : multiplies the solver's cells along each side (for convergence checks; the solve refuses more
        than :data:`render.magnetics.steel.MAX_CELLS` cells, about 1.6 times the demos' cut along each side)
    """
    ca, cb = coil_centres(position_a, position_b)
    coils = (placed_coil(geometry_a, centre=ca, nodes=APPLIED_NODES), placed_coil(geometry_b, centre=cb, nodes=APPLIED_NODES))
    parts = construction.parts(ca, cb, geometry_a, geometry_b, refine=refine)
    bias, cells_a, cells_b = solve_many(parts, [Excitation(None, True), *(Excitation(c.field_per_amp, False) for c in coils)])
    own = []
    for coil, geom, cells in zip(coils, (geometry_a, geometry_b), (cells_a, cells_b)):
        fil = geom.filaments((WINDING_NODES, 1))
        own.append(hs.Boxes.join(cells, hs.winding_boxes(fil.half_x, fil.half_y, fil.turns, centre=coil.centre, height=geom.height)))
    sources = (bias, *own)
    everything = hs.Boxes.join(*sources)
    z_ref = max(0.0, everything.top)

    st = construction.strings
    ys, zs = st.y, st.axis_z()
    reach = max(abs(ca[0]) + geometry_a.width / 2, abs(cb[0]) + geometry_b.width / 2) + REACH_X
    x = np.arange(-np.ceil(reach / STEP_X), np.ceil(reach / STEP_X) + 1) * STEP_X
    dz_all = np.round(np.arange(VERTICAL[0], VERTICAL[1] + VERTICAL[2] / 2, VERTICAL[2]), 12)
    lowest = float(min(z + dz_all[dz_all >= CLEARANCE + o / 2 + max(construction.top, 0.0) - z].min() for z, o in zip(zs, st.outers)))
    ext_src = (float(np.ptp(np.r_[everything.lo[:, 0], everything.hi[:, 0]])), float(np.ptp(np.r_[everything.lo[:, 1], everything.hi[:, 1]])))
    ext_pts = (2 * reach, float(np.ptp(ys)) + 2 * float(np.abs(LATERAL).max()))
    grid = hs.plan(ext_src, ext_pts, lowest - z_ref, decay_lengths=DECAY_LENGTHS)
    spectra = np.stack([hs.spectrum(s, grid, z_ref=z_ref) for s in sources])
    moments = [hs.moment(s) for s in sources]

    def field(y, z: float, d_dz: int = 0, d_dy: int = 0) -> np.ndarray:
        """B0, B1 of coil_a and of coil_b on the lines: shape (3 fields, lines, 3, n)."""
        y = np.atleast_1d(y)
        b = hs.lines(spectra, grid, x=x, y=y, z=z, z_ref=z_ref, d_dz=d_dz, d_dy=d_dy, decay_lengths=DECAY_LENGTHS)
        if d_dz == 0 and d_dy == 0:  # the images' derivatives are smaller still by about 3/period: left in
            b = b - np.stack([hs.image_correction(*m, grid, x=x, y=y, z=z) for m in moments])
        return np.moveaxis(b, 1, 2)

    per_coil: list[list[StringSensing]] = [[], []]
    areas = st.areas()
    for s in range(st.count):
        rod = Rod.build(x, area=float(areas[s]), chi=st.permeability - 1.0, saturation=st.saturation / mu_0)
        y_lines = ys[s] + LATERAL
        floor = CLEARANCE + st.outers[s] / 2 + max(construction.top, 0.0) - zs[s]
        dz = dz_all[dz_all >= floor - 1e-12]
        levels = np.stack([field(y_lines, zs[s] + d) for d in dz], axis=2)  # (3, lines, levels, 3, n)
        rest, up = field(y_lines, zs[s]), field(y_lines, zs[s], d_dz=1)
        side = field(ys[s], zs[s], d_dy=1)[:, 0]
        centre = int(np.flatnonzero(LATERAL == 0)[0])
        # the magnets' field: each line's rest, then the table's levels from it (one solve for both coils)
        m_lines = rod.magnetisation(rest[0], start=rod.axial(rest[0][centre][0]))  # (lines, 3, n)
        at = [rod.operating(rest[0][j][0], mx=m_lines[j, 0]) for j in range(len(LATERAL))]
        m_levels = rod.magnetisation(levels[0], start=m_lines[:, None, 0])
        m_rest = m_lines[centre]
        peak = int(np.argmax(np.linalg.norm(m_rest, axis=0)))
        polarization = float(mu_0 * np.linalg.norm(m_rest[:, peak]))
        differential = 1.0 + float(at[centre].chi_d[peak])
        for c in (0, 1):
            flux = rod.flux_of(m_levels, levels[1 + c])  # (lines, levels)
            rest0, rest1, dz0, dz1, dy0, dy1 = rest[0], rest[1 + c], up[0], up[1 + c], side[0], side[1 + c]
            lat_z = np.array([rod.sensing(rest0[j], rest1[j], dz0[j], dz1[j], axis=2, at=at[j]).sum() * rod.step for j in range(len(LATERAL))])
            along_z = rod.sensing(rest0[centre], rest1[centre], dz0[centre], dz1[centre], axis=2, at=at[centre])
            along_y = rod.sensing(rest0[centre], rest1[centre], dy0, dy1, axis=1, at=at[centre])
            i0 = int(np.flatnonzero(np.abs(dz) < 1e-12)[0])
            table = flux - flux[centre, i0]
            h2, h3 = harmonics(dz, table[centre], amplitude=H_AMPLITUDE)
            pick = np.searchsorted(LATERAL, DROPOUT)
            per_coil[c].append(
                StringSensing(
                    string=st.count - s,
                    y=float(ys[s]),
                    z=float(zs[s]),
                    x=x,
                    along_z=along_z,
                    along_y=along_y,
                    sensitivity_z=float(along_z.sum() * rod.step),
                    sensitivity_y=float(along_y.sum() * rod.step),
                    lateral=DROPOUT.copy(),
                    lateral_sensitivity=lat_z[pick],
                    dy=LATERAL.copy(),
                    dz=dz,
                    flux=table,
                    h2_db=h2,
                    h3_db=h3,
                    polarization=polarization,
                    differential=differential,
                )
            )
    return PickupSensing(
        coil_a=tuple(per_coil[0]),
        coil_b=tuple(per_coil[1]),
        positions=(float(position_a), float(position_b)),
        digest=construction.digest(geometry_a, geometry_b, float(position_a), float(position_b), float(refine), settings()),
        steel=(SteelResponse.from_boxes(cells_a), SteelResponse.from_boxes(cells_b)),
    )


def settings() -> dict:
    """The numerical settings a result depends on (part of its cache key)."""
    from . import construction as C

    return {
        "step_x": STEP_X,
        "reach_x": REACH_X,
        "lateral": LATERAL.tolist(),
        "dropout": DROPOUT.tolist(),
        "vertical": VERTICAL,
        "clearance": CLEARANCE,
        "h_amplitude": H_AMPLITUDE,
        "winding_nodes": WINDING_NODES,
        "applied_nodes": APPLIED_NODES,
        "decay_lengths": DECAY_LENGTHS,
        "period_factor": hs.PERIOD_FACTOR,
        "image_shells": hs.IMAGE_SHELLS,
        "image_step": hs.IMAGE_STEP,
        "top_slab": C.TOP_SLAB,
        "cell_top": C.CELL_TOP,
        "cell_body": C.CELL_BODY,
        "model": C.MODEL_VERSION,
    }


def harmonics(dz: np.ndarray, flux: np.ndarray, *, amplitude: float, degree: int = 8, points: int = 64) -> tuple[float, float]:
    """2nd and 3rd harmonics (dB re the fundamental) of dΦ/dt for z = amplitude·sin(ωt).

    dz, flux : the flux linkage Φ(dz) on its vertical offsets (m, Wb);
    a polynomial of ``degree`` fitted over them stands for Φ (the flux is
    analytic away from the pole faces, so the fit converges geometrically).
    """
    scale = float(np.abs(dz).max())
    p = np.polynomial.Polynomial.fit(dz / scale, flux, deg=min(degree, len(dz) - 1))
    theta = 2 * np.pi * np.arange(points) / points
    u = amplitude * np.sin(theta)
    emf = p.deriv()(u / scale) / scale * amplitude * np.cos(theta)  # dΦ/dt per ω
    spec = np.abs(np.fft.rfft(emf))
    return float(20 * np.log10(spec[2] / spec[1])), float(20 * np.log10(spec[3] / spec[1]))
