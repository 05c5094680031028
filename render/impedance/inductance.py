"""Air-core inductance of a coil from its winding: the Neumann integral over its turns.

Model
-----
The turns fill the rectangular ring between the bobbin's window and the
winding's outline evenly over the height: every layer holds the same number
of turns, so the current density is uniform over the winding's cross-section
(depth × height). The cross-section is cut into ``layers`` × ``slices`` cells;
each cell is one filamentary rectangular turn at the cell's centre carrying
its share N/(layers·slices) of the turns, and

    L = (N / (layers·slices))² · Σ_i Σ_j M_ij                       (1)

(Neumann's formula M = μ0/4π ∮∮ dl1·dl2 / r, summed over filaments: the
method of Grover, *Inductance Calculations*, 1946, ch. 2, for coils of
finite section cut into filaments).

The mutual inductance of two coaxial rectangular filaments is the sum over
their parallel sides (perpendicular sides contribute nothing to dl1·dl2),
each pair from the closed form for two parallel straight filaments on lines
a distance d apart, spanning [a0, a1] and [b0, b1] along them
(Grover 1946, ch. 6, unequal parallel filaments):

    M = μ0/4π · [G(a1 − b0) − G(a1 − b1) − G(a0 − b0) + G(a0 − b1)],
    G(u) = u·asinh(u/d) − √(u² + d²).                                  (2)

Where two cells' like-directed sides run side by side (a cell with itself
included), the distance d in (2) is the geometric mean distance (GMD) of the
two cells' rectangular sections (Grover 1946, ch. 3): integrated numerically
within two cells, and from its second-order expansion farther out
(:func:`cell_gmd`). For a long straight pair this makes (2) the mutual
inductance of two bars of those sections, so (1) converges quickly as the
cells shrink; the default grid is converged to about 0.1 % (see the tests).

Round coils use the same sum with Maxwell's mutual inductance of two coaxial
circles (Maxwell, *A Treatise on Electricity and Magnetism*, 1873; Grover
ch. 11):

    M = μ0·√(ab)·[(2/k − k)·K(k) − (2/k)·E(k)],  k² = 4ab / ((a + b)² + d²).

What the model leaves out, and its expected error
-------------------------------------------------
The numerical error of (1) at the default grid is below 0.2 % (tests). The
model's own error against a real wound coil is larger:

- turns wound over a sharp-cornered former round off at the corners with a
  radius equal to their depth in the winding; the sharp rectangles here then
  enclose slightly more area, by (4 − π)·r² per turn: for a 5 mm deep winding
  on a 58 × 3 mm window that is about 1.5 % of the mean turn's area, so this
  model reads about 1–2 % high (our estimate from the areas, no source);
- a hand- or scatter-wound coil is not evenly filled (it bulges in the middle
  of the long sides, and its layers are not orderly): a few per cent more;
- the wire's own round section and insulation (Rosa's corrections, Grover
  ch. 16) change L by far less than 0.1 % for thousands of fine turns.

So expect the air-core inductance of a real pickup coil within about 5 %.
A core of steel or magnet raises it: that takes the magnetics solver (not
here); :mod:`render.impedance.eddy` gives the core's frequency dependence.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.constants import mu_0
from scipy.special import ellipe, ellipk

from ..errors import InputError
from ..magnetics.coil import CoilGeometry

_MU0_4PI = mu_0 / (4.0 * math.pi)


def _g(u, d):
    return u * np.arcsinh(u / d) - np.hypot(u, d)


def parallel_filaments_mutual(a0, a1, b0, b1, d):
    """Mutual inductance (H) of two parallel straight filaments, Grover 1946 ch. 6, eq. (2).

    Parameters
    ----------
    a0, a1 : array_like, m
        The first filament's span along the common direction (a0 < a1).
    b0, b1 : array_like, m
        The second filament's span, on a line a distance ``d`` away.
    d : array_like, m, > 0
        The distance between the two lines (for a filament with itself, the
        geometric mean distance of its section from itself).
    """
    return _MU0_4PI * (_g(a1 - b0, d) - _g(a1 - b1, d) - _g(a0 - b0, d) + _g(a0 - b1, d))


def rectangles_mutual(p1, q1, p2, q2, dz, *, self_gmd_x=None, self_gmd_y=None):
    """Mutual inductance (H) of two coaxial rectangular filaments, both counter-clockwise.

    Parameters
    ----------
    p1, q1, p2, q2 : array_like, m
        Half-sizes of the two rectangles along x and y (centred on the z axis).
    dz : array_like, m
        Their axial distance.
    self_gmd_x, self_gmd_y : array_like, m, optional
        Where two sides coincide (a filament with itself), the distance to use
        for the sides running along x and along y: the GMD of the turn's
        section from itself.
    """
    p1, q1, p2, q2, dz = np.broadcast_arrays(*(np.asarray(v, float) for v in (p1, q1, p2, q2, dz)))
    # sides along y (at x = ±p, spanning [-q, q]): like-signed pairs at |p1 - p2|, opposite at p1 + p2
    d_near_y = np.hypot(p1 - p2, dz)
    d_near_x = np.hypot(q1 - q2, dz)
    if self_gmd_y is not None:
        d_near_y = np.where(d_near_y > 0, d_near_y, self_gmd_y)
    if self_gmd_x is not None:
        d_near_x = np.where(d_near_x > 0, d_near_x, self_gmd_x)
    m_y = parallel_filaments_mutual(-q1, q1, -q2, q2, d_near_y) - parallel_filaments_mutual(-q1, q1, -q2, q2, np.hypot(p1 + p2, dz))
    m_x = parallel_filaments_mutual(-p1, p1, -p2, p2, d_near_x) - parallel_filaments_mutual(-p1, p1, -p2, p2, np.hypot(q1 + q2, dz))
    return 2.0 * (m_y + m_x)


def rectangle_loop_inductance(side_x: float, side_y: float, wire_radius: float) -> float:
    """Self-inductance (H) of one rectangular loop of round wire (uniform current), by eq. (2).

    The GMD of a round wire's section from itself is r·e^(−1/4) (Grover ch. 3).
    """
    g = wire_radius * math.exp(-0.25)
    return float(rectangles_mutual(side_x / 2, side_y / 2, side_x / 2, side_y / 2, 0.0, self_gmd_x=g, self_gmd_y=g))


def _toeplitz_counts(n: int) -> np.ndarray:
    c = 2.0 * (n - np.arange(n))
    c[0] = n
    return c


_GL_X, _GL_W = np.polynomial.legendre.leggauss(40)


def _exact_log_gmd(x: float, z: float, a: float, b: float) -> float:
    """ln of the GMD of two equal a × b rectangles whose centres are (x, z) apart (numerical).

    The difference of two uniform points has a triangular density on
    [x − a, x + a] (and [z − b, z + b]); ln r is integrated against it by
    Gauss–Legendre on pieces split where the density kinks or r can vanish.
    """

    def pieces(c, h):
        if h == 0.0:
            return np.array([c]), np.array([1.0])
        cuts = sorted({-h, 0.0, h, *([-c] if -h < -c < h else [])})
        nodes, weights = [], []
        for lo, hi in zip(cuts[:-1], cuts[1:]):
            nodes.append(0.5 * (hi - lo) * _GL_X + 0.5 * (hi + lo))
            weights.append(0.5 * (hi - lo) * _GL_W)
        s = np.concatenate(nodes)
        w = np.concatenate(weights) * (h - np.abs(s)) / (h * h)
        return c + s, w

    xs, wx = pieces(x, a)
    zs, wz = pieces(z, b)
    r2 = xs[:, None] ** 2 + zs[None, :] ** 2
    return float(0.5 * np.sum(wx[:, None] * wz[None, :] * np.log(r2)))


def cell_gmd(x, z, a: float, b: float, *, near: int = 2):
    """GMD (m) of two equal a × b rectangular cells whose centres are (x, z) apart.

    Within ``near`` cells (and for a cell with itself) the GMD is integrated
    numerically; farther out the second-order expansion of the mean of ln r,
    ln g = ln d + (a² − b²)(z² − x²) / (12 d⁴), is used (our expansion; it
    vanishes for square cells, where the distance between the centres is
    already the GMD to second order, as Grover ch. 3 tabulates).
    """
    x, z = np.broadcast_arrays(np.abs(np.asarray(x, float)), np.abs(np.asarray(z, float)))
    d2 = x * x + z * z
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_g = 0.5 * np.log(d2) + (a * a - b * b) * (z * z - x * x) / (12.0 * d2 * d2)
    with np.errstate(divide="ignore", invalid="ignore"):
        ia = np.rint(x / a) if a > 0 else np.where(x == 0, 0.0, np.inf)
        ib = np.rint(z / b) if b > 0 else np.where(z == 0, 0.0, np.inf)
    close = (ia <= near) & (ib <= near)
    if np.any(close):
        keys = {(int(i), int(k)) for i, k in zip(ia[close], ib[close])}
        table = {key: _exact_log_gmd(key[0] * a, key[1] * b, a, b) for key in keys}
        ln_g = np.array(ln_g, float)
        for key, value in table.items():
            ln_g[close & (ia == key[0]) & (ib == key[1])] = value
    return np.exp(ln_g)


def default_grid(winding: CoilGeometry) -> tuple[int, int]:
    """(layers, slices): cells about a twelfth of the smaller of depth and height, at least 8 × 8."""
    depth = min(winding.depth_length, winding.depth_width)
    cell = min(depth, winding.height) / 12.0
    layers = int(np.clip(math.ceil(depth / cell), 8, 48))
    slices = int(np.clip(math.ceil(winding.height / cell), 8, 96))
    return layers, slices


def winding_inductance(winding: CoilGeometry, *, layers: int | None = None, slices: int | None = None) -> float:
    """Air-core inductance (H) of a rectangular multilayer winding, eq. (1).

    Parameters
    ----------
    winding : CoilGeometry
    layers, slices : int, optional
        Cells across the depth and along the height (default :func:`default_grid`).
    """
    if layers is None or slices is None:
        dl, ds = default_grid(winding)
        layers, slices = layers or dl, slices or ds
    cx = winding.depth_width / layers  # cell size across the long sides (they run along y at x = ±p)
    cy = winding.depth_length / layers  # cell size across the short sides (along x at y = ±q)
    dzc = winding.height / slices
    u = (np.arange(layers) + 0.5) / layers
    p = winding.window_width / 2 + u * winding.depth_width  # half-size along x (along the string)
    q = winding.window_length / 2 + u * winding.depth_length  # half-size along y
    i, j, k = np.meshgrid(np.arange(layers), np.arange(layers), np.arange(slices), indexing="ij")
    p1, p2, q1, q2, dz = p[i], p[j], q[i], q[j], k * dzc
    # like-directed sides on the same side of the axis: cell GMDs (exact near, expanded far)
    d_y = cell_gmd((i - j) * cx, dz, cx, dzc)
    d_x = cell_gmd((i - j) * cy, dz, cy, dzc)
    m_y = parallel_filaments_mutual(-q1, q1, -q2, q2, d_y) - parallel_filaments_mutual(-q1, q1, -q2, q2, np.hypot(p1 + p2, dz))
    m_x = parallel_filaments_mutual(-p1, p1, -p2, p2, d_x) - parallel_filaments_mutual(-p1, p1, -p2, p2, np.hypot(q1 + q2, dz))
    total = float(np.sum(2.0 * (m_y + m_x) * _toeplitz_counts(slices)[None, None, :]))
    share = winding.turns / (layers * slices)
    return share * share * total


# ----------------------------------------------------------------------------
# Round coils


def circles_mutual(a, b, dz):
    """Mutual inductance (H) of two coaxial circular filaments of radii a, b at axial distance dz (Maxwell)."""
    a, b, dz = np.broadcast_arrays(*(np.asarray(v, float) for v in (a, b, dz)))
    m = 4.0 * a * b / ((a + b) ** 2 + dz**2)
    k = np.sqrt(m)
    return mu_0 * np.sqrt(a * b) * ((2.0 / k - k) * ellipk(m) - (2.0 / k) * ellipe(m))


def circular_loop_inductance(radius: float, wire_radius: float) -> float:
    """Self-inductance (H) of one circular loop of round wire (uniform current): Maxwell's
    formula for the loop with itself at the wire's GMD r·e^(−1/4)."""
    return float(circles_mutual(radius, radius, wire_radius * math.exp(-0.25)))


