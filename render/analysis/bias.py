"""Clipping as the bias divider is unbalanced, and as the battery runs down.

The op-amp output sits at V_bias = battery · bottom / (top + bottom) and can
swing up to battery − margin_high and down to margin_low; the soft limit's
knee starts ``knee`` volts inside each. Moving the bias off the window's
centre gives less headroom on one side, so that side clips first and the
clipping turns asymmetric: even harmonics appear (an odd transfer function
driven by a sine gives only odd harmonics; Fourier, half-wave symmetry).

Keeping the divider's parallel resistance P = top·bottom/(top + bottom)
constant while its ratio ρ = bottom/(top + bottom) moves (top = P/ρ,
bottom = P/(1 − ρ)) keeps the non-inverting input's AC loading, so only
the bias moves; keeping the sum instead changes the loading too.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from .harmonics import distortion_figures

SINE_HZ = 1000.0  # reference sine: 48 samples per period at 48 kHz, harmonics to H10 below 20 kHz


@dataclass(frozen=True)
class Setting:
    label: str
    ratio: float
    top: float
    bottom: float
    battery: float
    design: Any  # the Design with this divider and battery


def divider(design, ratio: float, *, keep_load: bool = True) -> tuple[float, float]:
    """(top, bottom) in Ω for divider ratio bottom/(top + bottom) = ``ratio``."""
    ib = design.input_b
    if keep_load:
        p = ib.bias_top * ib.bias_bottom / (ib.bias_top + ib.bias_bottom)
        return p / ratio, p / (1.0 - ratio)
    s = ib.bias_top + ib.bias_bottom
    return (1.0 - ratio) * s, ratio * s


def sweep(design, *, ratios=None, tops=None, bottoms=None, batteries=None, keep_load: bool = True, include_own: bool = False) -> list[Setting]:
    """Every (divider, battery) setting to render, in order; the design's own divider marked "(own)" where it is
    among them, and added (in order) with ``include_own``."""
    from .bias_labels import with_own_divider, with_own_ratio

    dividers = []
    if tops is not None or bottoms is not None:
        pairs, own = with_own_divider(design, list(zip(tops, bottoms)), add=include_own)
        for i, (t, b) in enumerate(pairs):
            dividers.append((f"{_r(t)}/{_r(b)}" + (" (own)" if i == own else ""), b / (t + b), t, b))
    else:
        rs, labels = with_own_ratio(design, list(ratios), add=include_own)
        for r, label in zip(rs, labels):
            t, b = divider(design, r, keep_load=keep_load)
            dividers.append((label, r, t, b))
    out = []
    for v in batteries or [design.supply.battery]:
        for label, r, t, b in dividers:
            d = replace(design, input_b=replace(design.input_b, bias_top=t, bias_bottom=b), supply=replace(design.supply, battery=v))
            out.append(Setting(f"{label}, {v:g} V", r, t, b, v, d))
    return out


def _r(x):
    from ..units import format_rkm

    return format_rkm(x)


def velocity_to_amp_output(design, frequency_hz: float) -> float:
    """|V_out / v| at ``frequency_hz``: string velocity (both sensing points) to the op-amp output (V per m/s)."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    return float(abs(responses(from_designs([design])).velocity_to_amp_output()(frequency_hz)[0, 0]))


