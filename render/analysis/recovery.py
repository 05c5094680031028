"""Clipping with memory, measured: a burst's harmonics and the recovery after it.

When the op-amp's output sits at a rail the feedback loop is open, the
inverting input stops following, and coil_a's series_c charges through its
resistor: the operating point shifts while the burst lasts, and afterwards
the output comes back to its DC point with the slowest time constant of the
loop's network. These figures come from the nonlinear solve of the loop
(:mod:`render.chain.loop`) through the whole chain.

- :func:`recovery` fits the return of the op-amp output to its DC point
  (its own resting point: the closed loop's static transfer of the linear
  operating point, :func:`rest_point`, which is a rail when that point lies
  past one) after the burst's end, v(t) − V_dc ≈ A·e^{−(t − t_end)/τ}, by a straight
  line through log|v − V_dc| (least squares) over the part of the decay
  where it has fallen from 90 % to 10 % of its value 2 ms after the end
  (the first 2 ms are left out: the loop's faster modes settle there);
  ``recovery_offset_v`` is A (V, signed, the offset extrapolated to the
  burst's end) and ``recovery_tau_s`` is τ (s). Both are undefined, with
  their reason, where there is no such decay: the deviation keeps its sign
  while it falls for less than :data:`MIN_FIT_S` (the output rings, or is
  back within the 2 ms), or the fitted τ is under a quarter of the 2 ms
  (extrapolating A over them would multiply it by more than e⁴).
- :func:`burst_figures` renders a sine burst of string velocity and
  returns the harmonics over the burst's last whole periods (H2, H3, THD)
  and the recovery after it: the fit is made on the rendered output less
  the linear circuit's output for the same burst (plus V_dc), so the offset
  is what the limit left. An input network answers a sine that stops
  abruptly with its own decaying tail (about A/(ωτ) of the sine's amplitude
  A at the op-amp output): that tail is the test signal's, not clipping's,
  and a burst that never reaches a limit reads "no offset".
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .harmonics import distortion_figures

SKIP_S = 2e-3  # s left out after the burst's end before fitting (common practice, no source)
MIN_FIT_S = 0.5e-3  # s: a decay fitted over less than this is no recovery (common practice, no source)
NO_OFFSET = "no offset: the output is back at its DC point when the fit would start"
NO_DECAY = "no slow recovery to fit: the output rings or settles within a few ms of the burst's end"
NO_RETURN = "the output does not return towards its own resting point in the time rendered after the burst"
SHORT = {NO_OFFSET: "no offset", NO_DECAY: "settles fast, no fit", NO_RETURN: "does not return"}  # table cells


def recovery_cell(row: dict) -> str:
    """A row's ``recovery_offset_v`` and ``recovery_tau_s`` as one table cell, in words where undefined."""
    from . import undefined as U

    a, tau = row.get("recovery_offset_v"), row.get("recovery_tau_s")
    if row.get("rests_on_limit"):  # render.analysis.bias: no DC point inside the window to return to
        return "none: rests on limit"
    if a is None:
        return SHORT.get(U.reason(row, "recovery_offset_v"), "undefined")
    held = row.get("recovery_held_s") or 0.0
    lead = f"on limit {held * 1e3:.0f} ms, then " if held >= 1e-3 else ""
    if tau is None:
        return lead + (f"{a:+7.3f} V" if a else SHORT[NO_OFFSET])
    return f"{lead}{a:+7.3f} V, τ {tau * 1e3:5.1f} ms"


FIT_FROM, FIT_TO = 0.9, 0.1  # the fitted part of the decay, as fractions of the deviation after SKIP_S
BURST_S = 0.06  # s: a 60 ms burst, as the reference checks of this model use
AFTER_S = 0.25  # s rendered after the burst for the recovery
# the burst's scale for its linear render (burst_figures): 1e-4 of a burst past the onset stays well inside the
# output stage's identity part, and its output still lies ~1e8 above float64's rounding of a volt
LINEAR_SCALE = 1e-4


@dataclass(frozen=True)
class Recovery:
    """The op-amp output's return to its DC point after a burst.

    offset_v : V, signed: A of A·e^{−t/τ}, the deviation extrapolated to the burst's end (0 when none;
        None, with ``reason``, where there is no decay to fit)
    tau_s : s, the fitted time constant (None, with ``reason``, where there is none)
    points : int, samples used in the fit
    reason : str, why a figure is None ("" when both are numbers)
    held_s : s the output stayed on a limit after the burst before its free decay began (0 when it did
        not reach one); the offset is then extrapolated to the end of that hold, not to the burst's end
    """

    offset_v: float | None
    tau_s: float | None
    points: int
    reason: str = ""
    held_s: float = 0.0


