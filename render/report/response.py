"""The response as a CSV table (``render response --csv``)."""

from __future__ import annotations

import numpy as np


def csv_text(f, h, hp) -> str:
    """frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg: dB re 1 V per m/s, degrees."""
    rows = ["frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg"]
    for fi, a, b in zip(f, h, hp):
        rows.append(
            f"{fi:.6g},{20 * np.log10(abs(a)):.6f},{np.degrees(np.angle(a)):.4f},{20 * np.log10(abs(b)):.6f},{np.degrees(np.angle(b)):.4f}"
        )
    return "\n".join(rows) + "\n"