def _refuse_silent(design) -> None:
    """Refuse a design with no signal at the amp input: the volume at 0, or coils that cancel the string signal exactly."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..errors import InputError
    from .figures import signal_cancels

    if design.rig.volume <= 0.0:  # decided by the setting (the circuit keeps the pot's end-stop resistor), as everywhere
        raise InputError(f"{design.source}: the rig's volume is 0, so no signal reaches the amp input where the clipping is measured; set [rig] volume above 0 (1 is full up)")
    silent, _ = signal_cancels(responses(from_designs([design])), [SINE_HZ])
    if silent[0]:
        raise InputError(
            f"{design.source}: the two coils cancel the string signal exactly (coil_b wired in reverse? check signal_polarity),"
            " so no string velocity drives the output into a limit: there is no clipping to measure"
        )


def knee_at_rest(design) -> str | None:
    """The side ("low" or "high") whose soft-limit knee the bias lies inside, or None.

    There the output stage is on its knee with no signal (the loop still holds the output within
    knee/(1 + loop gain) of the bias): the limit's onset on that side is reached at rest. A bias at or
    past a limit (:func:`resting_limit`) is not counted here.
    """
    if resting_limit(design):
        return None
    knee = design.supply.knee
    if design.bias_v <= design.limit_low_v + knee:
        return "low"
    if design.bias_v >= design.limit_high_v - knee:
        return "high"
    return None


def onset(design, *, frequency_hz: float = SINE_HZ) -> dict:
    """String velocity (peak, m/s) and coil_a EMF (peak, V) of a sine at which
    the op-amp output first enters the soft limit's knee, on each side.

    Where the bias already lies inside a knee (:func:`knee_at_rest`) that side's onset is 0, reached at
    rest (``at_rest``: "up" or "down", else None), never a negative velocity.
    """
    g = velocity_to_amp_output(design, frequency_hz)
    knee = design.supply.knee
    up = max(0.0, design.limit_high_v - knee - design.bias_v) / g
    down = max(0.0, design.bias_v - design.limit_low_v - knee) / g
    sens = design.coil_a.sensitivity
    return {
        "frequency_hz": frequency_hz,
        "velocity_up_m_per_s": up,
        "velocity_down_m_per_s": down,
        "emf_up_v": up * sens,
        "emf_down_v": down * sens,
        "first_side": "up" if up < down else ("down" if down < up else "both"),
        "at_rest": {"low": "down", "high": "up", None: None}[knee_at_rest(design)],
    }


REST_TOLERANCE_V = 1e-9  # a bias this close to a limit counts as on it (rounding of battery·ratio)


def resting_limit(design) -> str | None:
    """Which limit the op-amp output rests on with no signal: "low" or "high" when the bias lies at or past a
    limit (``limit_low_v``, ``limit_high_v``: a divider swept far off centre), else None.

    Inside the window's knees it does not rest there: the loop holds the output on its linear course to
    within knee/(1 + loop gain) of a limit (:func:`render.chain.loop.static_transfer`), so a small signal
    passes unchanged and the headroom to that limit is small, not gone.
    """
    if design.bias_v <= design.limit_low_v + REST_TOLERANCE_V:
        return "low"
    if design.bias_v >= design.limit_high_v - REST_TOLERANCE_V:
        return "high"
    return None


def rest_reason(design) -> str:
    """Why a setting with :func:`resting_limit` has no onset, headroom or recovery, in words."""
    return (
        f"the bias {design.bias_v:.3g} V lies at or past the output's limits {design.limit_low_v:.3g}..{design.limit_high_v:.3g} V:"
        f" the op-amp rests on its {resting_limit(design)} limit with no signal"
    )


def knee_reason(design) -> str:
    """What a setting with :func:`knee_at_rest` means, in words (its warning)."""
    side = knee_at_rest(design)
    lo, hi = (design.limit_low_v, design.limit_low_v + design.supply.knee) if side == "low" else (design.limit_high_v - design.supply.knee, design.limit_high_v)
    return (
        f"the bias {design.bias_v:.4g} V lies inside the soft limit's {side} knee ({lo:.3g}..{hi:.3g} V): the output stage is on it with no signal,"
        f" so the onset on that side is reached at rest (0 m/s) and the phrase is limited there from the start"
    )


REST_CELL = {"low": "on low limit", "high": "on high limit"}  # table cells
AT_REST = "at rest"  # an onset cell's side where the bias lies inside the knee
RESTS = "none: rests on limit"  # a table cell for an onset or a recovery there
RESTS_PLAYED = "rests on a limit"  # a phrase table's cell for where its limit is reached there


def headroom_cell(row: dict, width: tuple[int, int] = (0, 0)) -> str:
    """A bias row's headroom up / down as one table cell, in words when the output rests on a limit."""
    if row.get("rests_on_limit"):
        return REST_CELL[row["rests_on_limit"]]
    return f"{row['headroom_up_v']:{width[0]}.2f} / {row['headroom_down_v']:{width[1]}.2f} V"


def onset_cell(row: dict, width: tuple[int, int] = (0, 0), unit: str = "") -> str:
    """A bias row's onset velocities up / down (m/s, ``unit`` after them) as one table cell, in words when the output rests on a limit."""
    o = row["onset"]
    if o["velocity_up_m_per_s"] is None:
        return RESTS
    rest = o.get("at_rest")
    up, down = (AT_REST if rest == side else f"{o[f'velocity_{side}_m_per_s']:.3f}{unit if rest else ''}" for side in ("up", "down"))
    return f"{up:>{width[0]}s} / {down:>{width[1]}s}{'' if rest else unit}"


