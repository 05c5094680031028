"""A passive comparison pickup in the reports: extra CSV columns and plot curves."""

from __future__ import annotations

import numpy as np

from .response import _level_phase


def with_compare_columns(text: str, p, frequency_hz) -> str:
    """``render response``'s CSV with two more columns, compare_magnitude_db and compare_phase_deg (dB re 1 V per m/s, degrees)."""
    from ..analysis.comparison import compare_response

    h = compare_response(p, frequency_hz)
    lines = text.rstrip("\n").split("\n")
    out = [lines[0] + ",compare_magnitude_db,compare_phase_deg"]
    out += [f"{row},{_level_phase(x)}" for row, x in zip(lines[1:], h)]
    return "\n".join(out) + "\n"


def compare_curves(p, frequency_hz) -> list[tuple[str, np.ndarray]]:
    """[(label, complex response (F,))] of the comparison pickup, or [] without one."""
    if p is None:
        return []
    from ..analysis.comparison import compare_response

    return [(f"{p.name} (passive, compared)", compare_response(p, frequency_hz))]
