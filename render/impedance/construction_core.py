"""A coil's core parts from a pickup's construction: how much each raises the inductance, and its eddy loss.

The rise at DC comes from the construction's own magnetics solve
(:mod:`render.magnetics.steel`, the moment method of Chadebec, Coulomb &
Janet, IEEE Trans. Magn. 42(4), 2006): the coil's field at 1 A, B₁, is
applied to the steel and the magnets (their small-signal permeabilities, no
remanence), and each cell i answers with a polarisation J_i over its volume
V_i. By reciprocity (Jackson, *Classical Electrodynamics*, 3rd ed., §5.17)
the flux linkage that cell adds to the coil is its moment m_i = J_i·V_i/μ0
times the coil's free-space field there, so the inductance the parts add is

    ΔL = Σ_i m_i · B₁(r_i)     (H, per ampere of coil current)            (1)

summed per part (a blade, a screw, a magnet) over its cells. The parts of
the other coil count too (they are weakly in this coil's field).

The frequency dependence of each part's share is the 1-D diffusion solution
of :mod:`render.impedance.eddy` (a blade or bar as a slab across the
thinner of its two sides across the coil's axis, since the coil's field runs
along that axis and the eddy currents loop around it; a screw as a cylinder), diluted by its demagnetising factor
along that axis (Aharoni 1998, the screw as the square prism of its section and height). The shared bar
magnet of steel blades and steel poles is the exception: it lies flat under the steel and carries the coil's
flux along x, from one coil's steel to the other's, so its factor is taken along x and its slab is its height
(along z the flat bar's factor is near 1, and would ask a fill above 1 of it). The part's fill (eq. (2) of :mod:`.eddy`) is the one that makes
its DC rise equal eq. (1):

    fill = ΔL / (L_air · (μ_app(0) − 1)),

so Z_core(jω) = jω·ΔL·(μ_app(jω) − 1)/(μ_app(0) − 1): the field solve gives
the size of each part's share, the diffusion model its shape in frequency.
This leaves out the parts' mutual shielding at high frequency and treats each
part's eddy currents as those of an infinite slab or cylinder (see :mod:`.eddy`).

Materials: the blades and screws are low-carbon steel (σ = 6 MS/m, from
memory) at the construction's ``steel_permeability``; the magnets conduct
as their grade's family does (:data:`render.impedance.materials.MATERIALS`:
ceramic grades as hard ferrite, AlNiCo, sintered NdFeB), at the
construction's recoil permeability. A magnet given by its remanence alone,
without a grade, is taken as non-conducting (hard ferrite); give the grade
for a conducting magnet.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0

from .eddy import CorePart, apparent_permeability, prism_demagnetising_factor
from .materials import ALNICO, FERRITE, NDFEB, STEEL, Material

BAR = "bar magnet"  # the shared bar under both coils' steel (render.magnetics.construction)
VERSION = 4  # bump when eq. (1)'s numbers change, so cached results are recomputed
MIN_SHARE = 1e-6  # a part adding less than this share of the air-core inductance is left out


@dataclass(frozen=True)
class PartRise:
    """One part's DC inductance rise in one coil, eq. (1).

    name : e.g. "coil_a blade", "bar magnet"
    rise : H
    shape : "slab" or "cylinder"
    size : m, the slab's thickness or the cylinder's diameter
    dims : (x, y, z) extent, m (a screw: its square prism)
    magnet : whether it is a magnet (else steel)
    """

    name: str
    rise: float
    shape: str
    size: float
    dims: tuple
    magnet: bool


def magnet_material(grade: str | None, permeability: float) -> Material:
    """The eddy-current material of a construction's magnets (module text)."""
    base = FERRITE
    if grade:
        if grade.startswith("alnico"):
            base = ALNICO
        elif grade.startswith("ndfeb"):
            base = NDFEB
    return Material(base.name, base.conductivity, float(permeability), base.source)


def steel_material(permeability: float) -> Material:
    return Material(STEEL.name, STEEL.conductivity, float(permeability), STEEL.source)


def _physical(name: str) -> str:
    for tail in (" top", " body"):
        if name.endswith(tail):
            return name[: -len(tail)]
    return name


