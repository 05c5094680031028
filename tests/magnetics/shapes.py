"""Test geometries shared by the steel tests (only the test suite uses this module)."""

from __future__ import annotations

import numpy as np

from render.magnetics.steel import Part


def cube_sphere(radius: float, n: int, chi: float, centre=(0.0, 0.0, 0.0)) -> tuple[list[Part], float]:
    """A sphere as the cubes of an n × n × n grid whose centres lie inside it, and their volume (m³)."""
    h = 2 * radius / n
    c = (np.arange(n) + 0.5) * h - radius
    parts = []
    for x in c:
        for y in c:
            for z in c:
                if x * x + y * y + z * z <= radius * radius:
                    p = np.array([x, y, z]) + np.asarray(centre, dtype=float)
                    parts.append(Part("cell", tuple(p - h / 2), tuple(p + h / 2), chi))
    return parts, len(parts) * h**3
