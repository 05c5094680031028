"""What ``render check`` reports for a design: its bias point, headroom, corners, resonance and figures."""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..design import Coil, Design


def corners(d: Design) -> dict:
    """First-order corners of the networks taken alone: 1/(2πRC) (textbook)."""
    tau = 2 * math.pi
    ib = d.input_b
    out = {
        "input_a_hz": 1 / (tau * d.input_a.series_r * d.input_a.series_c),
        "input_b_hz": 1 / (tau * ib.series_r * ib.series_c),
        "feedback_hz": 1 / (tau * d.feedback.r * d.feedback.c) if d.feedback.c else None,
    }
    assert ib.bias_top is not None and ib.bias_bottom is not None  # input_b always has them
    par = 1 / (1 / ib.bias_top + 1 / ib.bias_bottom)
    out["bias_node_hz"] = 1 / (tau * par * ib.shunt_c) if ib.shunt_c else None
    # the output coupling capacitor into the DC path the jack sees: shunt_r || volume pot
    loads = [d.rig.volume_pot] + ([d.output.shunt_r] if d.output.shunt_r else [])
    r_load = 1 / sum(1 / r for r in loads)
    out["output_hz"] = 1 / (tau * (d.output.series_r + r_load) * d.output.coupling_c)
    from .undefined import put

    put(out, "feedback_hz", out.pop("feedback_hz"), "no feedback.c, so no feedback corner")
    put(out, "bias_node_hz", out.pop("bias_node_hz"), "no input_b.shunt_c, so no bias-node corner")
    return out


def _pole(pole: tuple) -> dict:
    from .undefined import put

    out: dict = {}
    put(out, "pole_resonance_hz", pole[0], "no complex pole pair below 20 kHz")
    put(out, "pole_q", pole[1], "no complex pole pair below 20 kHz")
    return out


def design_summary(d: Design, fig: dict, pole: tuple) -> dict:
    """JSON-ready: the design's derived values, its figures and its most resonant pole pair (f0 Hz, Q)."""
    from ..design.provenance import design_provenance

    ib = d.input_b
    assert ib.bias_top is not None and ib.bias_bottom is not None

    def coil(c: Coil) -> dict:
        out: dict[str, object] = {"inductance_h": c.inductance, "resistance_ohm": c.resistance, "capacitance_f": c.capacitance}
        if c.winding is not None:
            w = c.winding
            out["winding"] = {
                "estimate": True,
                "turns": w.turns,
                "wire_awg": w.wire_awg,
                "wire_diameter_m": w.wire_diameter,
                "wire_length_m": w.wire_length,
                "mean_turn_m": w.mean_turn,
                "height_m": w.height,
                "depth_m": w.depth,
                "core_factor": w.core_factor,
                "temperature_c": w.temperature,
            }
        if c.geometry is not None:
            g = c.geometry
            out["geometry"] = {
                "turns": g.turns,
                "length_m": g.length,
                "width_m": g.width,
                "window_length_m": g.window_length,
                "window_width_m": g.window_width,
                "height_m": g.height,
                "from_winding": c.winding is not None,
                "mean_turn_m": g.mean_turn,
                "turns_area_m2": g.turns_area,
                "entered_turns_area_m2": c.entered_turns_area,
            }
        return out

    return {
        "file": d.source,
        "design": d.name,
        **design_provenance(d),
        "bias_v": d.bias_v,
        "bias_divider_parallel_ohm": 1 / (1 / ib.bias_top + 1 / ib.bias_bottom),
        "headroom_up_v": d.headroom_up_v,
        "headroom_down_v": d.headroom_down_v,
        "limit_window_v": [d.limit_low_v, d.limit_high_v],
        "coil_a": coil(d.coil_a),
        "coil_b": coil(d.coil_b),
        "corners_hz": corners(d),
        "mains_hz": d.hum.mains,
        **_pole(pole),
        "figures": {k: v for k, v in fig.items() if k != "passive"},
        "passive": fig["passive"],
    }


def check_designs(designs, *, turns_percent: float | None = None) -> list[dict]:
    """:func:`design_summary` of every design (one engine pass), with a ±``turns_percent`` turns sweep when given."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from .figures import figures, pole_resonance

    resp = responses(from_designs(list(designs)))
    figs = figures(designs, resp=resp)
    vel = resp.velocity()
    records = [design_summary(d, fig, pole_resonance(vel, i)) for i, (d, fig) in enumerate(zip(designs, figs))]
    if turns_percent:
        from .turns import turns_table

        for d, rec in zip(designs, records):
            rec["turns_sweep"] = turns_table(d, turns_percent)
    return records


def hum_warnings(design) -> tuple[str, ...]:
    """What the hum figures of ``design`` (its rig applied) rest on that the design does not back, one line each, naming its file.

    A dipole met by a coil without geometry (:func:`render.magnetics.pickup.point_coil_warnings`), one
    coil's ``turns_area`` from its geometry and the other's entered and different
    (:func:`~render.magnetics.pickup.area_mismatch_warnings`), and a winding whose area is far from the
    entered one (:func:`~render.magnetics.pickup.winding_area_warnings`).
    """
    from ..magnetics.pickup import area_mismatch_warnings, point_coil_warnings, winding_area_warnings

    return point_coil_warnings(design) + area_mismatch_warnings(design) + winding_area_warnings(design)


def rejection_text(fig: dict, mains_hz: float) -> str:
    """The figures' hum rejection as ``render check`` prints it, naming the harmonic it is quoted at.

    fig : one design's :func:`render.analysis.figures.figures`
    mains_hz : float, Hz, the design's mains fundamental
    """
    from .undefined import figure_or_reason

    k = fig.get("hum_rejection_harmonic")
    at = " dB at the mains fundamental" if k in (1, None) else f" dB at H{k}, {k * mains_hz:g} Hz, the lowest harmonic with hum"
    return figure_or_reason(fig, "hum_rejection_db", ".1f", at)
