"""The response as a CSV table (``render response --csv``)."""

from __future__ import annotations

import numpy as np


def _level_phase(h) -> str:
    """'dB,degrees' of one complex value; two empty cells where it is exactly zero (no level, no phase)."""
    if h == 0:
        return ","
    return f"{20 * np.log10(abs(h)):.6f},{np.degrees(np.angle(h)):.4f}"


def response_csv_text(f, h, hp) -> str:
    """frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg: dB re 1 V per m/s, degrees.

    Where a response is exactly zero (its coils cancel the string signal) its
    two cells are empty: the level would be minus infinity and the phase undefined.
    """
    rows = ["frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg"]
    for fi, a, b in zip(f, h, hp):
        rows.append(f"{fi:.6g},{_level_phase(a)},{_level_phase(b)}")
    return "\n".join(rows) + "\n"
