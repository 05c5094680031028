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

import numpy as np

SINE_HZ = 1000.0  # reference sine: 48 samples per period at 48 kHz, harmonics to H10 below 20 kHz
HARMONICS = 10


@dataclass(frozen=True)
class Setting:
    label: str
    ratio: float
    top: float
    bottom: float
    battery: float
    design: object


def divider(design, ratio: float, *, keep_load: bool = True) -> tuple[float, float]:
    """(top, bottom) in Ω for divider ratio bottom/(top + bottom) = ``ratio``."""
    ib = design.input_b
    if keep_load:
        p = ib.bias_top * ib.bias_bottom / (ib.bias_top + ib.bias_bottom)
        return p / ratio, p / (1.0 - ratio)
    s = ib.bias_top + ib.bias_bottom
    return (1.0 - ratio) * s, ratio * s


def sweep(design, *, ratios=None, tops=None, bottoms=None, batteries=None, keep_load: bool = True) -> list[Setting]:
    """Every (divider, battery) setting to render, in order."""
    dividers = []
    if tops is not None or bottoms is not None:
        for t, b in zip(tops, bottoms):
            dividers.append((f"{_r(t)}/{_r(b)}", b / (t + b), t, b))
    else:
        for r in ratios:
            t, b = divider(design, r, keep_load=keep_load)
            dividers.append((f"ratio {r:.2f}", r, t, b))
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


def onset(design, *, frequency_hz: float = SINE_HZ) -> dict:
    """String velocity (peak, m/s) and coil_a EMF (peak, V) of a sine at which
    the op-amp output first enters the soft limit's knee, on each side."""
    g = velocity_to_amp_output(design, frequency_hz)
    knee = design.supply.knee
    up = (design.limit_high_v - knee - design.bias_v) / g
    down = (design.bias_v - design.limit_low_v - knee) / g
    sens = design.coil_a.sensitivity
    return {
        "frequency_hz": frequency_hz,
        "velocity_up_m_per_s": up,
        "velocity_down_m_per_s": down,
        "emf_up_v": up * sens,
        "emf_down_v": down * sens,
        "first_side": "up" if up < down else ("down" if down < up else "both"),
    }


def harmonics_of(x: np.ndarray, *, sample_rate: float, f0: float, n: int = HARMONICS) -> np.ndarray:
    """Peak amplitudes of harmonics 1..n of ``x`` by projection (x spans whole periods of f0)."""
    t = np.arange(x.size) / sample_rate
    return np.array([2.0 * abs(np.mean(x * np.exp(-2j * np.pi * k * f0 * t))) for k in range(1, n + 1)])


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
    h = harmonics_of(out[start:stop], sample_rate=sample_rate, f0=frequency_hz)
    db = lambda k: float(20 * np.log10(max(h[k - 1], 1e-300) / h[0]))
    return {
        "frequency_hz": frequency_hz,
        "velocity_peak_m_per_s": velocity_peak,
        "h1_v": float(h[0]),
        "h2_db": db(2),
        "h3_db": db(3),
        "thd_percent": float(100 * np.sqrt(np.sum(h[1:] ** 2)) / h[0]),
        "harmonics_v": [float(x) for x in h],
    }