def sine_distortion(design, *, velocity_peak: float, frequency_hz: float = SINE_HZ, sample_rate: int = 48000, seconds: float = 0.6, settle: float = 0.35) -> dict:
    """THD and the H2, H3 levels at the amp input for a steady sine of string velocity."""
    from ..chain.stream import render_signal

    n = int(round(seconds * sample_rate))
    t = np.arange(n) / sample_rate
    v = velocity_peak * np.sin(2 * np.pi * frequency_hz * t)
    out = render_signal(design, np.stack([v, v]), sample_rate=sample_rate, hum=False)["out"]
    start = int(round(settle * sample_rate))
    period = sample_rate / frequency_hz
    stop = start + int(round(int((n - start) / period) * period))
    figs = distortion_figures(out[start:stop], sample_rate=sample_rate, frequency_hz=frequency_hz)
    return {"frequency_hz": frequency_hz, "velocity_peak_m_per_s": velocity_peak, **figs}


# ----------------------------------------------------------------------------
# The library form of ``render bias``

REALISTIC_VELOCITY = 20.0  # m/s peak string velocity (common practice, no source)
# --sine-velocity accepted, m/s peak: a plucked string moves at a few m/s (common practice, no source), so 1 mm/s
# is far below a soft pluck and 100 m/s far past any playing (render bias --sine-velocity uses the same range)
SINE_VELOCITY_RANGE = (0.001, 100.0)
RATIO_RANGE = (0.02, 0.98)


def _measure(args: tuple) -> dict:
    from . import undefined as U
    from .recovery import burst_figures

    s, ref_v = args
    d = s.design
    burst = burst_figures(d, velocity_peak=ref_v)
    row = {
        "setting": s.label,
        "ratio": s.ratio,
        "bias_top_ohm": s.top,
        "bias_bottom_ohm": s.bottom,
        "battery_v": s.battery,
        "bias_v": d.bias_v,
        "headroom_up_v": d.headroom_up_v,  # signed: below zero, the bias lies past that limit
        "headroom_down_v": d.headroom_down_v,
        "rests_on_limit": resting_limit(d),
        "onset": onset(d),
        "sine": sine_distortion(d, velocity_peak=ref_v),
        **{k: v for k, v in burst.items() if k.startswith("recovery_")},  # with their reasons where undefined
        "burst": burst,
    }
    if row["rests_on_limit"]:  # no linear range: no onset to reach, no DC point to return to
        why = rest_reason(d)
        for key in ("velocity_up_m_per_s", "velocity_down_m_per_s", "emf_up_v", "emf_down_v"):
            U.mark(row["onset"], key, why)
        row["onset"]["first_side"] = row["onset"]["at_rest"] = None
        for key in ("recovery_offset_v", "recovery_tau_s"):
            U.mark(row, key, why)
    return row


@dataclass(frozen=True)
class BiasSweep:
    """What :func:`bias_sweep` measured.

    Attributes
    ----------
    design : Design
    settings : tuple of Setting
        Each (divider, battery) setting, its design changed accordingly, in order.
    rows : tuple of dict
        Per setting: bias, headroom, the clip onset (string velocity and EMF
        on each side) and the test sine's THD, H2 and H3 (the JSON layout of
        ``render bias --json``'s ``settings``).
    sine_velocity_m_per_s : float, m/s peak, of the 1 kHz test sine
    keep_load : bool
    warnings : tuple of str
    """

    design: object
    settings: tuple[Setting, ...]
    rows: tuple[dict, ...]
    sine_velocity_m_per_s: float
    keep_load: bool
    warnings: tuple[str, ...] = ()


