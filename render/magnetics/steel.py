"""Soft steel and magnets as permeable bodies: their polarisation in a field, solved.

Each part is a rectangular block, cut into uniformly polarised cuboid cells.
A cell's polarisation J (T) answers the field B there (the applied field plus
every cell's own) linearly:

    J = J_r + χ·B_local,   (I − χ·T)·J = J_r + χ·B_applied,

with J_r the magnet's remanence (zero for steel) and χ = µr − 1 its
(recoil or small-signal) susceptibility; T is the cells' interaction
matrix. This is the volume-integral (moment) method of Chadebec, Coulomb &
Janet, "A review of magnetostatic moment method", IEEE Trans. Magn. 42(4),
515–520, 2006, with the cells' fields in closed form (Engel-Herbert &
Hesjedal, J. Appl. Phys. 97, 074504, 2005). The solve is
magpylib-material-response's (``apply_demag``: Boisselet et al., built on
magpylib: Ortner & Coliado Bandeira, SoftwareX 11, 100466, 2020).

Why this solver and not a finite-element one (GetDP and gmsh): a pickup is a
few blocks in open space, which the moment method handles without meshing
the air or placing an outer boundary, and its solver is a Python package
that runs offline on a CPU in about a second for the few hundred cells a
pickup needs. GetDP and gmsh would add a mesh generator, a solver process
and files; nothing in the pickup needs what only they give (nonlinear B–H
curves, eddy currents in 3-D). They check this solver instead: an
axisymmetric GetDP solve of a round coil around a steel rod gives the rod's
inductance rise (tests/magnetics/test_core_fe.py).

Limits, stated:

- linear materials: steel below saturation (a pickup's bias in its blades is
  a few hundred mT, far below the 1.5–2 T of low-carbon steel; from
  memory), magnets on their straight recoil line (true for ferrite and NdFeB;
  AlNiCo's working point in a short magnet can fall past the knee of its
  curve, where this overstates its field: see :mod:`.magnets`);
- the same permeability for the magnet's bias field and for the coil's small
  signal (the incremental permeability at the bias point is what the coil
  sees; one documented default serves both, see :mod:`.construction`);
- cells are uniformly polarised: the field within about one cell size of a
  face shows the cells' granularity (the strings stay farther away).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .halfspace import Boxes


@dataclass(frozen=True)
class Part:
    """One block of a pickup: steel or magnet.

    name : str, for messages
    lo, hi : (x, y, z), m, opposite corners
    susceptibility : χ = µr − 1 (steel), or the magnet's recoil µr − 1
    remanence : (Jx, Jy, Jz), T, the magnet's remanent polarisation (zero for steel)
    cells : (nx, ny, nz), how it is cut
    """

    name: str
    lo: tuple
    hi: tuple
    susceptibility: float
    remanence: tuple = (0.0, 0.0, 0.0)
    cells: tuple = (1, 1, 1)

    @property
    def size(self) -> np.ndarray:
        return np.asarray(self.hi, float) - np.asarray(self.lo, float)

    @property
    def centre(self) -> np.ndarray:
        return (np.asarray(self.hi, float) + np.asarray(self.lo, float)) / 2.0

    def boxes(self, polarization=None) -> Boxes:
        """The part's cells as boxes, with ``polarization`` (n, 3) T or the remanence."""
        n = np.asarray(self.cells, int)
        lo = np.asarray(self.lo, float)
        step = self.size / n
        ijk = np.stack(np.meshgrid(*(np.arange(c) for c in n), indexing="ij"), axis=-1).reshape(-1, 3)
        cl = lo + ijk * step
        pol = np.broadcast_to(np.asarray(self.remanence, float), cl.shape) if polarization is None else polarization
        return Boxes(cl, cl + step, pol)


MISSING = "[construction] needs the packages magpylib and magpylib-material-response (Python 3.11 or later): pip install magpylib magpylib-material-response"


def require_installed() -> None:
    """Refuse (:class:`InputError`) where the solver's packages are not installed, without importing them
    (importing magpylib takes about 0.3 s, which a design whose solve is cached does not need)."""
    import importlib.util

    if any(importlib.util.find_spec(name) is None for name in ("magpylib", "magpylib_material_response")):
        raise InputError(MISSING)