def cell_linkage(cells, field_per_amp) -> np.ndarray:
    """Eq. (1) per cell: m_i · B₁(r_i) in H, with m_i = J_i·V_i/μ0 (``cells``: solved Boxes)."""
    centres = (cells.lo + cells.hi) / 2.0
    volume = np.prod(cells.hi - cells.lo, axis=1)
    return np.einsum("ij,ij->i", cells.polarization * (volume / mu_0)[:, None], field_per_amp(centres))


def part_rises(construction, geometry_a, geometry_b, *, position_a: float, position_b: float, solved=None) -> dict[str, tuple[PartRise, ...]]:
    """Eq. (1) per coil and per part: ``{"coil_a": (PartRise, …), "coil_b": (…)}``.

    solved : (cells of coil_a, cells of coil_b) or None
        The cells' polarisation with each coil at 1 A (``lo``, ``hi``, ``polarization``), when the
        construction's own solve has them (:attr:`render.magnetics.sensing.PickupSensing.steel`):
        the same parts and excitations, so the system is not solved again.

    Needs magpylib and magpylib-material-response, as the construction does.
    """
    from ..magnetics.coil import coil_centres, placed_coil
    from ..magnetics.sensing import APPLIED_NODES
    from ..magnetics.steel import Excitation, solve_many

    ca, cb = coil_centres(position_a, position_b)
    coils = (placed_coil(geometry_a, centre=ca, nodes=APPLIED_NODES), placed_coil(geometry_b, centre=cb, nodes=APPLIED_NODES))
    parts = construction.parts(ca, cb, geometry_a, geometry_b)
    counts = [int(np.prod(p.cells)) for p in parts]
    if solved is None or any(len(c.lo) != sum(counts) for c in solved):
        solved = solve_many(parts, [Excitation(c.field_per_amp, False) for c in coils])
    owner = np.repeat(np.arange(len(parts)), counts)
    out = {}
    for name, coil, cells in zip(("coil_a", "coil_b"), coils, solved):
        linkage = cell_linkage(cells, coil.field_per_amp)
        rises: dict[str, float] = {}
        extent: dict[str, list] = {}
        for k, p in enumerate(parts):
            key = _physical(p.name)
            rises[key] = rises.get(key, 0.0) + float(linkage[owner == k].sum())
            extent.setdefault(key, []).append((np.asarray(p.lo, float), np.asarray(p.hi, float)))
        items = []
        for key, rise in rises.items():
            lo = np.min([e[0] for e in extent[key]], axis=0)
            hi = np.max([e[1] for e in extent[key]], axis=0)
            dims = tuple(float(v) for v in hi - lo)
            magnet = "magnet" in key
            if " pole " in key:  # a screw: for its eddy currents, the square prism of its section and height
                side = math.sqrt(sum(float(np.prod(h - lo_)) for lo_, h in extent[key]) / dims[2])
                dims = (side, side, dims[2])
                shape, size = "cylinder", side * 2.0 / math.sqrt(math.pi)
            elif key == BAR:  # the shared bar carries the coil's flux along x, between the coils' steel: a slab across its height
                shape, size = "slab", dims[2]
            else:  # the coil's field runs along z, so the eddy currents loop in x-y: a slab across the thinner of x and y
                shape, size = "slab", min(dims[0], dims[1])
            items.append(PartRise(key, rise, shape, size, dims, magnet))
        out[name] = tuple(items)
    return out


def core_parts(rises, *, air_inductance: float, steel: Material, magnet: Material) -> tuple[CorePart, ...]:
    """The :class:`~render.impedance.eddy.CorePart` of each part whose rise counts (module text)."""
    out = []
    for r in rises:
        if not r.rise > MIN_SHARE * air_inductance:
            continue
        material = magnet if r.magnet else steel
        x, y, z = r.dims
        d = prism_demagnetising_factor(y, z, x) if r.name == BAR else prism_demagnetising_factor(x, y, z)  # along the part's flux
        rise = float(np.real(apparent_permeability(material.relative_permeability, d))) - 1.0
        if rise <= 1e-9:
            continue
        out.append(CorePart(r.shape, r.size, material, r.rise / (air_inductance * rise), d))
    return tuple(out)