HOLD_TOL_V = 1e-3  # V: the output within this of a limit is held on it


def held_on_limit(v, *, sample_rate: float, end_s: float, limits: tuple[float, ...], within_s: float = SKIP_S) -> float:
    """How long (s) the op-amp output ``v`` stays on a limit after ``end_s``: 0 unless it is on one (within
    :data:`HOLD_TOL_V`) within ``within_s`` of the end; then until its last sample there (the free decay
    leaves the limit for good; the samples' ripple as the output settles onto it is not a leaving)."""
    v = np.asarray(v, dtype=float)
    i_end = int(round(end_s * sample_rate))
    tail = v[i_end:]
    for rail in limits:
        on = np.flatnonzero(np.abs(tail - rail) <= HOLD_TOL_V)
        if on.size and on[0] <= within_s * sample_rate:
            return float((on[-1] + 1) / sample_rate)
    return 0.0


def recovery(v, *, sample_rate: float, end_s: float, dc_v: float, skip_s: float = SKIP_S, floor_v: float = 1e-6, limits: tuple[float, ...] | None = None, linear=None) -> Recovery:
    """Fit the decay of ``v`` − ``dc_v`` after ``end_s`` (module text).

    v : array_like, V, shape (n,): the op-amp output, starting at t = 0
    sample_rate : Hz
    end_s : s, when the burst ended
    dc_v : V, the op-amp output's DC operating point, where it rests (:func:`rest_point`)
    skip_s : s left out after the end (of the hold, where there is one)
    floor_v : V: a deviation below this after ``skip_s`` counts as no offset
    limits : (low, high), V, the output's limits, or None: where the output is held on one after the
        burst (:func:`held_on_limit`), the free decay starts when it leaves it, and the offset is
        extrapolated to then (it cannot exceed the headroom on that side)
    linear : array_like, V, shape (n,), or None: the op-amp output the same input gives through the linear
        circuit (no limit). The decay fitted is then ``v`` − ``linear`` + ``dc_v``, what the limit left, without
        the linear network's own response to the burst's end; whether the output is held on a limit is read
        from ``v`` itself
    returns : :class:`Recovery`
    """
    v = np.asarray(v, dtype=float)
    left = v if linear is None else v - np.asarray(linear, dtype=float) + dc_v
    if limits is not None:  # a limit the output rests on is its DC point: being there is being back, not held
        limits = tuple(r for r in limits if abs(r - dc_v) > HOLD_TOL_V)
    held = held_on_limit(v, sample_rate=sample_rate, end_s=end_s, limits=limits) if limits is not None else 0.0
    end_s = end_s + held  # the free decay's own start
    start = int(round((end_s + skip_s) * sample_rate))
    if start >= v.size - 2 and held:
        return Recovery(None, None, 0, NO_RETURN, held)
    if start >= v.size - 2:
        raise ValueError(f"recovery: the signal ends {v.size / sample_rate:.3g} s, before {end_s + skip_s:.3g} s; render longer after the burst")
    dev = left[start:] - dc_v
    d0 = dev[0]
    if abs(d0) < floor_v:
        return Recovery(0.0, None, 0, NO_OFFSET, held)
    mag = np.abs(dev)
    same = np.sign(dev) == np.sign(d0)
    # from the first sample at or below 90 % to the first below 10 % of the starting deviation, of one sign
    below_hi = np.flatnonzero(mag <= FIT_FROM * abs(d0))
    below_lo = np.flatnonzero((mag < FIT_TO * abs(d0)) | ~same)
    i0 = int(below_hi[0]) if below_hi.size else 0
    i1 = int(below_lo[0]) if below_lo.size else dev.size
    if not below_hi.size and not below_lo.size:
        return Recovery(None, None, 0, NO_RETURN, held)
    if i1 - i0 < max(3, MIN_FIT_S * sample_rate):
        return Recovery(None, None, max(0, i1 - i0), NO_DECAY, held)
    t = (np.arange(i0, i1) + start) / sample_rate - end_s
    slope, icept = np.polyfit(t, np.log(mag[i0:i1]), 1)
    if slope >= 0:
        return Recovery(None, None, i1 - i0, NO_RETURN, held)
    tau = float(-1.0 / slope)
    if tau < skip_s / 4:
        return Recovery(None, None, i1 - i0, NO_DECAY, held)
    return Recovery(float(np.sign(d0) * np.exp(icept)), tau, i1 - i0, "", held)


