"""The field above every source, from its two-dimensional spectrum.

All of a pickup's sources (magnets, magnetised steel, the coils' turns) lie
below the plane of the pole pieces' top faces; the strings move above it.
In that source-free half-space the field is the gradient of a harmonic
potential, and its two-dimensional Fourier transform over (x, y) simply
decays with height (upward continuation: Blakely, *Potential Theory in
Gravity and Magnetic Applications*, 1995, §12.1). Written with the magnetic
scalar potential of a polarisation J (T) in a volume V, ψ = 1/(4π µ0) ∫ J·∇'(1/|r − r'|) dV',
and the transform of 1/(4π|r − r'|) over (x, y) for z > z',
e^{−|k|(z − z')}·e^{−i k·ρ'}/(2|k|), each uniformly polarised box
[x1, x2] × [y1, y2] × [z1, z2] contributes

    B̂(k, z) = (−i kx, −i ky, |k|) · S(k) · e^{−|k|(z − z_ref)},
    S(k) = Σ_boxes (−i kx Jx − i ky Jy + |k| Jz) · X(kx) · Y(ky) · Z(|k|) / (2|k|),
    X(kx) = ∫_{x1}^{x2} e^{−i kx x} dx,   Z(|k|) = ∫_{z1}^{z2} e^{|k|(z' − z_ref)} dz',

exact for the boxes, with z_ref at or above every box's top. A winding of
turns spread evenly over a height is a box polarised along z (a current
sheet and a magnetised slab make the same field outside the slab; Jackson,
*Classical Electrodynamics*, 3rd ed., §5.8), so the coils' own field comes
from the same formula.

The field at points is the Fourier series of the periodic sum of the sources
repeated every ``period`` in x and y (the series is evaluated directly at the
points, so no interpolation): the images' share falls as the cube of the
sources' size over the period, and the modes above ``k_max`` carry a share
e^{−k_max·(z − z_ref)} of the spectrum. :func:`plan` picks both for a
stated clearance; the tests compare the result with magpylib's closed forms.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

# How many decay lengths of the highest mode kept at the evaluation height:
# e^{-7} ≈ 9e-4 of a spectrum that is itself small there (the tests hold the
# fields to 1e-3 of their largest value against magpylib's closed forms).
DECAY_LENGTHS = 7.0
# Period over the sources' extent (x and y): the nearest image is then two extents away.
PERIOD_FACTOR = 3.0
# Rings of periodic images subtracted as dipoles around the sources.
IMAGE_SHELLS = 3
IMAGE_STEP = 5e-3  # m, spacing of the images' field along the lines before interpolation


@dataclass(frozen=True, eq=False)
class Boxes:
    """Uniformly polarised, axis-aligned boxes.

    lo, hi : np.ndarray [shape=(n, 3)], m, opposite corners (lo < hi)
    polarization : np.ndarray [shape=(n, 3)], T (µ0·M)
    """

    lo: np.ndarray
    hi: np.ndarray
    polarization: np.ndarray

    def __post_init__(self):
        for name in ("lo", "hi", "polarization"):
            a = np.asarray(getattr(self, name), float).reshape(-1, 3)
            object.__setattr__(self, name, a)
        if not (self.lo.shape == self.hi.shape == self.polarization.shape):
            raise ValueError("lo, hi and polarization must have the same shape (n, 3)")

    @classmethod
    def join(cls, *parts: Boxes) -> Boxes:
        return cls(np.vstack([p.lo for p in parts]), np.vstack([p.hi for p in parts]), np.vstack([p.polarization for p in parts]))

    @property
    def top(self) -> float:
        return float(self.hi[:, 2].max()) if len(self.hi) else -np.inf


@dataclass(frozen=True, eq=False)
class Grid:
    """The modes of the series: kx (all signs), ky ≥ 0, in rad/m, and the periods (m)."""

    kx: np.ndarray
    ky: np.ndarray
    period_x: float
    period_y: float

    @property
    def k(self) -> np.ndarray:
        return np.hypot(self.kx[:, None], self.ky[None, :])


def plan(source: tuple[float, float], points: tuple[float, float], clearance: float, *, decay_lengths: float = DECAY_LENGTHS, period_factor: float = PERIOD_FACTOR) -> Grid:
    """Modes for sources within ±source/2 and points within ±points/2 (m, x and y), at least ``clearance`` (m) above the sources' tops.

    Each period is the points' span plus ``period_factor`` times the sources' span,
    so the nearest image lies that many source spans beyond the farthest point.
    """
    if not clearance > 0:
        raise ValueError(f"clearance={clearance!r}: the points must lie above every source")
    k_max = decay_lengths / clearance
    px, py = (p + period_factor * s for s, p in zip(source, points))
    nx = int(np.ceil(k_max * px / (2 * np.pi)))
    ny = int(np.ceil(k_max * py / (2 * np.pi)))
    kx = 2 * np.pi / px * np.arange(-nx, nx + 1)
    ky = 2 * np.pi / py * np.arange(0, ny + 1)
    return Grid(kx=kx, ky=ky, period_x=px, period_y=py)


def _interval(k: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """∫_a^b e^{−i k t} dt for every k (rows) and interval (columns): shape (K, n)."""
    kk = k[:, None]
    w = (b - a)[None, :]
    c = (a + b)[None, :] / 2
    # e^{−ikc}·w·sinc(k w / 2π) (numpy's sinc is sin(πx)/(πx))
    return np.exp(-1j * kk * c) * w * np.sinc(kk * w / (2 * np.pi))


def spectrum(boxes: Boxes, grid: Grid, *, z_ref: float) -> np.ndarray:
    """S(k) of the boxes (T·m³ per 2|k| units, see the module docstring): shape (len(kx), len(ky)), complex.

    z_ref : m, at or above every box's top
    """
    if len(boxes.lo) and boxes.top > z_ref + 1e-12:
        raise ValueError(f"z_ref={z_ref!r} lies below a box's top ({boxes.top!r})")
    kx, ky = grid.kx, grid.ky
    k = grid.k
    safe = np.where(k > 0, k, 1.0)
    out = np.zeros(k.shape, complex)
    if not len(boxes.lo):
        return out
    X = _interval(kx, boxes.lo[:, 0], boxes.hi[:, 0])  # (Kx, n)
    Y = _interval(ky, boxes.lo[:, 1], boxes.hi[:, 1])  # (Ky, n)
    J = boxes.polarization
    # group the boxes by their z-range: Z(|k|) is shared within a group
    keys = np.round(np.c_[boxes.lo[:, 2], boxes.hi[:, 2]] * 1e9).astype(np.int64)
    _, group = np.unique(keys, axis=0, return_inverse=True)
    group = np.asarray(group).ravel()
    for g in range(group.max() + 1):
        idx = np.flatnonzero(group == g)
        z1, z2 = boxes.lo[idx[0], 2], boxes.hi[idx[0], 2]
        Z = np.where(k > 0, (np.exp(safe * (z2 - z_ref)) - np.exp(safe * (z1 - z_ref))) / safe, z2 - z1)
        Xg, Yg = X[:, idx], Y[:, idx]
        px = (Xg * J[idx, 0]) @ Yg.T
        py = (Xg * J[idx, 1]) @ Yg.T
        pz = (Xg * J[idx, 2]) @ Yg.T
        out += Z * (-1j * kx[:, None] * px - 1j * ky[None, :] * py + k * pz)
    out /= 2.0 * safe
    out[k == 0] = 0.0  # the plane mean of a localised source's field is zero
    return out


def lines(spectra, grid: Grid, *, x: np.ndarray, y: np.ndarray, z: float, z_ref: float, d_dz: int = 0, d_dy: int = 0, decay_lengths: float = DECAY_LENGTHS) -> np.ndarray:
    """The fields (or their derivatives) on lines along x: shape (F, 3, len(y), len(x)), T.

    spectra : np.ndarray [shape=(F, Kx, Ky)] or one (Kx, Ky), from :func:`spectrum`
    x : np.ndarray [shape=(nx,)], m, the points along each line
    y : np.ndarray [shape=(ny,)], m, each line's place across the strings
    z : m, the lines' height (above z_ref)
    d_dz, d_dy : order of the derivative along z and y (0, 1, 2, …), T/mⁿ

    Modes beyond ``decay_lengths``/(z − z_ref) are left out (their share is below e^{−decay_lengths}).
    """
    if z <= z_ref:
        raise ValueError(f"z={z!r}: the lines must lie above z_ref={z_ref!r}")
    spectra = np.asarray(spectra)
    single = spectra.ndim == 2
    spectra = spectra[None] if single else spectra
    k_top = decay_lengths / (z - z_ref)
    sx = np.flatnonzero(np.abs(grid.kx) <= k_top)
    sy = np.flatnonzero(grid.ky <= k_top)
    kx, ky = grid.kx[sx], grid.ky[sy]
    k = np.hypot(kx[:, None], ky[None, :])
    decay = np.exp(-k * (z - z_ref))
    if d_dz:
        decay = decay * (-k) ** d_dz
    base = spectra[:, sx[0] : sx[-1] + 1, sy[0] : sy[-1] + 1] * decay
    if d_dy:
        base = base * (1j * ky[None, :]) ** d_dy
    weight = np.where(ky == 0, 1.0, 2.0) / (grid.period_x * grid.period_y)
    ey = np.exp(1j * np.outer(ky, np.asarray(y, float))) * weight[:, None]  # (Ky, ny)
    ex = np.exp(1j * np.outer(np.asarray(x, float), kx))  # (nx, Kx)
    # the y-sums first; −i·kx comes out of them, −i·ky goes into them
    ux = (base @ ey) * (-1j * kx[None, :, None])  # (F, Kx, ny)
    uy = base @ (ey * (-1j * ky[:, None]))
    uz = (base * k) @ ey
    out = np.empty((spectra.shape[0], 3, len(y), len(x)))
    exr, exi = np.ascontiguousarray(ex.real), np.ascontiguousarray(ex.imag)
    for c, u in enumerate((ux, uy, uz)):
        out[:, c] = (exr @ u.real - exi @ u.imag).transpose(0, 2, 1)  # the real part, in half the work
    return out[0] if single else out


def image_correction(moment, centre, grid: Grid, *, x: np.ndarray, y: np.ndarray, z: float, shells: int = IMAGE_SHELLS) -> np.ndarray:
    """The field of the nearest periodic images, each as a point dipole: shape (3, len(y), len(x)), T.

    The series of :func:`lines` is the periodic sum of the sources (the plane
    mean of a localised source's field is zero, so the k = 0 mode carries
    nothing); subtracting this leaves the sources' own field, up to the
    images' higher multipoles and the shells beyond ``shells``.

    moment : (3,), A·m², the sources' net moment (Σ J·V/µ0)
    centre : (3,), m, where it sits
    """
    from .field import dipole_field

    m = np.asarray(moment, float)
    c = np.asarray(centre, float)
    x = np.asarray(x, float)
    # the images lie a period away: their field is smooth along the lines, so it is
    # computed every IMAGE_STEP and interpolated (cubic; its error is below 1e-6 of it)
    span = float(x.max() - x.min()) if x.size else 0.0
    xs = np.linspace(x.min(), x.max(), max(4, int(np.ceil(span / IMAGE_STEP)) + 1)) if span > IMAGE_STEP else x
    ij = np.array([(i, j) for i in range(-shells, shells + 1) for j in range(-shells, shells + 1) if i or j], float)
    places = c + np.c_[ij[:, 0] * grid.period_x, ij[:, 1] * grid.period_y, np.zeros(len(ij))]
    pts = np.stack(np.broadcast_arrays(xs[None, :], np.asarray(y, float)[:, None], float(z)), axis=-1)  # (ny, nxs, 3)
    coarse = dipole_field(m, places[:, None, None, :], pts[None]).sum(axis=0)  # (ny, nxs, 3)
    coarse = coarse + _image_tail(m, grid, shells)
    if xs is x:
        return np.moveaxis(coarse, -1, 0)
    from scipy.interpolate import CubicSpline

    return np.moveaxis(CubicSpline(xs, coarse, axis=1)(x), -1, 0)


def _image_tail(m: np.ndarray, grid: Grid, shells: int) -> np.ndarray:
    """The images beyond the shells, as a continuum of dipoles seen from the sources' centre: (3,), T.

    Σ over the lattice outside the rectangle of half-sides (shells + ½)·period
    ≈ 1/(Px·Py) ∬ B_dipole dA there; in-plane, B_z = −µ0·m_z/(4πR³) and
    B_x = µ0/(4π)·(3X·(X·m_x + Y·m_y)/R⁵ − m_x/R³), and in polar
    coordinates ∫ρ dρ/ρ³ from the rectangle's edge ρ_b(φ) outward is 1/ρ_b(φ).
    """
    from scipy.constants import mu_0

    ax, ay = (shells + 0.5) * grid.period_x, (shells + 0.5) * grid.period_y
    phi = (np.arange(4096) + 0.5) * (2 * np.pi / 4096)
    inv = np.maximum(np.abs(np.cos(phi)) / ax, np.abs(np.sin(phi)) / ay)  # 1/ρ_b
    d = 2 * np.pi / 4096
    i1 = inv.sum() * d
    ixx = (np.cos(phi) ** 2 * inv).sum() * d
    iyy = (np.sin(phi) ** 2 * inv).sum() * d
    c = mu_0 / (4 * np.pi * grid.period_x * grid.period_y)
    return c * np.array([m[0] * (3 * ixx - i1), m[1] * (3 * iyy - i1), -m[2] * i1])


def moment(boxes: Boxes) -> tuple[np.ndarray, np.ndarray]:
    """The boxes' net moment (A·m²) and its centre (m): the polarisation-weighted mean place."""
    from scipy.constants import mu_0

    vol = np.prod(boxes.hi - boxes.lo, axis=1)
    m = (boxes.polarization * vol[:, None]).sum(axis=0) / mu_0
    w = np.abs(boxes.polarization).sum(axis=1) * vol
    centre = ((boxes.lo + boxes.hi) / 2 * w[:, None]).sum(axis=0) / w.sum() if w.sum() > 0 else np.zeros(3)
    return m, centre


