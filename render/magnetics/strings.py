"""A steel string magnetised by the pickup's field, and the flux it puts through a coil.

Model: induced dipoles with demagnetising factors. A string is a thin
cylinder along x with magnetic cross-section A (its core plus a share of its
wrap, :func:`magnetic_area`), of a linear, soft steel of susceptibility χ.
Each element of length dx carries the moment dm = M·A·dx, with

- across the string (y, z): a long cylinder's transverse demagnetising
  factor 1/2 (Osborn, "Demagnetizing factors of the general ellipsoid",
  Phys. Rev. 67, 351, 1945, the limit of a long cylinder), so
  M⊥ = χ/(1 + χ/2) · B0⊥/µ0 ≈ 2·B0⊥/µ0 for any steel;
- along the string (x): M_x = χ·(B0x/µ0 + H_d), where H_d is the field of
  the string's own magnetic charges −A·dM_x/dx. The string is cut into
  segments of uniform M_x; the charge at each joint is a disc of the
  string's radius, whose field on the axis at a distance s is
  σ/2·(sign s − s/√(s² + r²)) (Jackson, *Classical Electrodynamics*,
  3rd ed., §5.9, the magnetic-charge form of a uniformly magnetised
  cylinder). For a uniform field this is the classic thin rod, whose
  demagnetisation the tests compare with magpylib-material-response's
  cells.

The flux linkage of a coil from the magnetised string follows by
reciprocity (Jackson §5.17): with B1 the coil's own field at 1 A, computed
with the pickup's steel present,

    Φ = ∫ M·B1 dV = A ∫ (M⊥·B1⊥ + M_x·B1x) dx.

What the model leaves out: the string's own field acting back on the steel
and magnets (it changes the string's magnetisation by about the string's
radius over its height, a few per cent; reciprocity already carries the
steel's answer to the string's moment into Φ), saturation of the string
(the applied field is tens of mT, but a long string multiplies it by
nearly χ along its axis: over strong magnets the linear model's
polarisation passes the 2 T where string steel saturates, from memory), and the string's bending beyond first order
(its flux is that of a straight string; a vibrating string's displacement
varies over metres, the pickup senses centimetres). To first order a bent
string is in: :meth:`Rod.sensing` carries its tilt (the slope w' of the
displacement turns its axis, and with it its large magnetisation along
the axis), which the tests compare with magpylib-material-response's cells
of a bent chain.

Horton & Moore, "Modeling the magnetic pickup of an electric guitar",
Am. J. Phys. 77(2), 144–150, 2009, treat the same physics with magnetic
charges on a single pole; the tests compare the two.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import mu_0


def transverse_susceptibility(chi: float) -> float:
    """χ⊥ = χ/(1 + χ/2): a long cylinder's apparent susceptibility across its axis (factor 1/2)."""
    return chi / (1.0 + chi / 2.0)


def magnetic_area(core: float, outer: float, share: float) -> float:
    """A string's magnetic cross-section (m²): the core plus ``share`` of the wrap's annulus.

    core, outer : m, core and outer diameters (equal for a plain string)
    share : 0..1, the part of the wrap's annulus counted as magnetic steel
    """
    return math.pi / 4.0 * (core**2 + share * (outer**2 - core**2))


