"""``render bias``'s printed sweep table: one row per setting, columns as wide as their cells (:mod:`render.report.table`)."""

from __future__ import annotations

from .table import aligned_pairs, table_lines

SWEEP_HEADER = ("setting", "bias", "headroom up/down", "onset velocity up/down (m/s)", "THD", "H2", "H3", "after a 60 ms burst")


def sweep_title(sw) -> str:
    """The line above the table: the design, how the divider moves, and the test sine."""
    d = sw.design
    how = "parallel resistance kept" if sw.keep_load else "total resistance kept"
    return f"{d.name}  ({d.source}); divider {how}; test sine 1 kHz, {sw.sine_velocity_m_per_s:.3g} m/s peak"


def sweep_lines(sw) -> list[str]:
    """The title and the table of a :class:`render.analysis.bias.BiasSweep`; words stand where a figure is undefined."""
    from ..analysis.bias import headroom_cell, onset_cell
    from ..analysis.recovery import recovery_cell
    from ..analysis.undefined import cell

    rows = sw.rows
    headroom = aligned_pairs([headroom_cell(r) for r in rows])
    onsets = aligned_pairs([onset_cell(r) for r in rows])
    cells = [
        (
            r["setting"],
            f"{r['bias_v']:.2f} V",
            up_down,
            onset,
            cell(r["sine"], "thd_percent", ".2f", " %"),
            cell(r["sine"], "h2_db", ".1f", " dB"),
            cell(r["sine"], "h3_db", ".1f", " dB"),
            recovery_cell(r),
        )
        for r, up_down, onset in zip(rows, headroom, onsets)
    ]
    return [sweep_title(sw), *table_lines(SWEEP_HEADER, cells, "lrrrrrrr")]
