"""What a few percent more or fewer turns does to a design.

For a fixed former and wire, L ∝ N² and R ∝ N (Wheeler's formula; the wire
length is proportional to N), and a coil's sensitivity and turns × area
(hum pick-up) are ∝ N (Faraday: the EMF adds over the turns). The winding
capacitance is kept.
"""

from __future__ import annotations

from dataclasses import replace


def scale_turns(design, coil: str, factor: float):
    """``design`` with ``coil`` ("coil_a" or "coil_b") wound with ``factor`` × the turns."""
    c = getattr(design, coil)
    new = replace(
        c,
        inductance=c.inductance * factor**2,
        resistance=c.resistance * factor,
        sensitivity=c.sensitivity * factor,
        turns_area=c.turns_area * factor,
        geometry=None if c.geometry is None else replace(c.geometry, turns=c.geometry.turns * factor),
        winding=None
        if c.winding is None
        else replace(
            c.winding,
            turns=c.winding.turns * factor,
            wire_length=c.winding.wire_length * factor,
            inductance=c.winding.inductance * factor**2,
            resistance=c.winding.resistance * factor,
        ),
    )
    return replace(design, **{coil: new})


def turns_table(design, percent: float = 5.0) -> list[dict]:
    """Rows for −percent, 0 and +percent turns on coil_b alone and on both coils."""
    from .figures import figures
    from .undefined import put, reason

    variants = []
    for who in ("coil_b", "both"):
        for pct in (-percent, 0.0, percent):
            f = 1 + pct / 100.0
            d = scale_turns(design, "coil_b", f)
            if who == "both":
                d = scale_turns(d, "coil_a", f)
            variants.append((who, pct, d))
    figs = figures([v[2] for v in variants])
    rows = []
    for (who, pct, d), fig in zip(variants, figs):
        row = {"coils": who, "turns_percent": pct, "inductance_b_h": d.coil_b.inductance, "resistance_b_ohm": d.coil_b.resistance}
        for k in ("peak_hz", "peak_db", "level_1k_db", "hum_rejection_db"):  # None with its reason where undefined
            put(row, k, fig[k], reason(fig, k))
        rows.append(row)
    return rows
