"""Plain-text tables whose columns are as wide as their widest cell, words or numbers.

A fixed width overflows when a cell holds words ("no output", "none: rests on limit") where a
number usually stands, and two such cells then run together; here each column takes the width
of its widest cell (heading included) and columns are always two spaces apart. Pure: strings in,
lines out.
"""

from __future__ import annotations

from collections.abc import Sequence

GAP = "  "  # between columns


def aligned_pairs(cells: Sequence[str], sep: str = " / ") -> list[str]:
    """Cells of the form ``"up / down"`` with their two parts lined up down the column (each part
    right-aligned to the widest); a cell without ``sep`` (words) is left as it is."""
    parts = [c.split(sep, 1) if sep in c else None for c in cells]
    pairs = [p for p in parts if p is not None]
    if not pairs:
        return list(cells)
    left = max(len(p[0]) for p in pairs)
    right = max(len(p[1]) for p in pairs)
    return [c if p is None else f"{p[0]:>{left}s}{sep}{p[1]:>{right}s}" for c, p in zip(cells, parts)]


def table_lines(header: Sequence[str], rows: Sequence[Sequence[str]], align: str, *, indent: str = "  ") -> list[str]:
    """The heading line and one line per row; ``align`` holds ``l`` or ``r`` per column.

    Each column is as wide as its widest cell or heading, so no cell overflows into the next.
    """
    if len(align) != len(header) or any(len(r) != len(header) for r in rows):
        raise ValueError("table_lines: every row and align need one entry per column")
    widths = [max([len(h)] + [len(r[k]) for r in rows]) for k, h in enumerate(header)]

    def line(cells: Sequence[str]) -> str:
        return indent + GAP.join(f"{c:<{w}s}" if a == "l" else f"{c:>{w}s}" for c, w, a in zip(cells, widths, align)).rstrip()

    return [line(header), *(line(r) for r in rows)]