def round_winding_inductance(*, turns: float, inner_radius: float, outer_radius: float, height: float, layers: int = 16, slices: int = 32) -> float:
    """Air-core inductance (H) of a round coil of rectangular section, by eq. (1) with circles.

    ``outer_radius == inner_radius`` gives a single-layer current sheet (a solenoid).
    """
    depth = outer_radius - inner_radius
    if depth < 0 or height <= 0 or inner_radius <= 0:
        raise InputError(f"round coil inner {inner_radius!r} m, outer {outer_radius!r} m, height {height!r} m: need 0 < inner ≤ outer and height > 0")
    if depth == 0:
        layers = 1
    cr = depth / layers
    dzc = height / slices
    r = inner_radius + (np.arange(layers) + 0.5) / layers * depth
    i, j, k = np.meshgrid(np.arange(layers), np.arange(layers), np.arange(slices), indexing="ij")
    dr, dz = (j - i) * cr, k * dzc
    # the cells' separation scaled to their GMD (a cell with itself: the GMD along the axis)
    g = cell_gmd(dr, dz, cr, dzc)
    d = np.hypot(dr, dz)
    f = np.where(d > 0, g / np.where(d > 0, d, 1.0), 0.0)
    mean_r = 0.5 * (r[i] + r[j])
    m = circles_mutual(mean_r - 0.5 * dr * f, mean_r + 0.5 * dr * f, np.where(d > 0, dz * f, g))
    share = turns / (layers * slices)
    return share * share * float(np.sum(m * _toeplitz_counts(slices)[None, None, :]))
