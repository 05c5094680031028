"""Batched polynomials, rational functions and two-port chain matrices.

Every polynomial is a numpy array of shape ``(n_designs, n_coeffs)`` holding
coefficients in *ascending* powers of the normalised Laplace variable
``x = s / w_norm`` (``w_norm`` in rad/s, :data:`W_NORM`). Scaling the
frequency keeps the coefficients of a 15th-order network within a few
hundred decades of one another instead of a few thousand, and exact zeros
(absent parts) stay exact, so :meth:`Rational.zpk` can trim them.

Two-ports use the chain (ABCD) matrix with polynomial entries and one
scalar polynomial "scale" per matrix: the true matrix is ``M / scale``.
A series impedance ``Z = n/d`` is ``[[d, n], [0, d]] / d``; a shunt
admittance ``Y = n/d`` is ``[[d, 0], [n, d]] / d``. Cascading is matrix
multiplication, which keeps ladder networks at their minimal degree.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

W_NORM = 2 * np.pi * 1000.0  # rad/s: x = s / W_NORM, so x = j at 1 kHz


def const(c, n: int | None = None) -> np.ndarray:
    """Constant polynomial ``c`` (scalar or shape (N,)) -> shape (N, 1)."""
    c = np.asarray(c, dtype=float)
    if c.ndim == 0:
        c = np.full(n or 1, float(c))
    return c[:, None]


def lin(c0, c1) -> np.ndarray:
    """``c0 + c1·x`` -> shape (N, 2); c0, c1 scalars or shape (N,)."""
    c0, c1 = np.broadcast_arrays(np.asarray(c0, float), np.asarray(c1, float))
    return np.stack([np.atleast_1d(c0), np.atleast_1d(c1)], axis=-1)


def padd(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """p + q for batched polynomials of any lengths."""
    n = max(p.shape[-1], q.shape[-1])
    batch = np.broadcast_shapes(p.shape[:-1], q.shape[:-1])
    out = np.zeros(batch + (n,))
    out[..., : p.shape[-1]] += p
    out[..., : q.shape[-1]] += q
    return out


def pmul(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """p · q (batched convolution)."""
    a, b = p.shape[-1], q.shape[-1]
    batch = np.broadcast_shapes(p.shape[:-1], q.shape[:-1])
    out = np.zeros(batch + (a + b - 1,))
    for i in range(a):
        out[..., i : i + b] += p[..., i : i + 1] * q
    return out


def pscale(p: np.ndarray, c) -> np.ndarray:
    """p · c with c a scalar or shape (N,)."""
    return p * np.asarray(c, float)[..., None] if np.ndim(c) else p * float(c)


def peval(p: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Evaluate batched polynomials at points ``x`` (shape (F,)) -> (N, F) by Horner."""
    out = np.zeros(p.shape[:-1] + x.shape, dtype=complex)
    for i in range(p.shape[-1] - 1, -1, -1):
        out = out * x + p[..., i : i + 1]
    return out


def trim(c: np.ndarray) -> np.ndarray:
    """Drop exactly-zero highest coefficients of one polynomial (1-D, ascending)."""
    nz = np.flatnonzero(c)
    return c[: nz[-1] + 1] if nz.size else c[:1]


# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Rational:
    """A batch of rational transfer functions num(x)/den(x), x = s/``w_norm``.

    Attributes
    ----------
    num, den : np.ndarray, shape (N, k) and (N, m)
        Coefficients in ascending powers of x.
    w_norm : float
        The frequency scale in rad/s.
    """

    num: np.ndarray
    den: np.ndarray
    w_norm: float = W_NORM

    @property
    def n(self) -> int:
        return self.num.shape[0]

    def __call__(self, frequency_hz) -> np.ndarray:
        """Complex response at ``frequency_hz`` (shape (F,)) -> shape (N, F)."""
        f = np.atleast_1d(np.asarray(frequency_hz, float))
        x = 1j * 2 * np.pi * f / self.w_norm
        return peval(self.num, x) / peval(self.den, x)

    def __getitem__(self, i) -> Rational:
        sl = slice(i, i + 1) if isinstance(i, (int, np.integer)) else i
        return Rational(self.num[sl], self.den[sl], self.w_norm)

    def __mul__(self, other: Rational) -> Rational:
        return Rational(pmul(self.num, other.num), pmul(self.den, other.den), self.w_norm)

    def __neg__(self) -> Rational:
        return Rational(-self.num, self.den, self.w_norm)

    def scale(self, c) -> Rational:
        """Multiply by a real constant (scalar or shape (N,))."""
        return Rational(pscale(self.num, c), self.den, self.w_norm)

    def zpk(self, i: int = 0, *, cancel_tol: float = 1e-7):
        """Zeros, poles (rad/s, analog s-plane) and gain of design ``i``.

        Exactly-zero highest coefficients (absent parts) are trimmed and
        pole–zero pairs that coincide within ``cancel_tol`` (relative) are
        cancelled, so the result has the network's true order. The gain
        ``k`` is such that H(s) = k · Π(s − z) / Π(s − p).
        """
        num = trim(self.num[i])
        den = trim(self.den[i])
        # roots of ascending-coefficient polynomials in x, then x -> s
        zx = np.roots(num[::-1]) if num.size > 1 else np.array([], complex)
        px = np.roots(den[::-1]) if den.size > 1 else np.array([], complex)
        k = num[-1] / den[-1] * self.w_norm ** (den.size - num.size)
        z = zx.astype(complex) * self.w_norm
        p = px.astype(complex) * self.w_norm
        z, p = _cancel(z, p, cancel_tol)
        return z, p, float(np.real(k))


def _cancel(z: np.ndarray, p: np.ndarray, tol: float):
    """Remove pole–zero pairs closer than ``tol`` relative to their size."""
    zs = list(z)
    keep_p = []
    for pole in p:
        if zs:
            d = np.abs(np.asarray(zs) - pole)
            j = int(np.argmin(d))
            if d[j] <= tol * max(abs(pole), 1e-3):
                zs.pop(j)
                continue
        keep_p.append(pole)
    return np.asarray(zs, complex), np.asarray(keep_p, complex)


# ----------------------------------------------------------------------------
# Chain matrices


@dataclass(frozen=True)
class Chain:
    """A two-port chain matrix [[a, b], [c, d]] / scale, entries batched polynomials."""

    a: np.ndarray
    b: np.ndarray
    c: np.ndarray
    d: np.ndarray
    scale: np.ndarray

    def __matmul__(self, o: Chain) -> Chain:
        return Chain(
            padd(pmul(self.a, o.a), pmul(self.b, o.c)),
            padd(pmul(self.a, o.b), pmul(self.b, o.d)),
            padd(pmul(self.c, o.a), pmul(self.d, o.c)),
            padd(pmul(self.c, o.b), pmul(self.d, o.d)),
            pmul(self.scale, o.scale),
        )


def series(n: np.ndarray, d: np.ndarray) -> Chain:
    """A series impedance Z = n/d."""
    zero = np.zeros_like(d[..., :1])
    return Chain(d, n, zero, d, d)


def shunt(n: np.ndarray, d: np.ndarray) -> Chain:
    """A shunt admittance Y = n/d."""
    zero = np.zeros_like(d[..., :1])
    return Chain(d, zero, n, d, d)


def cascade(*chains: Chain) -> Chain:
    out = chains[0]
    for c in chains[1:]:
        out = out @ c
    return out