def winding_boxes(half_x: np.ndarray, half_y: np.ndarray, turns: np.ndarray, *, centre, height: float, current: float = 1.0) -> Boxes:
    """A winding of rectangular turns, each filament's turns spread evenly over z ∈ [−height, 0] + centre_z.

    A layer of n turns carrying I, spread over a height H, makes outside it
    the field of a slab polarised along z with J = µ0·n·I/H over the turns'
    area.

    half_x, half_y, turns : np.ndarray [shape=(F,)], m, m, turns (across the build)
    centre : (x, y, z), m, the middle of the winding's top face
    """
    from scipy.constants import mu_0

    cx, cy, cz = (float(c) for c in centre)
    hx, hy, n = (np.asarray(a, float).ravel() for a in (half_x, half_y, turns))
    lo = np.c_[cx - hx, cy - hy, np.full(hx.shape, cz - height)]
    hi = np.c_[cx + hx, cy + hy, np.full(hx.shape, cz)]
    pol = np.c_[np.zeros_like(hx), np.zeros_like(hx), mu_0 * n * current / height]
    return Boxes(lo, hi, pol)


def cylinder_spectrum(grid: Grid, *, centre, radius: float, z1: float, z2: float, polarization: float, z_ref: float) -> np.ndarray:
    """S(k) of an upright cylinder polarised along its axis (z), as :func:`spectrum` gives it for boxes.

    centre : (x, y), m; radius : m; z1 < z2 ≤ z_ref : m; polarization : T along +z.
    The disc's transform is 2πR·J1(kR)/k (Bracewell, *The Fourier Transform
    and its Applications*, 3rd ed., 2000, the jinc of §13), so the cylinder is
    exact here rather than cut into boxes.
    """
    from scipy.special import j1

    if z2 > z_ref + 1e-12:
        raise ValueError(f"z_ref={z_ref!r} lies below the cylinder's top ({z2!r})")
    k = grid.k
    safe = np.where(k > 0, k, 1.0)
    disc = np.where(k > 0, 2 * np.pi * radius * j1(safe * radius) / safe, np.pi * radius**2)
    shift = np.exp(-1j * (grid.kx[:, None] * centre[0] + grid.ky[None, :] * centre[1]))
    Z = np.where(k > 0, (np.exp(safe * (z2 - z_ref)) - np.exp(safe * (z1 - z_ref))) / safe, z2 - z1)
    out = polarization * disc * shift * Z / 2.0  # (|k|·Jz)·D·Z/(2|k|)
    out[k == 0] = 0.0
    return out
