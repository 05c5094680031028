"""Preferred numbers: the IEC 60063 E series, and snapping to them.

E6, E12 and E24 are tabulated (IEC 60063:2015): rounding 10^(k/24) to two
figures differs from the table at 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2.
E48 and E96 are round(10^(k/n), 2), which matches their table (from memory:
the only known exception in the three-figure series, 9.20 → 9.19, is in
E192, which is not offered here).
"""

from __future__ import annotations

import math

import numpy as np

E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
E12 = E24[::2]
E6 = E24[::4]
E48 = tuple(round(10 ** (k / 48), 2) for k in range(48))
E96 = tuple(round(10 ** (k / 96), 2) for k in range(96))
SERIES = {"E6": E6, "E12": E12, "E24": E24, "E48": E48, "E96": E96}


def values_between(series: str, lo: float, hi: float) -> np.ndarray:
    """Every value of ``series`` from ``lo`` to ``hi`` inclusive, ascending."""
    mant = SERIES[series]
    out = []
    for dec in range(math.floor(math.log10(lo)) - 1, math.ceil(math.log10(hi)) + 1):
        for m in mant:
            v = float(f"{m}e{dec}")
            if lo * (1 - 1e-12) <= v <= hi * (1 + 1e-12):
                out.append(v)
    return np.array(sorted(set(out)))


def nearest(series: str, x: float) -> float:
    """The value of ``series`` nearest ``x`` on a log scale (IEC 60063 spacing is logarithmic)."""
    cand = values_between(series, x / 10.0, x * 10.0)
    return float(cand[np.argmin(np.abs(np.log(cand / x)))])
