"""The time-domain chain, block by block: string velocity in, amp-input volts out.

Per design and output sample rate fs (48 kHz by default), with every
filter's state carried from block to block:

1. coil EMFs e_a = sig_a·v_a and e_b = sig_b·v_b (v: string velocity at
   each coil's sensing point, m/s), so that the op-amp's linear output is
   V_lin = H_a(e_a) + H_b(e_b) with H_a, H_b each coil's path;
2. computed as V_lin = M(u) + N(w) from the mean u = (v_a + v_b)/2 and the
   half-difference w = (v_a − v_b)/2 of the two velocities, with
   M = sig_a·H_a + sig_b·H_b (the design's response to one velocity at both
   coils) and N = sig_a·H_a − sig_b·H_b, both digital filters *at fs*
   (:func:`render.chain.discretize.discretize`: exact pole/zero mapping plus
   a fitted FIR; within 0.03 dB of the analog response to 20 kHz). The two
   coils' contributions often nearly cancel; filtering them separately would
   turn each path's small relative error into a large one on the sum, while
   M carries the cancellation exactly in its own zeros;
3. hum: the field's steady-state response at the op-amp output, evaluated
   exactly from the engine's rational function at each field harmonic
   (both coils' hum EMFs together, so a balanced design's cancellation is
   exact rather than the difference of two filtered signals); with hum
   sources in space, the same from each coil's own EMF phasors
   (:func:`render.magnetics.pickup.amp_output_phasors`); or, given an
   explicit dB/dt signal, that signal through the discretised common path;
4. the op-amp inside its feedback loop (:mod:`render.chain.loop`): the
   linear op-amp output x_lin = bias + V_lin, interpolated R× (192 kHz for
   48 kHz output; a linear-phase Kaiser FIR, about −100 dB image rejection
   from fs − 20 kHz up), drives the loop's nonlinear correction wherever
   the output stage leaves its identity part, until that correction (the
   circuit's memory: series_c charged while the loop was open) has
   decayed; the loop's output is averaged with a third-order
   continuous-time kernel, and a least-squares decimating FIR (−110 dB
   alias rejection from fs − 20 kHz up) whose passband undoes the kernel's
   droop brings it back to fs. Only the signal *differences* V_amp − bias
   are filtered, so the DC bias passes exactly;
5. the output network, controls and cable (``out_stage``) applied at fs to
   V_amp − bias (it blocks DC, so leaving the bias out changes nothing but
   the start-up step);
6. every stage's bulk delay removed, so output sample n belongs to input
   sample n.

Why the linear parts run at fs and not at the oversampled rate: the
oversampled IIR alone (7–9 second-order sections at 192 kHz) costs more
than the whole real-time budget, and plain bilinear filters would not meet
0.1 dB at 16 kHz even at 192 kHz. Only the loop needs the high rate. While
the output stage stays on its identity part and the loop's correction is
zero, the oversampled path is a fixed linear filter (interpolator · the
loop's output kernel on x_lin's samples · decimator, sampled at the output
rate: a linear-phase FIR at fs, flat within ±0.001 dB to 20 kHz), so such
stretches are computed with that FIR directly, and the loop's correction
is added where it runs. The loop starts where x_lin's samples leave the
identity part, or, with a slew limit, where x_lin steps by more than the
slew rate allows from one oversampled sample to the next (the loop's own
test while its correction is zero: the linear path is exact only where
neither happens); the bounds |interpolated| ≤ G·max|V_lin| and
|its step| ≤ G'·max|ΔV_lin| + ε·max|V_lin| over the filters' span (G: the
largest sum of |taps| of one polyphase branch; G', ε: the same of the
running sums of the interpolator's first difference, by Abel summation)
decide which stretches need interpolating to look. The result never
depends on the block size.

Start and end: the string is at rest before the first sample and after
the last (the chain is flushed with zero velocity to return exactly n
samples); the hum field has always been there, so the linear path starts
with its steady-state hum history (and the loop with no correction). The output network starts at rest, which
leaves a hum transient of a few tenths of a percent of the hum that dies
away within about half a second.

The op-amp output ``amp_out`` is band-limited like every signal at fs:
where the loop clips hard (nearly always: the feedback straightens the
knee) its samples ring past the window (Gibbs; up to about 9 % of the swing
for a square-like wave), although the loop's own output at R·fs never
leaves it (see :func:`limiter_output`).

The chain has no global state: :func:`make_plan` builds the immutable
filters of one design, :class:`Renderer` carries one render's state,
:func:`render_blocks` and :func:`render_signal` drive it.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Iterator
from dataclasses import dataclass

import numpy as np
import scipy.signal as ss

from ..design import Hum
from . import discretize as dz
from . import hum as hm
from . import loop as lp
from .limit import Window, design_window
from .loop_shared import NO_SLEW

PARTS = ("string_up_v", "string_down_v", "hum_up_v", "hum_down_v")  # x_lin's parts' excursions a render reports

INTERNAL_RATE_HZ = 192000.0  # the limiter runs at no less than this rate
IMAGE_REJECTION_DB = 100.0  # interpolator stopband, from fs − band edge
ALIAS_WEIGHT = 1e3  # stopband weight of the decimator's least-squares design
LOOP_CHUNK = 4096  # output samples: the loop runs past a loud stretch this far at a time while it decays
SLEW_SAFETY = 0.9  # the loop is looked for where the bound on x_lin's step reaches this fraction of the slew step (the bound is strict; the margin covers rounding)


# --- the limiter's resampling filters -------------------------------------------


@dataclass(frozen=True)
class Resampler:
    """Filters of the oversampled limiter.

    oversample : int R ≥ 2; the limiter runs at R·sample_rate
    up : np.ndarray, shape (Lu,), interpolating FIR at R·fs, DC gain R (Lu odd)
    down : np.ndarray, shape (Ld,), decimating FIR at R·fs, DC gain ≈ 1 (Ld even)
    linear : np.ndarray, shape (Lc,), the whole path at fs while the op-amp is
        linear: (up ∗ the loop's output kernel ∗ down) sampled every R-th tap
    delay : int, output samples of group delay of ``linear`` (and of the path)
    gain_bound : float, max over polyphase branches of Σ|up taps|
    span : int, output samples of history any output sample depends on
    slope_bound, slope_leak : float, the interpolated signal's step-to-step change
        bounded by the output rate's: |v[i] − v[i−1]| ≤ slope_bound·max|Δx| + slope_leak·max|x|
        over the last ``span`` output samples (:func:`design_resampler`)
    """

    oversample: int
    up: np.ndarray
    down: np.ndarray
    linear: np.ndarray
    delay: int
    gain_bound: float
    span: int
    slope_bound: float = math.inf
    slope_leak: float = math.inf


def design_resampler(*, sample_rate: float, oversample: int) -> Resampler:
    """The limiter's interpolator, decimator and their linear-region equivalent.

    sample_rate : Hz, the output rate fs
    oversample : int R ≥ 2
    """
    R = int(oversample)
    fs = float(sample_rate)
    if R < 2 or oversample != R:
        raise ValueError(f"oversample={oversample!r}: must be an integer ≥ 2")
    fi = R * fs
    _, band = dz.band_edges(fs)
    stop = fs - band
    lu, beta = ss.kaiserord(IMAGE_REJECTION_DB, (stop - band) / (fi / 2))
    lu |= 1
    up = ss.firwin(lu, fs / 2, window=("kaiser", beta), fs=fi) * R
    ld = lu - 1
    # total delay (lu − 1)/2 + (the kernel's 6 taps: 2.5) + (ld − 1)/2 on the output grid
    while (lu + ld + 3) % (2 * R):
        ld += 2
    # decimator: zero-phase amplitude R/(A_up·(1 + 2·cos(2πf/fi))/3) in band (undoing the
    # interpolator's ripple and the loop's output kernel's droop), 0 from fs − band up
    f = np.concatenate([np.linspace(0.0, band, 300), np.linspace(stop, fi / 2, 1200)])
    n_up = np.arange(lu) - (lu - 1) / 2
    a_up = np.cos(2 * np.pi * np.outer(f, n_up) / fi) @ up
    w = 2 * np.pi * f / fi
    a_kernel = np.cos(np.outer(w, np.arange(6) - 2.5)) @ lp.KERNEL_TAPS  # zero-phase amplitude
    target = np.where(f <= band, R / (a_up * a_kernel), 0.0)
    weight = np.sqrt(np.where(f <= band, 1.0, ALIAS_WEIGHT))
    half = np.arange(ld // 2) + 0.5
    basis = 2 * np.cos(2 * np.pi * np.outer(f, half) / fi)
    coef = np.linalg.lstsq(weight[:, None] * basis, weight * target, rcond=None)[0]
    down = np.concatenate([coef[::-1], coef])
    g = np.convolve(np.convolve(up, lp.KERNEL_TAPS), down)
    centre = (g.size - 1) // 2
    linear = np.ascontiguousarray(g[::R])
    gain_bound = max(float(np.abs(up[p::R]).sum()) for p in range(R))
    span = (linear.size + 2) | 1  # odd, for the trailing running maximum
    # the interpolated signal's oversampled differences: with g = up's first difference,
    # v[R·k + p] − v[R·k + p − 1] = Σ_m g[p + R·m]·x[k − m], by Abel summation
    # = Σ_m G_p[m]·(x[k − m] − x[k − m − 1]) + G_p[last]·x[k − last − 1], G_p the running sum of branch p
    branch_sums = [np.cumsum(np.diff(up, prepend=0.0, append=0.0)[p::R]) for p in range(R)]
    slope_bound = max(float(np.abs(g).sum()) for g in branch_sums)
    slope_leak = max(abs(float(g[-1])) for g in branch_sums)
    return Resampler(R, up, down, linear, centre // R, gain_bound, span, slope_bound, slope_leak)


def interpolate(x, *, up, oversample: int) -> np.ndarray:
    """Zero-insert by R and filter with ``up`` (causal, rest before x[0]).

    x : shape (n,) at fs; up : shape (L,), taps at R·fs; oversample : R
    returns : shape (R·n,), v[i] = Σ_l up[l]·u[i − l], u[R·k] = x[k], else 0
    """
    R = int(oversample)
    x = np.asarray(x, dtype=float)
    n = x.size
    v = np.empty(R * n)
    for p in range(R):
        v[p::R] = np.convolve(x, up[p::R])[:n]
    return v


def decimate(w, *, down, oversample: int) -> np.ndarray:
    """Filter with ``down`` and keep every R-th sample (causal, rest before w[0]).

    w : shape (R·n,) at R·fs; down : shape (L,), taps at R·fs; oversample : R
    returns : shape (n,), y[k] = Σ_j down[j]·w[R·k − j]
    """
    R = int(oversample)
    w = np.asarray(w, dtype=float)
    n = w.size // R
    y = np.convolve(w[0::R][:n], down[0::R])[:n]
    for p in range(1, R):
        # w[R·k − p] = w[(R − p) + R·(k − 1)]: the branch delayed by one output sample
        branch = np.concatenate([[0.0], w[R - p :: R][: n - 1]])
        y += np.convolve(branch, down[p::R])[:n]
    return y


# --- the plan ------------------------------------------------------------------------


@dataclass(frozen=True)
class Plan:
    """Everything fixed about one design's render at one sample rate.

    sample_rate : Hz
    bias_v : V, the op-amp output's DC operating point
    window : the op-amp output stage's :class:`~render.chain.limit.Window`
    loop : the feedback loop's nonlinear solver at the oversampled rate
    path_mean : mean velocity (v_a + v_b)/2 -> op-amp output (V per m/s), at sample_rate
    path_half_difference : (v_a − v_b)/2 -> op-amp output (V per m/s), at sample_rate
    path_hum : dB/dt -> op-amp output (V per T/s), or None when not built
    out_stage : op-amp output -> amp input
    resampler : the limiter's filters
    hum_gains : complex, shape (H,), V per T/s at the field harmonics (op-amp output)
    hum : the design's hum settings (mains, field, harmonics)
    hum_phases : radians, shape (H,)
    latency : int, samples of delay removed from the output
    warnings : tuple of str
    hum_phasors : complex, shape (H,), V peak at the op-amp output per harmonic
        from the design's [[hum.source]] tables (they replace ``hum_gains``
        and the one-number field); None without sources
    settle_s : s, how long the string is at rest before the first sample when the op-amp rests on a
        limit (:func:`settle_seconds`; the renderer uses it only then)
    """

    sample_rate: float
    bias_v: float
    window: Window
    loop: lp.Loop
    path_mean: dz.Discrete
    path_half_difference: dz.Discrete
    path_hum: dz.Discrete | None
    out_stage: dz.Discrete
    resampler: Resampler
    hum_gains: np.ndarray
    hum: Hum
    hum_phases: np.ndarray
    latency: int
    warnings: tuple[str, ...]
    hum_phasors: np.ndarray | None = None
    settle_s: float = 0.0


SETTLE_TAUS = 15  # time constants of the opened loop's input network run at rest before a render that starts on a limit (e^-15 ≈ 3e-7)
SETTLE_MIN_S, SETTLE_MOST_S = 0.5, 60.0  # s


def settle_seconds(design) -> float:
    """How long a render whose op-amp rests on a limit runs the string at rest first (s).

    With the output on a rail the loop is open: coil_a's side charges series_c through series_r, the
    feedback resistor and the coil's DC resistance into the pinned output, τ = series_c·(series_r +
    feedback r + R_coil) (about 0.13 s in the demo designs: slower than the recovery's closed-loop
    22 ms). :data:`SETTLE_TAUS` of it, within :data:`SETTLE_MIN_S` … :data:`SETTLE_MOST_S`.
    """
    a = design.input_a
    tau = a.series_c * (a.series_r + design.feedback.r + design.coil_a.resistance)
    return float(min(SETTLE_MOST_S, max(SETTLE_MIN_S, SETTLE_TAUS * tau)))


def default_oversample(sample_rate: float) -> int:
    """R = ceil(192 kHz / fs), at least 2: 4 at 48 kHz, 5 at 44.1 kHz, 2 at 96 kHz."""
    return max(2, math.ceil(INTERNAL_RATE_HZ / float(sample_rate) - 1e-9))


def make_plan(
    design,
    *,
    sample_rate: float = 48000.0,
    oversample: int | None = None,
    hum_filter: bool = False,
    hum_phases=None,
    resampler: Resampler | None = None,
) -> Plan:
    """Build the filters of one design.

    design : a validated :class:`render.design.Design` (its rig and hum applied)
    sample_rate : Hz, the output rate
    oversample : the limiter's R (default :func:`default_oversample`)
    hum_filter : also discretise the dB/dt path (needed for an explicit dB/dt signal)
    hum_phases : None (all 0) or one phase per field harmonic, radians
    resampler : a :func:`design_resampler` result to reuse (it depends only on
        the sample rate and R, so a batch of designs can share one)
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    fs = float(sample_rate)
    params = from_designs([design])
    resp = responses(params)
    sig_a, sig_b = resp.sig_a, resp.sig_b
    path_m = dz.discretize_rational(resp.amp.mix(sig_a, sig_b), sample_rate=fs, what="velocity path")
    path_n = dz.discretize_rational(resp.amp.mix(sig_a, -sig_b), sample_rate=fs, what="velocity difference path")
    out_stage = dz.discretize_rational(resp.out_stage, sample_rate=fs, what="output network")
    hum_mix = resp.amp.mix(resp.hum_a, resp.hum_b)
    path_hum = dz.discretize_rational(hum_mix, sample_rate=fs, what="hum path") if hum_filter else None
    h = design.hum
    harmonics = np.asarray(h.harmonics, dtype=float)
    freqs = hm.harmonic_frequencies(mains_hz=h.mains, harmonics=harmonics)
    gains = hum_mix(freqs)[0] if harmonics.size else np.zeros(0, complex)
    # harmonics at or above Nyquist cannot be represented: leave them out
    gains = np.where(freqs < fs / 2, gains, 0.0)
    phases = hm.check_phases(harmonics.size, hum_phases)
    R = int(oversample or default_oversample(fs))
    res = resampler if resampler is not None else design_resampler(sample_rate=fs, oversample=R)
    if res.oversample != R:
        raise ValueError(f"resampler built for oversample={res.oversample}, not {R}")
    latency = path_m.delay + res.delay + out_stage.delay
    assert path_n.delay == path_m.delay and (path_hum is None or path_hum.delay == path_m.delay)
    from ..magnetics.pickup import area_mismatch_warnings
    from ..plausible import design_warnings

    warns = path_m.warnings + path_n.warnings + out_stage.warnings + (path_hum.warnings if path_hum else ()) + design_warnings(design) + area_mismatch_warnings(design)
    phasors = None
    if h.sources:  # sources in space: each coil's own EMF through its own path (render.magnetics.pickup)
        from ..magnetics.pickup import amp_output_phasors, point_coil_warnings

        phasors = np.where(freqs < fs / 2, amp_output_phasors(design, resp), 0.0)
        warns += point_coil_warnings(design)
    return Plan(
        sample_rate=fs,
        bias_v=lp.dc_output(design),
        window=design_window(design),
        loop=lp.make_loop(design, sample_rate=R * fs, params=params),
        path_mean=path_m,
        path_half_difference=path_n,
        path_hum=path_hum,
        out_stage=out_stage,
        resampler=res,
        hum_gains=np.asarray(gains, dtype=complex),
        hum=h,
        hum_phases=phases,
        latency=int(latency),
        warnings=tuple(warns),
        hum_phasors=phasors,
        settle_s=settle_seconds(design),
    )


