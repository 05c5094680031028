"""The design's own bias divider in every sweep, and ratio labels that tell neighbours apart.

A sweep of divider ratios ρ = bottom/(top + bottom) is only read against
the design as it stands if the design's own ρ₀ is one of its points; it is
added (in order) when missing. Each ratio is printed with the fewest decimals
(at least two) that show it exactly to 1e-9, up to :data:`MOST_DECIMALS`, and
labels that would still read the same get more, until they differ.
"""

from __future__ import annotations

MOST_DECIMALS = 4  # enough to tell 220k/270k (0.5510) from 0.55 (common practice, no source)
SAME = 1e-9  # two ratios closer than this are one setting


def own_ratio(design) -> float:
    """The design's divider ratio bottom/(top + bottom)."""
    ib = design.input_b
    return ib.bias_bottom / (ib.bias_top + ib.bias_bottom)


def decimals(r: float) -> int:
    """The fewest decimals (2 … MOST_DECIMALS) that write ``r`` to within 1e-9."""
    for d in range(2, MOST_DECIMALS + 1):
        if abs(round(r, d) - r) < SAME:
            return d
    return MOST_DECIMALS


def ratio_labels(ratios: list[float], own: int | None = None) -> list[str]:
    """``"ratio 0.50"`` labels, distinct from each other, the design's own (index ``own``) marked."""
    d = [decimals(r) for r in ratios]
    for _ in range(7):
        texts = [f"{r:.{k}f}" for r, k in zip(ratios, d)]
        clash = [i for i, t in enumerate(texts) if any(float(t) == float(u) and abs(ratios[i] - ratios[j]) >= SAME for j, u in enumerate(texts) if j != i)]
        if not clash:
            break
        for i in clash:
            d[i] += 1
    return [f"ratio {r:.{k}f}" + (" (own)" if i == own else "") for i, (r, k) in enumerate(zip(ratios, d))]


def with_own_ratio(design, ratios: list[float], *, add: bool = True) -> tuple[list[float], list[str]]:
    """The ratios, with the design's own added in order if missing (and ``add``), and their labels."""
    r0 = own_ratio(design)
    rs = list(ratios)
    at = next((i for i, r in enumerate(rs) if abs(r - r0) < SAME), None)
    if at is None and add:
        rs.append(r0)
        rs.sort()
        at = rs.index(r0)
    return rs, ratio_labels(rs, at)


def with_own_divider(design, pairs: list[tuple[float, float]], *, add: bool = True) -> tuple[list[tuple[float, float]], int | None]:
    """Explicit (top, bottom) pairs with the design's own added at the end if missing (and ``add``), and its index (None: not among them)."""
    ib = design.input_b
    own = (ib.bias_top, ib.bias_bottom)
    for i, (t, b) in enumerate(pairs):
        if abs(t - own[0]) <= SAME * own[0] and abs(b - own[1]) <= SAME * own[1]:
            return pairs, i
    return (pairs + [own], len(pairs)) if add else (pairs, None)