def rest_point(plan) -> float:
    """The op-amp output's resting point (V) for a render plan: its linear DC point where that lies inside the
    window, else where the closed loop holds it at DC (:func:`render.chain.loop.static_transfer`, the
    renderer's own start): on a knee within knee/(1 + A0) of it, or on the rail."""
    from ..chain.loop import static_transfer

    return float(static_transfer(plan.bias_v, window=plan.window, loop_gain=plan.loop.open_loop_gain))


def burst_velocity(velocity_peak: float, *, frequency_hz: float, sample_rate: float, burst_s: float = BURST_S, after_s: float = AFTER_S) -> np.ndarray:
    """A sine burst of string velocity, m/s, shape (n,): a whole number of periods from t = 0, then rest."""
    periods = max(1, int(round(burst_s * frequency_hz)))
    n_burst = int(round(periods * sample_rate / frequency_hz))
    n = n_burst + int(round(after_s * sample_rate))
    t = np.arange(n) / sample_rate
    return np.where(np.arange(n) < n_burst, velocity_peak * np.sin(2 * np.pi * frequency_hz * t), 0.0)


def burst_figures(design, *, velocity_peak: float, frequency_hz: float = 1000.0, sample_rate: int = 48000, burst_s: float = BURST_S, after_s: float = AFTER_S, settle_s: float = 0.5 * BURST_S) -> dict:
    """Harmonics during a sine burst and the recovery after it, from the nonlinear solve.

    design : a validated :class:`render.design.Design`
    velocity_peak : m/s, the burst's peak string velocity (the same at both coils)
    frequency_hz : Hz; sample_rate : Hz
    burst_s, after_s : s, the burst's length (rounded to whole periods) and what is rendered after it
    settle_s : s from the burst's start left out of the harmonics (the operating point moving)
    returns : dict with ``h1_v``, ``h2_db``, ``h3_db``, ``thd_percent`` and ``harmonics_v`` at the
        amp input over the burst's whole periods after ``settle_s``; ``recovery_offset_v`` (V, signed)
        and ``recovery_tau_s`` (s) at the op-amp output, each None with a ``<key>_reason`` where there is
        no decay to fit (:func:`recovery`); ``burst_s``, ``dc_v``
    """
    from ..chain.stream import make_plan, render_signal
    from . import undefined as U

    v = burst_velocity(velocity_peak, frequency_hz=frequency_hz, sample_rate=sample_rate, burst_s=burst_s, after_s=after_s)
    periods = max(1, int(round(burst_s * frequency_hz)))
    end_s = periods / frequency_hz
    plan = make_plan(design, sample_rate=sample_rate)
    r = render_signal(design, np.stack([v, v]), sample_rate=sample_rate, hum=False, plan=plan)
    skip = min(int(np.ceil(settle_s * frequency_hz)), periods - 1)
    a = int(round(skip * sample_rate / frequency_hz))
    b = int(round(periods * sample_rate / frequency_hz))
    figs = distortion_figures(r["out"][a:b], sample_rate=sample_rate, frequency_hz=frequency_hz)
    dc = rest_point(plan)
    # the linear circuit's output for the same burst: the burst scaled down into the output stage's identity part,
    # where the loop is linear, and scaled back (exact for a linear system), so the recovery is what the limit left
    # (only where the output rests in that part: resting on a knee or a limit, a small signal is not linear there)
    linear = None
    w = plan.window
    if w.low + w.knee < dc < w.high - w.knee:
        small = render_signal(design, np.stack([v, v]) * LINEAR_SCALE, sample_rate=sample_rate, hum=False, plan=plan)
        linear = dc + (small["amp_out"] - dc) / LINEAR_SCALE
    rec = recovery(r["amp_out"], sample_rate=sample_rate, end_s=end_s, dc_v=dc, limits=(plan.window.low, plan.window.high), linear=linear)
    out = {**figs, "frequency_hz": frequency_hz, "velocity_peak_m_per_s": velocity_peak, "burst_s": end_s, "dc_v": dc, "recovery_held_s": rec.held_s}
    U.put(out, "recovery_offset_v", rec.offset_v, rec.reason)
    U.put(out, "recovery_tau_s", rec.tau_s, rec.reason)
    return out
