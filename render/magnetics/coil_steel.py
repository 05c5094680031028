"""What a coil's pole pieces and magnets add to the flux it links from outside sources.

A constructed pickup's steel (and its magnets, through their recoil
permeability) gathers an outside field into the coils. In a linear medium
the coil and a source are reciprocal: the flux linkage of the coil from a
source equals the flux linkage of the source from the coil at 1 A, with the
steel present both ways (the mutual inductance is symmetric; Smythe,
*Static and Dynamic Electricity*, 3rd ed., 1968, §8.02; for permeable
media, Jackson, *Classical Electrodynamics*, 3rd ed., §5.17). So one solve
of the steel under the coil's own field B₁ at 1 A (:func:`.steel.solve_many`,
the solve the sensing already makes) gives the coil's hum pickup with the
steel for every source:

- a point **dipole** m at r: Φ = m·(B₁(r) + B_J(r)), with B_J the field of
  the steel's polarisation J₁ induced by B₁ (each cell a uniformly polarised
  cuboid, magpylib's closed form: Ortner & Coliado Bandeira, SoftwareX 11,
  100466, 2020);
- a **uniform** field B: Φ = B·(turns_area·ẑ + Σ_cells V·J₁/µ0). The steel's
  total moment per ampere is the turns-area vector it adds: a distant
  source sees the coil and its magnetised steel as one dipole of that
  moment. It has x and y components where the steel is not symmetric about
  the coil's axis (a bar magnet under both coils).

The cells are uniformly polarised, so the steel's own field is exact for
that cell model at any distance; near a cell (within about its size) it
shows the cells' granularity, which no hum source reaches (a source must
lie outside the coils' outlines).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0 as MU0  # H/m, CODATA

CHUNK = 200_000  # cell–point pairs per call of magpylib's closed form (memory)


@dataclass(frozen=True, eq=False)
class SteelResponse:
    """The polarisation of a pickup's steel and magnets when one coil carries 1 A.

    lo, hi : np.ndarray [shape=(n, 3)], m, each cell's opposite corners
    polarization : np.ndarray [shape=(n, 3)], T per A, each cell's J₁ (no remanence)
    """

    lo: np.ndarray
    hi: np.ndarray
    polarization: np.ndarray

    @classmethod
    def from_boxes(cls, boxes) -> SteelResponse:
        """From the solver's :class:`~render.magnetics.halfspace.Boxes` of one coil's excitation."""
        return cls(np.asarray(boxes.lo, float), np.asarray(boxes.hi, float), np.asarray(boxes.polarization, float))

    @property
    def turns_area(self) -> np.ndarray:
        """The turns-area vector the steel adds (m²), shape (3,): Σ V·J₁/µ0, its moment per ampere."""
        volume = np.prod(self.hi - self.lo, axis=1)
        return (volume[:, None] * self.polarization).sum(axis=0) / MU0

    def field(self, points) -> np.ndarray:
        """The steel's field B_J at ``points`` (shape (..., 3), m) per ampere in the coil: shape (..., 3), T/A."""
        from magpylib.func import cuboid_field

        p = np.asarray(points, float)
        flat = p.reshape(-1, 3)
        n = len(self.lo)
        dims, centres = self.hi - self.lo, (self.hi + self.lo) / 2.0
        out = np.zeros_like(flat)
        step = max(1, CHUNK // max(n, 1))
        for s in range(0, len(flat), step):
            q = flat[s : s + step]
            obs = np.repeat(q, n, axis=0)
            b = cuboid_field("B", obs, np.tile(dims, (len(q), 1)), np.tile(self.polarization, (len(q), 1)), positions=np.tile(centres, (len(q), 1)))
            out[s : s + len(q)] = b.reshape(len(q), n, 3).sum(axis=1)
        return out.reshape(p.shape)


def respond(parts, coil) -> SteelResponse:
    """The steel's response to ``coil`` (a :class:`~render.magnetics.coil.PlacedCoil` with a geometry) at 1 A."""
    from .steel import Excitation, solve_many

    return SteelResponse.from_boxes(solve_many(parts, [Excitation(coil.field_per_amp, False)])[0])