# --- the loop stage -------------------------------------------------------------------


def _x_lin(plan: Plan, ext: np.ndarray, history: int, a: int, b: int) -> np.ndarray:
    """x_lin (V, bias included) at R·fs, oversampled indices a … b inclusive (index R·k: the block's output sample k).

    ext : V_lin with ``history`` earlier samples in front (indices may reach back into them)
    returns : shape (b − a + 1,)
    """
    res = plan.resampler
    R = res.oversample
    j0 = (a - res.up.size + 1) // R - 1  # the interpolator has settled from there on
    j1 = b // R
    lo = history + j0
    seg = ext[max(lo, 0) : history + j1 + 1]
    if lo < 0:
        seg = np.concatenate([np.zeros(-lo), seg])
    v = interpolate(seg, up=res.up, oversample=R)
    return v[a - R * j0 : b - R * j0 + 1] + plan.bias_v


class _LoopCarry:
    """The loop stage's state across blocks: the loop's own state, the next step's oversampled
    index (relative to the block's start; −1 for the step held back at the end of a block) and the
    decimated correction still to add."""

    def __init__(self, plan: Plan):
        self.loop = lp.LoopState(plan.loop)
        self.pos = 0
        self.pending = np.zeros(0)


def _add(y: np.ndarray, start: int, part: np.ndarray, carry: _LoopCarry) -> None:
    """y[start:] += part, the part past the block's end kept in ``carry.pending``."""
    inside = max(0, min(part.size, y.size - start))
    y[start : start + inside] += part[:inside]
    rest = part[inside:]
    if rest.size:
        off = start + inside - y.size  # samples past the block's end where ``rest`` begins
        size = max(carry.pending.size, off + rest.size)
        pend = np.zeros(size)
        pend[: carry.pending.size] = carry.pending
        pend[off : off + rest.size] += rest
        carry.pending = pend


