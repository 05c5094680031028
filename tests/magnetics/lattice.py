"""The staircase sphere of :func:`magnetics.shapes.cube_sphere`, solved on a lattice (only the test suite uses this module).

The same discrete system as :func:`render.magnetics.steel.solve`,
(I − χ·T)·J = χ·B0, with T magpylib-material-response's point-matched cube
interaction, but applied as a convolution over the n × n × n grid by that
package's own FFT operator (``build_fft_kernel``, ``demag_fft_matvec``) and
solved by conjugate gradients (scipy) instead of a dense LU: with one χ
and identical cubes, I − χ·T is symmetric and positive definite (−T is the
cells' demagnetising tensor). Cells outside the sphere carry
no unknown. It reaches 50,000 cells in a few hundred MB, where the dense
matrix would need tens of GB; tests/magnetics/test_steel.py checks that it
gives render's own solve cell for cell.
"""

from __future__ import annotations

import numpy as np


def lattice_sphere(radius: float, n: int, chi: float, b0: float, rtol: float = 1e-10) -> np.ndarray:
    """Every cell's polarisation J (T), (cells, 3), of cube_sphere(radius, n, chi) in a uniform B0 along z.

    Cells in cube_sphere's order (x slowest, z fastest). Raises RuntimeError
    if conjugate gradients do not reach ``rtol``.
    """
    import scipy.sparse.linalg as sla
    from magpylib_material_response.demag_fft import build_fft_kernel, demag_fft_matvec

    h = 2 * radius / n
    c = (np.arange(n) + 0.5) * h - radius
    x, y, z = np.meshgrid(c, c, c, indexing="ij")
    inside = x * x + y * y + z * z <= radius * radius  # cube_sphere's rule: the cube's centre inside
    grid = (n, n, n)
    kernel = build_fft_kernel(grid, (h, h, h), (h, h, h), "point")
    m = int(inside.sum())

    def matvec(v):
        pol = np.zeros((*grid, 3))
        pol[inside] = v.reshape(m, 3)
        return v - chi * demag_fft_matvec(pol, kernel, grid)[inside].ravel()

    a = sla.LinearOperator((3 * m, 3 * m), matvec=matvec, dtype=float)
    rhs = np.tile([0.0, 0.0, chi * b0], m)
    j, info = sla.cg(a, rhs, rtol=rtol, atol=0.0, maxiter=2000)
    if info != 0:
        raise RuntimeError(f"conjugate gradients did not converge at n = {n} (info {info})")
    return j.reshape(m, 3)