def bias_sweep(design, *, ratios=(0.3, 0.4, 0.5, 0.6, 0.7), tops=None, bottoms=None, batteries=None, keep_load: bool = True, sine_velocity: float | None = None, jobs: int = 1) -> BiasSweep:
    """Clipping of ``design`` as its bias divider is unbalanced (and its battery runs down).

    Parameters
    ----------
    design : Design
    ratios : sequence of float, 0.02..0.98
        Divider ratios bottom/(top + bottom) (unless ``tops`` and ``bottoms`` are given); the
        design's own divider is always added to them (in order) and marked "(own)".
    tops, bottoms : sequences of float, Ω, or None
        Explicit divider values, of equal length.
    batteries : sequence of float, V, or None
        Supply voltages (default: the design's).
    keep_load : bool
        Keep the divider's parallel resistance (the input loading) rather than its sum.
    sine_velocity : float or None, m/s peak
        The 1 kHz test sine (default: 1.4 × the design's own first onset, +3 dB past it).
    jobs : int
        Settings measured in this many processes (identical results).

    Returns
    -------
    BiasSweep
    """
    from .. import arguments as A
    from ..errors import ArgumentError
    from ..parallel import pmap

    tops, bottoms, batteries = (None if v is None else A.numbers(n, v, option=o) for n, v, o in (("tops", tops, "--top"), ("bottoms", bottoms, "--bottom"), ("batteries", batteries, "--battery")))
    if tops is None:
        ratios = A.numbers("ratios", ratios)
    if sine_velocity is not None:
        A.number("sine_velocity", sine_velocity, lo=SINE_VELOCITY_RANGE[0], hi=SINE_VELOCITY_RANGE[1], unit="m/s", option="--sine-velocity")
    jobs, keep_load = A.whole("jobs", jobs), A.flag("keep_load", keep_load)
    listed = {name: ",".join(f"{x:g}" for x in v) for name, v in (("tops", tops), ("bottoms", bottoms)) if v is not None}
    if len(listed) == 1:
        ((name, text),) = listed.items()
        raise ArgumentError(name, text, "tops and bottoms go together: give both lists, of the same length", cli="--top and --bottom go together: give both lists, of the same length")
    if tops is not None and bottoms is not None:
        cli = f"--top={listed['tops']}, --bottom={listed['bottoms']}: need lists of equal length of resistances from 1 Ω to 1 GΩ"
        if len(tops) != len(bottoms):
            raise ArgumentError("bottoms", listed["bottoms"], f"{len(bottoms)} values against {len(tops)} tops; give lists of equal length", cli=cli)
        for name, v in (("tops", tops), ("bottoms", bottoms)):
            if any(x < 1 or x > 1e9 for x in v):
                raise ArgumentError(name, listed[name], "each must be a resistance from 1 Ω to 1 GΩ", cli=cli)
    elif any(not RATIO_RANGE[0] <= r <= RATIO_RANGE[1] for r in ratios):
        raise ArgumentError("ratios", f"{','.join(f'{r:g}' for r in ratios)}", f"each ratio bottom/(top+bottom) must be from {RATIO_RANGE[0]:g} to {RATIO_RANGE[1]:g}")
    if batteries and any(not 1.5 <= v <= 60 for v in batteries):
        raise ArgumentError("batteries", f"{','.join(f'{v:g}' for v in batteries)}", "each battery voltage must be from 1.5 V to 60 V", option="--battery")
    settings = sweep(design, ratios=None if tops is not None else list(ratios), tops=tops, bottoms=bottoms, batteries=batteries, keep_load=keep_load, include_own=True)
    for s in settings:
        w = s.design.supply
        if w.battery - w.margin_low - w.margin_high - 2 * w.knee <= 0:
            raise ArgumentError("batteries", f"{s.battery:g}", "leaves no room between margin_low + margin_high + 2·knee and the battery; raise it", option="--battery")
    _refuse_silent(design)
    first = onset(design)
    ref_v = sine_velocity or 1.4 * min(first["velocity_up_m_per_s"], first["velocity_down_m_per_s"])
    warnings: tuple[str, ...] = ()
    if ref_v > REALISTIC_VELOCITY and sine_velocity:
        warnings = (f"a {ref_v:.3g} m/s sine is far beyond realistic playing (above {REALISTIC_VELOCITY:g} m/s); measuring it anyway",)
    elif ref_v > REALISTIC_VELOCITY:  # the default sine, 1.4 times the first onset: the design itself is the news
        warnings = (
            f"the test sine, 1.4 times the first onset, is {ref_v:.3g} m/s, beyond realistic playing (above {REALISTIC_VELOCITY:g} m/s):"
            " this design reaches its limit only with a string moving faster than playing gives it",
        )
    warnings += tuple(f"{s.label}: {rest_reason(s.design)}; it has no onset, headroom or recovery, and its THD is that of a stage already clipped" for s in settings if resting_limit(s.design))
    warnings += tuple(f"{s.label}: {knee_reason(s.design)}" for s in settings if knee_at_rest(s.design))
    rows = pmap(_measure, [(s, ref_v) for s in settings], jobs)
    return BiasSweep(design=design, settings=tuple(settings), rows=tuple(rows), sine_velocity_m_per_s=ref_v, keep_load=keep_load, warnings=warnings)