@dataclass(frozen=True, eq=False)
class Rod:
    """A string's samples along x and its longitudinal response.

    x : np.ndarray [shape=(n,)], m, segment centres (uniform spacing)
    area : m², magnetic cross-section
    chi : the string steel's susceptibility
    response : np.ndarray [shape=(n, n)], M_x = response @ (B0x/µ0): (I − χK)⁻¹·χ
    """

    x: np.ndarray
    area: float
    chi: float
    response: np.ndarray

    @property
    def step(self) -> float:
        return float(self.x[1] - self.x[0])

    @classmethod
    def build(cls, x: np.ndarray, *, area: float, chi: float, longitudinal: bool = True) -> Rod:
        """The rod's longitudinal response for segments centred on ``x`` (uniform).

        longitudinal : False leaves the magnetisation along the string out
            (the transverse-only model of a single-pole charge model, for comparisons)
        """
        x = np.asarray(x, float)
        if x.ndim != 1 or x.size < 2:
            raise ValueError(f"a rod needs at least two samples along x (uniformly spaced), not shape {x.shape}")
        if not longitudinal:
            return cls(x=x, area=area, chi=chi, response=np.zeros((x.size, x.size)))
        h = x[1] - x[0]
        r = math.sqrt(area / math.pi)
        joints = np.r_[x - h / 2, x[-1] + h / 2]  # n + 1 joints
        s = x[:, None] - joints[None, :]  # (n, n+1)
        f = 0.5 * (np.sign(s) - s / np.sqrt(s * s + r * r))
        # σ at joint b = M_{b−1} − M_b (zero outside the rod)
        d = np.zeros((x.size + 1, x.size))
        idx = np.arange(x.size)
        d[idx, idx] = -1.0
        d[idx + 1, idx] = 1.0
        K = f @ d
        response = np.linalg.solve(np.eye(x.size) - chi * K, chi * np.eye(x.size))
        return cls(x=x, area=area, chi=chi, response=response)

    def magnetisation(self, b0: np.ndarray) -> np.ndarray:
        """M (A/m) of the string in the field ``b0`` (T) at its samples: shape (..., 3, n) → (..., 3, n)."""
        b0 = np.asarray(b0, float)
        chi_t = transverse_susceptibility(self.chi)
        m = np.empty_like(b0)
        m[..., 1:, :] = chi_t * b0[..., 1:, :] / mu_0
        m[..., 0, :] = np.einsum("ij,...j->...i", self.response, b0[..., 0, :] / mu_0)
        return m

    def flux(self, b0: np.ndarray, b1: np.ndarray) -> np.ndarray:
        """Φ (Wb per A of the coil's field, i.e. the flux linkage) of the string: shape (...).

        b0 : np.ndarray [shape=(..., 3, n)], T, the bias field along the string
        b1 : np.ndarray [shape=(..., 3, n)], T/A, the coil's own field at 1 A
        """
        m = self.magnetisation(b0)
        return self.area * self.step * np.einsum("...cn,...cn->...", m, np.asarray(b1, float))

    def sensing(self, b0, b1, db0, db1, *, axis: int = 2) -> np.ndarray:
        """dΦ/d(displacement of the element at each sample) per metre of string: shape (n,), Wb/m².

        b0, b1 : np.ndarray [shape=(3, n)], the fields at rest (T, T/A)
        db0, db1 : np.ndarray [shape=(3, n)], their derivatives along the
            motion, T/m and T/(A·m)
        axis : the motion's component, 2 (z, vertical) or 1 (y, sideways)

        With the displacement w(x) along ê (ê the unit vector of ``axis``),
        the string's axis turns to t = x̂ + w'·ê and its element sits at
        x + w·ê. Its magnetisation there (:meth:`magnetisation`, with the
        axis t in place of x̂) is

            M = χ⊥/µ0·(B0 − (B0·t)·t) + M∥·t,   M∥ = R·(B0·t)/µ0,

        R the rod's longitudinal ``response``, and Φ = A ∫ M·B1 dx. To first
        order in w, with B0·t → B0x + w·∂B0x + w'·B0e and B1·t likewise
        (e the motion's component),

            δΦ = A ∫ w·[χ⊥/µ0·(∂B0⊥·B1⊥ + B0⊥·∂B1⊥) + (Rᵀ·B1x)·∂B0x/µ0 + Mx·∂B1x] dx
               + ∫ w'·G dx,
            G = A·[(Rᵀ·B1x)·B0e/µ0 + Mx·B1e − χ⊥/µ0·(B0e·B1x + B0x·B1e)],

        the first line being the element's own moment and coupling moved
        (the transpose of the response carries what the whole rod makes of
        b0x: Σᵢ B1xᵢ·Σⱼ Rᵢⱼ·δB0xⱼ = Σⱼ (RᵀB1x)ⱼ·δB0xⱼ). G is the tilt's:
        (a) the longitudinal moment Mx turned by w' couples to B1e, (b) the
        bias field's component B0e along the tilted axis is answered by the
        rod's response, seen through B1x, and the part across the axis
        loses those same components. By parts, ∫ w'·G dx = −∫ w·G' dx (the
        string's ends lie outside the field, G = 0 there), so the sensing
        function is

            s = A·[…] − G',

        with w' taken as the central difference (one-sided at the ends)
        and −G' as its exact transpose, so that the sum of the slope part
        is zero to rounding: summed over the samples (times the spacing),
        s is dΦ for the whole string moved (a translation has w' = 0).
        """
        b0, b1, db0, db1 = (np.asarray(a, float) for a in (b0, b1, db0, db1))
        if axis not in (1, 2):
            raise ValueError(f"axis must be 1 (y) or 2 (z), not {axis!r}")
        chi_t = transverse_susceptibility(self.chi)
        trans = chi_t / mu_0 * (np.einsum("cn,cn->n", db0[1:], b1[1:]) + np.einsum("cn,cn->n", b0[1:], db1[1:]))
        mx = self.response @ (b0[0] / mu_0)
        adj = self.response.T @ b1[0]
        longi = adj * db0[0] / mu_0 + mx * db1[0]
        return self.area * (trans + longi) + self.slope(b0, b1, axis=axis)

    def slope(self, b0, b1, *, axis: int) -> np.ndarray:
        """The tilt's part of :meth:`sensing`, −G' (Wb/m²): shape (n,); its sum is zero to rounding.

        G = A·[(Rᵀ·B1x)·B0e/µ0 + Mx·B1e − χ⊥/µ0·(B0e·B1x + B0x·B1e)], e = ``axis``,
        and −G' is the transpose of the central difference acting on it.
        """
        b0, b1 = np.asarray(b0, float), np.asarray(b1, float)
        chi_t = transverse_susceptibility(self.chi)
        mx = self.response @ (b0[0] / mu_0)
        adj = self.response.T @ b1[0]
        g = self.area * (adj * b0[axis] / mu_0 + mx * b1[axis] - chi_t / mu_0 * (b0[axis] * b1[0] + b0[0] * b1[axis]))
        return slope_adjoint(g, self.step)


def slope_adjoint(g: np.ndarray, step: float) -> np.ndarray:
    """Dᵀ·g, D the central difference (one-sided at the ends, as ``np.gradient``): ∫ w'·g dx = ∫ w·(Dᵀg) dx.

    D·1 = 0, so Σ Dᵀg = 0: a translation (w' = 0) gets nothing from it.
    """
    g = np.asarray(g, float)
    out = np.zeros_like(g)
    if g.size < 2:
        return out
    h = float(step)
    # row 0 of D: (w1 − w0)/h; rows 1..n−2: (w_{i+1} − w_{i−1})/2h; row n−1: (w_{n−1} − w_{n−2})/h
    out[0] -= g[0] / h
    out[1] += g[0] / h
    out[-1] += g[-1] / h
    out[-2] -= g[-1] / h
    if g.size > 2:
        out[2:] += g[1:-1] / (2 * h)
        out[:-2] -= g[1:-1] / (2 * h)
    return out