def _add_decimated(plan: Plan, y: np.ndarray, first: int, c: np.ndarray, carry: _LoopCarry) -> None:
    """Decimate the correction c (oversampled, its first sample at index ``first``, zero elsewhere) into y."""
    res = plan.resampler
    R = res.oversample
    k0 = first // R
    pad = first - R * k0
    w = np.concatenate([np.zeros(pad), c, np.zeros(res.down.size + 2 * R - (pad + c.size) % R)])
    _add(y, k0, decimate(w, down=res.down, oversample=R), carry)


def _loop_stage(plan: Plan, ext: np.ndarray, history: int, carry: _LoopCarry):
    """V_amp − bias (delayed by the resampler's delay) for the last len(ext) − history samples of ext.

    ext : V_lin with ``history`` earlier samples in front, shape (history + n,)
    returns : (y shape (n,), number of loop steps with the output stage outside its identity part)

    y is the linear path (the resampler's ``linear`` FIR at fs) plus the decimated correction of
    the loop, which runs at R·fs from wherever x_lin leaves the output stage's identity part (the
    bound below, then the samples themselves) on until its correction has decayed. The loop's
    step at oversampled index i needs x_lin at i + 1 and its correction belongs at i + 1: a
    block's last oversampled sample waits for the next block.
    """
    res = plan.resampler
    win = plan.window
    bias = plan.bias_v
    R = res.oversample
    n = ext.size - history
    # overlap-add FFT convolution: the same FIR as np.convolve to float rounding, a third of its time at 79 taps
    y = ss.oaconvolve(ext, res.linear, mode="valid")[-n:] if n else np.zeros(0)
    if carry.pending.size:
        k = min(n, carry.pending.size)
        y[:k] += carry.pending[:k]
        carry.pending = carry.pending[k:]
    if n == 0:
        return y, 0
    room = min(win.linear_high - bias, bias - win.linear_low) / res.gain_bound
    mag = np.abs(ext)
    state = carry.loop
    slew_step = plan.loop.slew_step
    slews = slew_step < NO_SLEW
    if slews:
        # the slew limit acts where x_lin's oversampled step exceeds slew_step; those steps are bounded by
        # slope_bound·max|ΔV_lin| + slope_leak·max|V_lin| over the span (design_resampler)
        step = np.abs(np.diff(ext, prepend=0.0))
        fast = (SLEW_SAFETY * slew_step - res.slope_leak * float(mag.max())) / res.slope_bound
    if not state.active and mag.max() <= room and (not slews or step.max() <= fast):
        carry.pos = 0
        return y, 0
    # sample k may leave the identity part (or slew) if any V_lin in ext[k − span + 1 .. k] is above the room
    # (or its step above ``fast``): a running count of such samples (zeros in front for the span before ext)
    # differenced over the span
    near = (mag > room) | (step > fast) if slews else mag > room
    count = np.concatenate([np.zeros(res.span, dtype=np.int64), np.cumsum(near)])
    loud = count[history + res.span : ext.size + res.span] - count[history : ext.size] > 0
    loud_ext = np.concatenate([[True], loud])  # output sample −1 (a held-back step) counts as loud
    clipped = 0
    i = carry.pos if state.active else max(carry.pos, 0)
    last = R * n - 1  # steps up to last − 1 can run in this block
    while i < last:
        k = i // R
        if not state.active:
            ahead = np.flatnonzero(loud[max(k, 0) :])
            if not ahead.size:
                i = last
                break
            k = max(k, 0) + int(ahead[0])
            quiet = np.flatnonzero(~loud[k:])
            e = min(n, k + (int(quiet[0]) if quiet.size else n - k) + LOOP_CHUNK)
            a = max(i, R * k)
            xl = _x_lin(plan, ext, history, a - 2, R * e - 1)
            # the bound is loose: start where x_lin actually leaves the output stage's identity part, or
            # where its step is steeper than the slew limit (the loop's own test with no correction)
            outside = (xl[2:] > win.linear_high) | (xl[2:] < win.linear_low)
            if slews:
                outside |= np.abs(xl[2:] - xl[1:-1]) > slew_step
            out = np.flatnonzero(outside)
            if not out.size or a + int(out[0]) >= last:
                i = max(i, R * e - 1)
                continue
            i = a + int(out[0])
            state.start(xl[i - a : i - a + 2])
            xl = xl[i - a + 2 :]
        else:
            quiet = np.flatnonzero(~loud[max(k, 0) :])
            e = min(n, max(k, 0) + (int(quiet[0]) if quiet.size else n - max(k, 0)) + LOOP_CHUNK)
            xl = _x_lin(plan, ext, history, i, R * e - 1)
        c, _, done, cl = state.run(xl, start=i, loud=loud_ext, loud_base=-1, oversample=R)
        clipped += cl
        if done:
            _add_decimated(plan, y, i + 1, c, carry)
        i += done
    carry.pos = i - R * n
    return y, clipped


