"""A steel string magnetised by the pickup's field, and the flux it puts through a coil.

Model: induced dipoles with demagnetising factors. A string is a thin
cylinder along x with magnetic cross-section A (its core plus a share of its
wrap, :func:`magnetic_area`), of a soft steel. Each element of length dx
carries the moment dm = M·A·dx, with

- across the string (y, z): a linear steel of susceptibility χ and a long
  cylinder's transverse demagnetising factor 1/2 (Osborn, "Demagnetizing
  factors of the general ellipsoid", Phys. Rev. 67, 351, 1945, the limit of
  a long cylinder), so M⊥ = χ⊥·B0⊥/µ0, χ⊥ = χ/(1 + χ/2) ≈ 2 for any steel.
  Kept linear: across its axis a string is polarised to about 2·B0⊥, a
  tenth of a tesla over the strongest magnets, far from saturation;
- along the string (x): M_x = f(H_x), H_x = B0x/µ0 + H_d, where H_d is the
  field of the string's own magnetic charges −A·dM_x/dx, and f is the
  steel's anhysteretic curve, the Fröhlich–Kennelly relation

      f(H) = Ms·H/(Hk + |H|),   Hk = Ms/χ,

  (Fröhlich 1881, Kennelly 1891; as given by Bozorth, *Ferromagnetism*,
  1951, ch. 11, and Jiles, *Introduction to Magnetism and Magnetic
  Materials*, 2nd ed., 1998): its initial susceptibility is χ, so weak
  fields give the linear steel, and M tends to the saturation Ms. Its
  differential susceptibility is χ_d = f'(H) = χ·(Hk/(Hk + |H|))².

The string is cut into segments of uniform M_x; the charge at each joint is
a disc of the string's radius, whose field on the axis at a distance s is
σ/2·(sign s − s/√(s² + r²)) (Jackson, *Classical Electrodynamics*, 3rd ed.,
§5.9, the magnetic-charge form of a uniformly magnetised cylinder), so
H_d = K·M_x with K the segments' demagnetising matrix. The segments'
magnetisation solves

    M_x = f(H0x + K·M_x),   H0x = B0x/µ0,

by Newton's method (Jacobian I − diag(χ_d)·K), one rod at a time or many
at once. For a linear steel (Ms = ∞) this is M_x = R·H0x with the response
R = (I − χK)⁻¹·χ, the classic thin rod whose demagnetisation the tests
compare with magpylib-material-response's cells. A small change of the
applied field changes M_x by the differential response at the operating
point, δM_x = R_d·δH0x, R_d = (I − diag(χ_d)·K)⁻¹·diag(χ_d).

The flux linkage of a coil from the magnetised string follows by
reciprocity (Jackson §5.17): with B1 the coil's own field at 1 A, computed
with the pickup's steel present,

    Φ = ∫ M·B1 dV = A ∫ (M⊥·B1⊥ + M_x·B1x) dx.

What the model leaves out: the string's own field acting back on the steel
and magnets (it changes the string's magnetisation by about the string's
radius over its height, a few per cent; reciprocity already carries the
steel's answer to the string's moment into Φ), hysteresis (the string
follows its anhysteretic curve; the vibration's small loops about the
operating point are taken at its differential susceptibility), saturation
across the string, and the string's bending beyond first order (its flux is
that of a straight string; a vibrating string's displacement varies over
metres, the pickup senses centimetres). To first order a bent string is
in: :meth:`Rod.sensing` carries its tilt (the slope w' of the displacement
turns its axis, and with it its large magnetisation along the axis), which
the tests compare with magpylib-material-response's cells of a bent chain.

Horton & Moore, "Modeling the magnetic pickup of an electric guitar",
Am. J. Phys. 77(2), 144–150, 2009, treat the same physics with magnetic
charges on a single pole; the tests compare the two.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg
import scipy.linalg.lapack
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


def anhysteretic(h: np.ndarray, *, chi: float, saturation: float) -> tuple[np.ndarray, np.ndarray]:
    """The Fröhlich–Kennelly curve M = Ms·H/(Hk + |H|), Hk = Ms/χ, and its slope dM/dH.

    h : np.ndarray, A/m, the field in the steel
    chi : the initial susceptibility χ (> 0)
    saturation : A/m, Ms (``inf``: the linear steel M = χ·H)

    Returns M (A/m) and χ_d = dM/dH = χ·(Hk/(Hk + |H|))², each shaped as ``h``.
    """
    h = np.asarray(h, float)
    if math.isinf(saturation):
        return chi * h, np.full_like(h, chi)
    hk = saturation / chi
    q = hk / (hk + np.abs(h))
    return chi * h * q, chi * q * q


@dataclass(frozen=True, eq=False)
class Rod:
    """A string's samples along x and its longitudinal response.

    x : np.ndarray [shape=(n,)], m, segment centres (uniform spacing)
    area : m², magnetic cross-section
    chi : the string steel's initial susceptibility
    response : np.ndarray [shape=(n, n)], the linear steel's M_x = response @ (B0x/µ0): (I − χK)⁻¹·χ
    demag : np.ndarray [shape=(n, n)], K, the segments' field along x per A/m of M_x (H_d = K·M_x)
    saturation : A/m, the steel's saturation magnetisation Ms (``inf``: linear)
    """

    x: np.ndarray
    area: float
    chi: float
    response: np.ndarray
    demag: np.ndarray
    saturation: float = math.inf

    TOLERANCE = 1e-11  # the last step, relative to Ms
    BAND = 16  # diagonals of K kept each side in the banded Jacobian (it converges by about 0.07 a step for a 1 mm string)
    ITERATIONS = 40  # banded steps before the full Newton takes over
    MAX_ITERATIONS = 60  # full Newton steps

    @property
    def step(self) -> float:
        return float(self.x[1] - self.x[0])

    @classmethod
    def build(cls, x: np.ndarray, *, area: float, chi: float, saturation: float = math.inf, longitudinal: bool = True) -> Rod:
        """The rod's longitudinal response for segments centred on ``x`` (uniform).

        saturation : A/m, the steel's Ms (µ0·Ms is its saturation polarisation); ``inf`` for a linear steel
        longitudinal : False leaves the magnetisation along the string out
            (the transverse-only model of a single-pole charge model, for comparisons)
        """
        x = np.asarray(x, float)
        if x.ndim != 1 or x.size < 2:
            raise ValueError(f"a rod needs at least two samples along x (uniformly spaced), not shape {x.shape}")
        if not saturation > 0:
            raise ValueError(f"a rod's saturation magnetisation must be above 0 A/m, not {saturation!r}")
        if not longitudinal:
            zero = np.zeros((x.size, x.size))
            return cls(x=x, area=area, chi=chi, response=zero, demag=zero, saturation=math.inf)
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
        return cls(x=x, area=area, chi=chi, response=response, demag=K, saturation=float(saturation))

    @property
    def linear(self) -> bool:
        """True for a linear steel (or the transverse-only rod): M_x = response @ H0x."""
        return math.isinf(self.saturation)

    def axial(self, b0x: np.ndarray, *, start: np.ndarray | None = None) -> np.ndarray:
        """M_x (A/m) along the rod in the applied field ``b0x`` (T) along it: shape (..., n) → (..., n).

        start : np.ndarray [shape=(n,) or (..., n)], A/m, a first guess
            (e.g. the solution at a nearby place); default the linear
            answer scaled down to Ms

        Solves M_x = f(H0x + K·M_x), every rod of the batch at once, by
        Newton's steps whose Jacobian I − diag(χ_d)·K keeps K's ``BAND``
        diagonals nearest the main one (K falls off as the cube of the
        distance along the rod, so the banded Jacobian is close and cheap:
        its steps converge linearly, the residual being exact) until the
        last step is below ``TOLERANCE`` times Ms. A rod whose residual
        grows, or that has not converged after ``ITERATIONS`` steps, is
        finished by :meth:`newton` with the full Jacobian.
        """
        h0 = np.asarray(b0x, float) / mu_0
        if self.linear:
            return np.einsum("ij,...j->...i", self.response, h0)
        n = self.x.size
        shape = h0.shape
        h0 = h0.reshape(-1, n)
        if start is None:
            m = h0 @ self.response.T
            m = m / np.maximum(1.0, np.abs(m).max(axis=-1, keepdims=True) / self.saturation)  # start inside saturation
        else:
            m = np.array(np.broadcast_to(np.asarray(start, float), shape).reshape(-1, n))
        w = min(self.BAND, n - 1)
        active = np.arange(m.shape[0])
        res, slope = self._residual(m, h0)
        norm = np.linalg.norm(res, axis=-1)
        for _ in range(self.ITERATIONS):
            dm = -scipy.linalg.solve_banded((w, w), self.banded(slope), res.reshape(-1), check_finite=False).reshape(res.shape)
            m[active] += dm
            done = np.abs(dm).max(axis=-1) < self.TOLERANCE * self.saturation
            res, slope = self._residual(m[active], h0[active])
            new = np.linalg.norm(res, axis=-1)
            stuck = ~done & (new > norm)
            if stuck.any():
                m[active[stuck]] = self.newton(h0[active[stuck]], m[active[stuck]])
            keep = ~done & ~stuck
            active, res, slope, norm = active[keep], res[keep], slope[keep], new[keep]
            if active.size == 0:
                return m.reshape(shape)
        m[active] = self.newton(h0[active], m[active])
        return m.reshape(shape)

    def _residual(self, m: np.ndarray, h0: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """M − f(H0 + K·M) and f' there, for rods of shape (k, n) (A/m)."""
        fm, slope = anhysteretic(h0 + m @ self.demag.T, chi=self.chi, saturation=self.saturation)
        return m - fm, slope

    def newton(self, h0: np.ndarray, m: np.ndarray) -> np.ndarray:
        """M_x (A/m, shape (k, n)) by Newton's method with the full Jacobian from ``m``, for H0x = ``h0`` (A/m, shape (k, n)).

        A step that does not lower a rod's residual is halved, at most
        eight times; converged when the last step is below ``TOLERANCE``
        times Ms.
        """
        m = np.array(m, float)
        eye = np.eye(self.x.size)
        active = np.arange(m.shape[0])
        res, slope = self._residual(m, h0)
        for _ in range(self.MAX_ITERATIONS):
            dm = -np.linalg.solve(eye - slope[:, :, None] * self.demag, res[:, :, None])[:, :, 0]
            done = np.abs(dm).max(axis=-1) < self.TOLERANCE * self.saturation
            m[active[done]] += dm[done]
            keep = ~done
            active, dm, res, slope = active[keep], dm[keep], res[keep], slope[keep]
            if active.size == 0:
                return m
            ma, ha = m[active], h0[active]
            norm = np.linalg.norm(res, axis=-1)
            t = np.ones(active.size)
            for _ in range(8):
                trial = ma + t[:, None] * dm
                new, new_slope = self._residual(trial, ha)
                worse = np.linalg.norm(new, axis=-1) > norm
                if not worse.any():
                    break
                t = np.where(worse, t / 2, t)
            m[active], res, slope = trial, new, new_slope
        raise ArithmeticError(f"the string's magnetisation did not converge in {self.MAX_ITERATIONS} Newton steps")

    def operating(self, b0x: np.ndarray, *, mx: np.ndarray | None = None) -> Operating:
        """The rod's operating point in the applied field ``b0x`` (T, shape (n,)): M_x and its differential response.

        mx : np.ndarray [shape=(n,)], A/m, M_x already solved by :meth:`axial` for this field (else solved here)

        R_d = (I − diag(χ_d)·K)⁻¹·diag(χ_d), χ_d = f'(H) at each segment:
        δM_x = R_d·δB0x/µ0 for a small change of the applied field (the
        linear steel's ``response`` when Ms = ∞).
        """
        b0x = np.asarray(b0x, float)
        mx = self.axial(b0x) if mx is None else np.asarray(mx, float)
        if self.linear:
            return Operating(mx=mx, chi_d=np.full_like(mx, self.chi), rod=self)
        _, chi_d = anhysteretic(b0x / mu_0 + self.demag @ mx, chi=self.chi, saturation=self.saturation)
        return Operating(mx=mx, chi_d=chi_d, rod=self)

    def banded(self, slope: np.ndarray, *, transpose: bool = False) -> np.ndarray:
        """I − diag(χ_d)·K_b (or its transpose) in ``scipy.linalg.solve_banded``'s storage, K_b K's ``BAND`` diagonals each side.

        slope : np.ndarray [shape=(k, n)], χ_d of k rods; returns shape (2w + 1, k·n), the k matrices one after another.
        """
        n = self.x.size
        w = min(self.BAND, n - 1)
        kappa = self.demag[:, 0][: w + 1]  # K is Toeplitz (uniform segments) and symmetric: K_ij = κ_|i−j|
        ab = np.zeros((2 * w + 1, slope.shape[0], n))
        for off in range(-w, w + 1):  # ab[w + i − j, j] = J_ij with i = j + off
            j = np.arange(max(0, -off), min(n, n - off))
            row = j if transpose else j + off  # (I − K·diag(χ_d))_ij = δ_ij − κ·χ_d,j
            ab[w + off, :, j] = ((1.0 if off == 0 else 0.0) - slope[:, row] * kappa[abs(off)]).T
        return ab.reshape(2 * w + 1, -1)

    def magnetisation(self, b0: np.ndarray, *, start: np.ndarray | None = None) -> np.ndarray:
        """M (A/m) of the string in the field ``b0`` (T) at its samples: shape (..., 3, n) → (..., 3, n).

        start : a first guess of M_x for :meth:`axial` (A/m, shape (n,) or (..., n))
        """
        b0 = np.asarray(b0, float)
        chi_t = transverse_susceptibility(self.chi)
        m = np.empty_like(b0)
        m[..., 1:, :] = chi_t * b0[..., 1:, :] / mu_0
        m[..., 0, :] = self.axial(b0[..., 0, :], start=start)
        return m

    def flux(self, b0: np.ndarray, b1: np.ndarray) -> np.ndarray:
        """Φ (Wb per A of the coil's field, i.e. the flux linkage) of the string: shape (...).

        b0 : np.ndarray [shape=(..., 3, n)], T, the bias field along the string
        b1 : np.ndarray [shape=(..., 3, n)], T/A, the coil's own field at 1 A
        """
        return self.flux_of(self.magnetisation(b0), b1)

    def flux_of(self, m: np.ndarray, b1: np.ndarray) -> np.ndarray:
        """Φ = A·Σ M·B1·dx (Wb/A): shape (...), for the magnetisation ``m`` (A/m, shape (..., 3, n)) of :meth:`magnetisation`."""
        return self.area * self.step * np.einsum("...cn,...cn->...", m, np.asarray(b1, float))

    def sensing(self, b0, b1, db0, db1, *, axis: int = 2, at: Operating | None = None) -> np.ndarray:
        """dΦ/d(displacement of the element at each sample) per metre of string: shape (n,), Wb/m².

        b0, b1 : np.ndarray [shape=(3, n)], the fields at rest (T, T/A)
        db0, db1 : np.ndarray [shape=(3, n)], their derivatives along the
            motion, T/m and T/(A·m)
        axis : the motion's component, 2 (z, vertical) or 1 (y, sideways)
        at : the rod's :meth:`operating` point in ``b0[0]``, if already solved

        With the displacement w(x) along ê (ê the unit vector of ``axis``),
        the string's axis turns to t = x̂ + w'·ê and its element sits at
        x + w·ê. Its magnetisation there (:meth:`magnetisation`, with the
        axis t in place of x̂) is

            M = χ⊥/µ0·(B0 − (B0·t)·t) + M∥·t,   M∥ = f(B0·t/µ0 + K·M∥),

        and Φ = A ∫ M·B1 dx. At rest M∥ = Mx, the rod's solution in B0x
        (:meth:`axial`); a small change of B0·t changes it by the
        differential response at that operating point,
        δM∥ = R_d·δ(B0·t)/µ0 (:meth:`operating`; the linear steel's
        ``response`` R when Ms = ∞). To first order in w, with
        B0·t → B0x + w·∂B0x + w'·B0e and B1·t likewise (e the motion's
        component),

            δΦ = A ∫ w·[χ⊥/µ0·(∂B0⊥·B1⊥ + B0⊥·∂B1⊥) + (R_dᵀ·B1x)·∂B0x/µ0 + Mx·∂B1x] dx
               + ∫ w'·G dx,
            G = A·[(R_dᵀ·B1x)·B0e/µ0 + Mx·B1e − χ⊥/µ0·(B0e·B1x + B0x·B1e)],

        the first line being the element's own moment and coupling moved
        (the transpose of the differential response carries what the whole
        rod makes of a change of b0x: Σᵢ B1xᵢ·Σⱼ R_d,ᵢⱼ·δB0xⱼ =
        Σⱼ (R_dᵀB1x)ⱼ·δB0xⱼ). G is the tilt's:
        (a) the longitudinal moment Mx turned by w' couples to B1e, (b) the
        bias field's component B0e along the tilted axis is answered by the
        rod's differential response, seen through B1x, and the part across the axis
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
        at = self.operating(b0[0]) if at is None else at
        adj = at.adjoint(b1[0])
        longi = adj * db0[0] / mu_0 + at.mx * db1[0]
        return self.area * (trans + longi) + self._slope(b0, b1, at.mx, adj, axis=axis)

    def slope(self, b0, b1, *, axis: int) -> np.ndarray:
        """The tilt's part of :meth:`sensing`, −G' (Wb/m²): shape (n,); its sum is zero to rounding.

        G = A·[(R_dᵀ·B1x)·B0e/µ0 + Mx·B1e − χ⊥/µ0·(B0e·B1x + B0x·B1e)], e = ``axis``,
        and −G' is the transpose of the central difference acting on it.
        """
        b0, b1 = np.asarray(b0, float), np.asarray(b1, float)
        at = self.operating(b0[0])
        return self._slope(b0, b1, at.mx, at.adjoint(b1[0]), axis=axis)

    def _slope(self, b0, b1, mx, adj, *, axis: int) -> np.ndarray:
        chi_t = transverse_susceptibility(self.chi)
        g = self.area * (adj * b0[axis] / mu_0 + mx * b1[axis] - chi_t / mu_0 * (b0[axis] * b1[0] + b0[0] * b1[axis]))
        return slope_adjoint(g, self.step)


@dataclass(frozen=True, eq=False)
class Operating:
    """A rod's operating point: M_x at rest and what answers a small change of the applied field.

    mx : np.ndarray [shape=(n,)], A/m, M_x
    chi_d : np.ndarray [shape=(n,)], the differential susceptibility f'(H) at each segment
    rod : the :class:`Rod`
    """

    mx: np.ndarray
    chi_d: np.ndarray
    rod: Rod
    _lu: tuple | None = field(default=None, repr=False)  # the banded part's LU factors, made on first use

    ITERATIONS = 60  # refinement steps of :meth:`adjoint`
    TOLERANCE = 1e-13  # their last correction, relative to the answer's largest value

    def adjoint(self, b: np.ndarray) -> np.ndarray:
        """R_dᵀ·b = diag(χ_d)·(I − K·diag(χ_d))⁻¹·b (K symmetric): shape (n,) (the linear steel's ``response``ᵀ·b).

        The system is solved by iterative refinement on its banded part
        (:meth:`Rod.banded`), the product with the full K exact: linear
        convergence, by the same factor a step as :meth:`Rod.axial`'s.
        """
        b = np.asarray(b, float)
        rod = self.rod
        if rod.linear:
            return rod.response.T @ b
        w = min(rod.BAND, rod.x.size - 1)
        factors = self._lu
        if factors is None:  # LAPACK's band LU (dgbtrf) wants w more rows above the band
            ab = np.vstack([np.zeros((w, rod.x.size)), rod.banded(self.chi_d[None, :], transpose=True)])
            factors = tuple(scipy.linalg.lapack.dgbtrf(ab, w, w)[:2])
            object.__setattr__(self, "_lu", factors)
        lu, piv = factors
        y = np.zeros_like(b)
        for _ in range(self.ITERATIONS):
            r = b - (y - rod.demag @ (self.chi_d * y))
            dy = scipy.linalg.lapack.dgbtrs(lu, w, w, r, piv)[0]
            y = y + dy
            if np.abs(dy).max() <= self.TOLERANCE * np.abs(y).max():
                return self.chi_d * y
        raise ArithmeticError(f"the string's differential response did not converge in {self.ITERATIONS} steps")

    def response(self) -> np.ndarray:
        """R_d = (I − diag(χ_d)·K)⁻¹·diag(χ_d) (shape (n, n)) in full (for checks; the model uses :meth:`adjoint`)."""
        rod = self.rod
        return np.linalg.solve(np.eye(rod.x.size) - self.chi_d[:, None] * rod.demag, np.diag(self.chi_d))


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