def _require():
    try:
        import magpylib
        from magpylib_material_response.demag import demag_tensor
    except ImportError:
        raise InputError(MISSING) from None
    return magpylib, demag_tensor


@dataclass(frozen=True)
class Excitation:
    """What drives a solve: an applied field and/or the magnets' remanence.

    applied : the applied field B (T) at points (n, 3) → (n, 3), e.g. a coil's
        own field at 1 A; None for none
    remanence : include the magnets' remanence (the bias field), or leave it
        out (a coil's small signal sees only the permeabilities)
    """

    applied: Callable[[np.ndarray], np.ndarray] | None = None
    remanence: bool = True


MAX_CELLS = 4000  # cells of one solve: the demo constructions take 500 to 930, and 4000 about 4.6 GB (below)
MEMORY_BYTES_PER_CELL_SQUARED = 288  # the interaction matrix (3n × 3n float64, 72·n² bytes) held about four times at the peak: our estimate from the arrays the solve holds, no source


def solve_many(parts, excitations) -> list[Boxes]:
    """Every cell's polarisation for each excitation, from one interaction matrix.

    The matrix T is magpylib-material-response's (``demag_tensor``, point
    matching of the cells' closed-form fields); the system
    (I − χ·T)·J = J_r + χ·B_applied is then solved once per excitation
    (LU, all right-hand sides at once), as that package's ``apply_demag``
    does for one (the tests compare the two).

    Returns one :class:`~render.magnetics.halfspace.Boxes` per excitation,
    cells in the parts' order and each part's cell order (x slowest, z fastest).
    """
    import scipy.linalg

    all_boxes = [p.boxes() for p in parts]
    cells = Boxes.join(*all_boxes)
    n = len(cells.lo)
    if n > MAX_CELLS:
        big = max(parts, key=lambda p: int(np.prod(p.cells)))
        raise InputError(
            f"[construction]: its magnets and steel need {n} cells to solve, more than {MAX_CELLS} (the solve's memory grows as their square:"
            f" about {MEMORY_BYTES_PER_CELL_SQUARED * n * n / 1e9:.0f} GB); the largest part is the {big.name},"
            f" {' × '.join(f'{(h - lo) * 1e3:g}' for lo, h in zip(big.lo, big.hi))} mm: check its sizes (a height in cm where mm was meant?),"
            " or, for a convergence check, a smaller refine"
        )
    magpy, demag_tensor = _require()
    chi = np.concatenate([np.full(len(b.lo), p.susceptibility, float) for p, b in zip(parts, all_boxes)])
    sources = [magpy.magnet.Cuboid(dimension=hi - lo, polarization=(0.0, 0.0, 1.0), position=(hi + lo) / 2) for lo, hi in zip(cells.lo, cells.hi)]
    T = demag_tensor(sources) * magpy.mu_0  # (3, n, n, 3), T[k, i, j, m]: field k at i from unit J_m at j
    T = T.swapaxes(2, 3).reshape(3 * n, 3 * n).T  # rows: (component, observer), columns: (component, source)
    s = np.tile(chi, 3)  # susceptibility in the polarisation's layout x1..xn, y1..yn, z1..zn
    Q = np.eye(3 * n) - s[:, None] * T
    centres = (cells.lo + cells.hi) / 2
    rhs = np.empty((3 * n, len(excitations)))
    for e, ex in enumerate(excitations):
        j0 = cells.polarization if ex.remanence else np.zeros((n, 3))
        b = np.zeros((n, 3)) if ex.applied is None else np.asarray(ex.applied(centres), float)
        rhs[:, e] = j0.T.ravel() + s * b.T.ravel()
    J = scipy.linalg.solve(Q, rhs, overwrite_a=True, check_finite=False)
    return [Boxes(cells.lo, cells.hi, J[:, e].reshape(3, n).T) for e in range(len(excitations))]


def solve(parts, *, applied: Callable[[np.ndarray], np.ndarray] | None = None, remanence: bool = True) -> Boxes:
    """Every cell's polarisation for one excitation (see :func:`solve_many`)."""
    return solve_many(parts, [Excitation(applied, remanence)])[0]