def limiter_output(plan: Plan, v_lin) -> tuple[np.ndarray, np.ndarray]:
    """The op-amp output of a whole V_lin signal, through the oversampled loop only.

    v_lin : array_like, V, shape (n,), the linear op-amp output (bias excluded) at plan.sample_rate
    returns : (internal, decimated): the op-amp output V_o at R·sample_rate, V, shape (R·n − 1,)
        (the loop's steps ending at oversampled samples 0 … R·n − 2), within the window; and the
        chain's band-limited op-amp output at sample_rate, V, shape (n,), bias included, delayed by
        plan.resampler.delay samples
    """
    res = plan.resampler
    R = res.oversample
    seg = np.asarray(v_lin, dtype=float)
    xl = interpolate(seg, up=res.up, oversample=R) + plan.bias_v
    state = lp.LoopState(plan.loop)
    state.start([plan.bias_v] * 2)
    c, vo, _, _ = state.run(xl, start=0, loud=np.ones(seg.size, dtype=bool), loud_base=0, oversample=R)
    w = np.convolve(xl - plan.bias_v, lp.KERNEL_TAPS)[: xl.size]
    w[1 : 1 + c.size] += c
    return vo, decimate(w, down=res.down, oversample=R) + plan.bias_v


# --- one render's state --------------------------------------------------------


class Renderer:
    """The running state of one render (filters from a :class:`Plan`).

    Feed consecutive blocks with :meth:`process`, then call :meth:`finish`
    once; the concatenated outputs equal a one-block render to float rounding.
    """

    def __init__(self, plan: Plan, *, hum: bool = True, db_dt: bool = False):
        if db_dt and plan.path_hum is None:
            raise ValueError("an explicit db_dt needs a plan built with hum_filter=True")
        self.plan = plan
        self.explicit = bool(db_dt)  # blocks bring their own dB/dt (the design's hum is then not added)
        self.hum = bool(hum) and not self.explicit
        self._sm = dz.initial_state(plan.path_mean)
        self._sn = dz.initial_state(plan.path_half_difference)
        self._sh = dz.initial_state(plan.path_hum) if plan.path_hum is not None else None
        self._so = dz.initial_state(plan.out_stage)
        self._amp_delay = np.zeros(plan.out_stage.delay)
        self._history = plan.resampler.span + plan.resampler.linear.size + 4
        self._n = 0  # input samples consumed
        self._to_drop = plan.latency
        self._clipped = 0
        self._finished = False
        self._linear = [np.inf, -np.inf]  # extremes of x_lin (bias included) so far, V
        # the same for its two parts apart, the string's (which scales with the pluck) and the hum's (which does not)
        self._parts = {"string": [np.inf, -np.inf], "hum": [np.inf, -np.inf]}
        # one mains period as a table when it is a whole number of samples (48 kHz / 50 Hz = 960)
        self._hum_period = None
        period = plan.sample_rate / plan.hum.mains
        if self.hum and abs(period - round(period)) < 1e-9 * period and round(period) <= 10**6:
            self._hum_period = self._hum_direct(0, int(round(period)))
        self._lim_hist = self._hum_at(-plan.path_mean.delay - self._history, self._history)
        self._string_hist = np.zeros(self._history)  # the string's part of _lim_hist (the rest is hum)
        self._loop = _LoopCarry(plan)
        self._settle()

    def _settle(self) -> None:
        """Start a design whose op-amp rests on a limit at rest, not at its linear operating point.

        With the bias outside the output's linear window (a divider far off centre) the op-amp's
        output at rest is V_rest = the static transfer of the bias at DC (where series_c is open and the
        loop is a follower of gain A0): a rail, not the bias. Started from the linear point, the
        render would open with a step of V_rest − bias into the output network (its coupling
        capacitor: a thump decaying over about a second) and with series_c not yet charged. So the
        output network starts in its steady state for a constant V_rest − bias (scipy's
        ``sosfilt_zi``: the state a constant input leaves), and the chain runs the plan's ``settle_s``
        of the string at rest (the hum in place, its time running from −settle_s so that t = 0 keeps
        its phase) before the first sample, whose output is dropped and whose statistics are not
        kept. Any other design starts as before, at rest at its linear point.
        """
        p = self.plan
        w = p.window
        if w.linear_low < p.bias_v < w.linear_high:
            return
        n = int(round(p.settle_s * p.sample_rate))
        rest = float(lp.static_transfer(p.bias_v, window=w, loop_gain=p.loop.open_loop_gain)) - p.bias_v
        fir_gain = float(np.sum(p.out_stage.fir))
        zi = ss.sosfilt_zi(p.out_stage.sos) * (rest * fir_gain) if p.out_stage.sos.shape[0] else self._so[1]
        self._so = (np.full(p.out_stage.history, rest), zi)
        self._amp_delay = np.full(p.out_stage.delay, rest)
        self._n = -n
        self._lim_hist = self._hum_at(-n - p.path_mean.delay - self._history, self._history)
        self._string_hist = np.zeros(self._history)
        self._to_drop += n
        chunk = int(p.sample_rate)  # a second at a time: the memory of a block, not of the whole settling
        for start in range(0, n, chunk):
            k = min(chunk, n - start)
            self._step(np.zeros(k), np.zeros(k) if self.explicit else None)
        assert self._n == 0 and self._to_drop == p.latency
        self._clipped = 0
        self._linear = [np.inf, -np.inf]
        self._parts = {"string": [np.inf, -np.inf], "hum": [np.inf, -np.inf]}

    def _hum_direct(self, start: int, n: int) -> np.ndarray:
        p, h = self.plan, self.plan.hum
        if p.hum_phasors is not None:
            from ..magnetics.hum import steady_samples

            return steady_samples(p.hum_phasors, n, sample_rate=p.sample_rate, mains_hz=h.mains, start=start)
        return hm.steady_response(p.hum_gains, n, sample_rate=p.sample_rate, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics, start=start, phases=p.hum_phases)

    def _hum_at(self, start: int, n: int) -> np.ndarray:
        """Steady-state hum at the op-amp output for samples start … start+n−1 (V)."""
        p = self.plan
        if not self.hum or n <= 0 or p.hum_gains.size == 0:
            return np.zeros(max(n, 0))
        if self._hum_period is None:
            return self._hum_direct(start, n)
        period = self._hum_period.size
        offset = start % period
        return np.tile(self._hum_period, -(-(offset + n) // period))[offset : offset + n]

    def _step(self, velocity: np.ndarray, db_dt: np.ndarray | None) -> dict:
        """velocity : shape (2, n), or (n,) for the same at both coils (mean v, half-difference 0 exactly)."""
        p = self.plan
        mono = velocity.ndim == 1
        n = velocity.shape[-1]
        v_lin, self._sm = dz.apply(p.path_mean, velocity if mono else 0.5 * (velocity[0] + velocity[1]), state=self._sm)
        half_diff = np.zeros(n) if mono else 0.5 * (velocity[0] - velocity[1])
        # the same velocity at both coils (a mono input) leaves the difference path at rest
        if (not mono and half_diff.any()) or self._sn[0].any() or self._sn[1].any():
            ln, self._sn = dz.apply(p.path_half_difference, half_diff, state=self._sn)
            v_lin += ln
        string = v_lin.copy()
        if self.explicit:
            assert p.path_hum is not None  # built with hum_filter=True for an explicit field
            lh, self._sh = dz.apply(p.path_hum, db_dt, state=self._sh)
            v_lin += lh
        elif self.hum:
            v_lin += self._hum_at(self._n - p.path_mean.delay, n)
        ext = np.concatenate([self._lim_hist, v_lin])
        self._track_linear(ext, self._lim_hist.size, self._linear)
        if self.explicit or self.hum:  # with no hum the string's part is all of x_lin
            ext_s = np.concatenate([self._string_hist, string])
            self._track_linear(ext_s, self._lim_hist.size, self._parts["string"])
            self._track_linear(ext - ext_s, self._lim_hist.size, self._parts["hum"])
            self._string_hist = ext_s[ext_s.size - self._history :]
        y, clipped = _loop_stage(p, ext, self._lim_hist.size, self._loop)
        self._lim_hist = ext[ext.size - self._history :]
        self._clipped += clipped
        out, self._so = dz.apply(p.out_stage, y, state=self._so)
        # the op-amp output skips the output network's bulk delay: hold it back by as much
        held = np.concatenate([self._amp_delay, y])
        amp = held[:n]
        self._amp_delay = held[n:]
        self._n += n
        drop = min(self._to_drop, n)
        self._to_drop -= drop
        return {"out": out[drop:], "amp_out": amp[drop:] + p.bias_v}

    def _track_linear(self, ext: np.ndarray, history: int, extremes: list) -> None:
        """Carry in ``extremes`` the lowest and highest of x_lin, the op-amp's linear output (bias included), or of one
        of its parts, as the loop sees it: the block's largest and smallest samples, and the signal at R·fs around them
        (the interpolator's delay included), so a peak between output samples is not missed."""
        p = self.plan
        v = ext[history:]
        if not v.size:
            return
        R = p.resampler.oversample
        reach = p.resampler.up.size // R + 4
        for k in (int(np.argmax(v)), int(np.argmin(v))):
            xl = _x_lin(p, ext, history, R * (k - 4), min(R * (k + reach), R * v.size - 1))
            extremes[0] = min(extremes[0], float(xl.min()), float(v[k]) + p.bias_v)
            extremes[1] = max(extremes[1], float(xl.max()), float(v[k]) + p.bias_v)

    @property
    def linear_range(self) -> tuple[float, float]:
        """(lowest, highest) x_lin so far, V, bias included: the op-amp output the render would have
        without its limit (string and hum); (bias, bias) before any sample."""
        return self._range(self._linear)

    def _range(self, extremes: list) -> tuple[float, float]:
        b = self.plan.bias_v
        lo, hi = extremes
        return (min(lo, b), max(hi, b)) if math.isfinite(lo) else (b, b)

    @property
    def part_excursions(self) -> dict:
        """The largest excursions from the bias (V, ≥ 0) of x_lin's two parts apart: ``string_up_v``, ``string_down_v``
        (what scales with the pluck) and ``hum_up_v``, ``hum_down_v`` (the field's, which does not); with no hum the
        string's are x_lin's own and the hum's 0."""
        b = self.plan.bias_v
        out = {}
        for part, extremes in (("string", self._parts["string"] if self.explicit or self.hum else self._linear), ("hum", self._parts["hum"])):
            lo, hi = self._range(extremes)
            out[f"{part}_up_v"], out[f"{part}_down_v"] = hi - b, b - lo
        return out

    def process(self, velocity, *, db_dt=None) -> dict:
        """Render one block.

        velocity : array_like, m/s, shape (2, n) (coil_a's and coil_b's sensing
            points) or (n,) (the same at both)
        db_dt : None, or array_like, T/s, shape (n,): an explicit field derivative
            used instead of the design's hum settings
        returns : dict with ``out`` (V at the amp input) and ``amp_out`` (V at the
            op-amp output, bias included), each shape (k,), k ≤ n; the first
            blocks come out shorter by the chain's latency, which :meth:`finish` returns
        """
        if self._finished:
            raise RuntimeError("render already finished")
        v = np.asarray(velocity, dtype=float)
        if not (v.ndim == 1 or (v.ndim == 2 and v.shape[0] == 2)):
            raise ValueError(f"velocity: expected shape (2, n) or (n,), got {np.shape(velocity)}")
        d = None
        if self.explicit != (db_dt is not None):
            raise ValueError("db_dt: give it with every block exactly when the Renderer was opened with db_dt=True")
        if db_dt is not None:
            d = np.asarray(db_dt, dtype=float)
            if d.shape != (v.shape[-1],):
                raise ValueError(f"db_dt: expected shape ({v.shape[-1]},), got {d.shape}")
        return self._step(v, d)

    def finish(self) -> dict:
        """Flush the chain (the string at rest and the field unchanged after the input ends)."""
        if self._finished:
            raise RuntimeError("render already finished")
        n = self.plan.latency
        zeros = np.zeros((2, n))
        d = np.zeros(n) if self.explicit else None
        r = self._step(zeros, d) if n else {"out": np.zeros(0), "amp_out": np.zeros(0)}
        self._finished = True
        return r

    @property
    def clipped_fraction(self) -> float:
        """Fraction of the oversampled steps so far with the op-amp's output stage outside its identity part."""
        total = max(self.samples_in, 1) * self.plan.resampler.oversample
        return min(1.0, self._clipped / total)

    @property
    def samples_in(self) -> int:
        """Input samples consumed so far (the flush not included)."""
        return self._n if not self._finished else self._n - self.plan.latency

    @property
    def clipped_count(self) -> int:
        """Oversampled steps so far with the op-amp's output stage outside its identity part."""
        return self._clipped


def render_blocks(
    design,
    blocks: Iterable,
    *,
    sample_rate: float = 48000.0,
    hum: bool = True,
    db_dt: bool = False,
    plan: Plan | None = None,
) -> Iterator[dict]:
    """Streaming render: one output dict per input block, then one for the flush.

    design : a validated :class:`render.design.Design` (only used when ``plan`` is None)
    blocks : iterable of velocity arrays, m/s, shape (2, n_i) or (n_i,); with
        ``db_dt=True``, of (velocity, db_dt) pairs with db_dt in T/s, shape (n_i,)
    sample_rate : Hz
    hum : add the design's hum field in steady state (not with ``db_dt=True``)
    db_dt : the blocks bring an explicit field derivative instead
    plan : a prebuilt :func:`make_plan` result (with hum_filter=True for ``db_dt``)
    yields : dicts with ``out`` and ``amp_out`` (V, shape (k_i,)); the first
        come out shorter by the chain's latency and the final (flush) dict
        makes up the difference, so the concatenation has exactly as many
        samples as the input; the final dict also has ``clipped_fraction``
        and ``warnings``
    """
    if plan is None:
        plan = make_plan(design, sample_rate=sample_rate, hum_filter=db_dt)
    if float(plan.sample_rate) != float(sample_rate):
        raise ValueError(f"plan built for sample_rate={plan.sample_rate:g} Hz, not {sample_rate:g} Hz")
    r = Renderer(plan, hum=hum, db_dt=db_dt)
    for item in blocks:
        if db_dt:
            vel, d = item
            yield r.process(vel, db_dt=d)
        else:
            yield r.process(item)
    n = r.samples_in
    last = r.finish()
    last["clipped_fraction"] = min(1.0, r.clipped_count / max(n * plan.resampler.oversample, 1))
    last["warnings"] = plan.warnings
    last["linear_min_v"], last["linear_max_v"] = r.linear_range
    last.update(r.part_excursions)
    yield last


def render_signal(
    design,
    velocity,
    *,
    sample_rate: float = 48000.0,
    hum: bool = True,
    db_dt=None,
    block: int = 65536,
    plan: Plan | None = None,
) -> dict:
    """Render a whole signal.

    design : a validated :class:`render.design.Design`
    velocity : array_like, m/s, shape (2, n) (coil_a, coil_b sensing points) or (n,) (both)
    sample_rate : Hz
    hum : add the design's hum field (steady state); ignored with ``db_dt``
    db_dt : None, or array_like T/s shape (n,): an explicit field derivative used instead
    block : int ≥ 1, samples per internal block (the result does not depend on it)
    plan : a prebuilt :func:`make_plan` result
    returns : dict with
        ``out`` np.ndarray V shape (n,): the voltage at the amplifier input;
        ``amp_out`` np.ndarray V shape (n,): the op-amp output, bias included,
        band-limited like ``out`` (hard clipping of high notes rings slightly
        past the window at this rate; the loop itself never leaves it);
        ``clipped_fraction`` float in [0, 1]: share of the oversampled steps with
        the op-amp's output stage outside its identity part (on a knee or a rail)
        or, with a slew rate, its state slewing at that limit;
        ``warnings`` tuple of str;
        ``linear_min_v``, ``linear_max_v`` float V: the extremes of the op-amp's linear
        output x_lin (bias, string and hum; what it would swing without its limit);
        ``string_up_v``, ``string_down_v``, ``hum_up_v``, ``hum_down_v`` float V ≥ 0: the largest
        excursions from the bias of its string part and its hum part apart (:attr:`Renderer.part_excursions`)
    """
    v = np.asarray(velocity, dtype=float)  # (n,) stays one row: the renderer takes it as both coils' velocity
    if not (v.ndim == 1 or (v.ndim == 2 and v.shape[0] == 2)):
        raise ValueError(f"velocity: expected shape (2, n) or (n,), got {np.shape(velocity)}")
    if int(block) < 1:
        raise ValueError(f"block={block!r}: must be a positive number of samples")
    n = v.shape[-1]
    explicit = db_dt is not None
    if explicit:
        d = np.asarray(db_dt, dtype=float)
        if d.shape != (n,):
            raise ValueError(f"db_dt: expected shape ({n},), got {d.shape}")
    b = int(block)

    def items():
        for i in range(0, n, b):
            part = v[..., i : i + b]
            yield (part, d[i : i + b]) if explicit else part

    outs, amps = [], []
    last = {}
    for part in render_blocks(design, items(), sample_rate=sample_rate, hum=hum, db_dt=explicit, plan=plan):
        outs.append(part["out"])
        amps.append(part["amp_out"])
        last = part
    return {
        "out": np.concatenate(outs),
        "amp_out": np.concatenate(amps),
        "clipped_fraction": float(last["clipped_fraction"]),
        "warnings": tuple(last["warnings"]),
        "linear_min_v": float(last["linear_min_v"]),
        "linear_max_v": float(last["linear_max_v"]),
        **{k: float(last[k]) for k in PARTS},
    }
