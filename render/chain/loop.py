"""The preamp's feedback loop as one nonlinear circuit in time.

The loop is coil_a's network (the coil's EMF, DC resistance and inductance
with its core loss, the winding and loading capacitance at its terminal,
series_c and series_r), the feedback r ∥ c and the op-amp. The op-amp's
inputs draw no current, so coil_b's side reaches the loop only through
V+, and the output network only loads the op-amp's output (a voltage
source): both stay linear filters elsewhere in the chain.

The op-amp
----------
With V+ and V− its inputs, A0 = ``open_loop_gain`` and the output window
[low, high] with its knee (:mod:`render.chain.limit`, function f):

- without ``gbw``:  x = A0·(V+ − V−)
- with ``gbw``:     τ·dx/dt = A0·(V+ − V−) − x,   τ = A0 / (2π·gbw)
  (the dominant-pole integrator, A(s) = A0/(1 + sτ)), its state limited to
  [low − knee, high + knee], the span over which f still moves (no wind-up
  beyond the point where the output saturates), and with ``slew_rate`` SR
  its rate limited, |dx/dt| ≤ SR;
- the output stage: V_o = f(x), the quadratic-knee window applied to the
  open-loop output x.

With f replaced by the identity this is the engine's linear op-amp
(:mod:`render.circuit.preamp`), whose output the chain already computes
accurately at the output rate: x_lin = V_lin + V_dc, with V_dc = A0/(1 + A0)
times the divider's voltage, the op-amp output's DC operating point.

Superposition
-------------
The circuit is linear except for f, the state limits and the slew limit,
so the actual state is the linear one plus a correction that obeys the same
linear network with the EMF and V+ removed, driven only by the output's
deviation d = V_o − x_lin (the linear circuit's output is x_lin). With the
network as state equations (states s: the voltages of series_c, of the
terminal capacitance and of the feedback c, the coil's currents; Z = [s, ξ]
with gbw, Z = s without)

    ds/dt = A·s + b·d,          V−_c = c·s + d_o·d,
    τ·dξ/dt = −A0·V−_c − ξ      (with gbw; ξ = −A0·V−_c without)

and x = x_lin + ξ. While nothing clips or slews (x_lin's step within the
slew limit) the correction stays exactly zero, so the linear fast path
needs no state handed over; once anything clips or slews,
the correction carries the loop's memory (series_c charging, the shifted
operating point and its recovery) until it has decayed below 1e-12 V.

Time stepping
-------------
The output stage f is linear on each of its pieces: the identity between
the knees, a constant at each rail. While the op-amp stays on one piece
the correction is a linear system, integrated exactly over each step with
matrix exponentials: on the identity part it is autonomous (d = ξ; the
closed loop's own pole, far above the Nyquist frequency, simply decays),
at a rail it is the network driven by d = rail − x_lin with x_lin a cubic
through four samples. Exact integration rings at no frequency, so the clip
edges excite no Nyquist ringing.

A step in which the op-amp changes piece (or lies on a knee, or slews) is
found by checking the end of the exact step (with a slew limit, each point
of the grid below: the closed loop's fast pole can carry x across a slew
reversal inside the step while its end looks in reach); within it, the exact
trajectory is followed up to the last point of a grid of ``SUBSTEPS`` where
it still holds (found by bisection); along a knee, where f is smooth,
TR-BDF2 steps (L-stable, second order: Bank, Coughran, Fichtner, Grosse,
Rose & Smith, "Transient simulation of silicon devices and circuits", IEEE
Trans. CAD 4(4):436–451, 1985) span as much of the grid as x_lin takes to
move a quarter of the knee; where a rail is reached or left, short steps of
one grid point — the second-order backward differentiation formula (BDF2,
L-stable), TR-BDF2 for the first — carry it across the corner; and the
exact step takes over again from the first grid point where it holds to the
end. Each TR-BDF2 or BDF2 step is the nodal DK method's scheme (Yeh, Abel &
Smith, "Automated physical modeling of nonlinear audio circuits for
real-time audio effects — Part I", IEEE TASLP 18(4):728–737, 2010; Holters
& Zölzer, "Physical modelling of a wah-wah effect pedal as a case study for
application of the nodal DK method to circuits with variable parts",
DAFx-11, 2011): everything known from the past is one prediction, and the
nonlinearity is one scalar equation

    x + β·f(x) = (1 + β)·m,     β = −ρ ≥ 0,

with ρ the step's direct coefficient from d to ξ and m the value the
output would take were f the identity. Its left side is strictly
increasing and piecewise quadratic, so the root Newton's iteration would
converge to is taken in closed form. Then x is clamped to the state limits
(the root of the clamped equation is the clamp of the root, the map being
monotonic) and to the slew step.

Around the loop the gain is A(f)·β(f), A(f) = A0/(1 + j·2π·f·τ) and β the
feedback fraction: A0·β (of order 10⁴) only below the op-amp's pole
1/(2π·τ) = gbw/A0, about gbw·β/f above it (some 10² at 5 kHz). It holds V_o
close to its linear course until the rail, where V_o stops. The feedback
straightens the knee, so closed-loop clipping is nearly hard (less so as the
frequency rises), and ``knee`` is the output stage's softness at the rails
only.

The output and its anti-aliasing
--------------------------------
The chain hears V_o averaged with a quadratic B-spline kernel over the last
three steps, a continuous-time convolution of third order (Parker,
Zavalishin & Le Bivic, "Reducing the aliasing of nonlinear waveshaping
using continuous-time convolution", DAFx-16, 2016). Within each step x_lin
is the cubic through its four nearest samples (so the loop runs one sample
behind its input), for the loop's input and for its output alike: on
x_lin's samples the kernel is a 6-tap symmetric FIR (``KERNEL_TAPS``), which
the linear path applies and the decimator takes into account, and the loop
adds the kernel's average of d = V_o − x_lin, exact where the step is exact
and piecewise-linear between the short steps, which places every clip edge
to within a short step. At a rail the output is then the rail exactly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .limit import Window
from .loop_shared import GAMMA, H_P1, H_P2, H_VO1, H_X, H_XL1, H_XL2, NO_SLEW, RAIL_TOL_V, STAGE_0, STAGE_1  # noqa: F401  (the kernel reads them from loop_shared)

TOLERANCE_V = 1e-12  # V: a correction below this (every state, in volts of stored energy) is dropped as zero
SUBSTEPS = 32  # grid of short steps across a change of piece


@dataclass(frozen=True)
class Network:
    """coil_a's network and the feedback as state equations (SI units).

    ds/dt = a·s + b_e·e_a + b_o·V_o and V− = c·s + d_e·e_a + d_o·V_o, with
    e_a coil_a's EMF and V_o the op-amp output.

    a : np.ndarray [shape=(n, n)], 1/s
    b_e, b_o : np.ndarray [shape=(n,)]
    c : np.ndarray [shape=(n,)]
    d_e, d_o : float
    names : tuple of str, the states in order
    scale : np.ndarray [shape=(n,)], V per state unit: 1 for a voltage, the
        coil's √(L/C) for a current (equal stored energy)
    """

    a: np.ndarray
    b_e: np.ndarray
    b_o: np.ndarray
    c: np.ndarray
    d_e: float
    d_o: float
    names: tuple
    scale: np.ndarray


@dataclass(frozen=True)
class OpAmp:
    """The op-amp model (module text).

    open_loop_gain : A0
    tau_s : s, A0/(2π·gbw), or None without gbw
    window : the output window and knee
    slew_rate : V/s, or None
    """

    open_loop_gain: float
    tau_s: float | None
    window: Window
    slew_rate: float | None


def network(p, index: int = 0) -> Network:
    """The loop's linear network of design ``index`` of a :class:`render.circuit.params.Params`.

    States: v_s (series_c, from the coil's terminal side), v_t (the terminal
    to ground: winding C + load_c), i_1 (the coil's inductor current, from
    the terminal through the coil to ground), i_2 (the shorted secondary's
    current, when there is one), v_f (the feedback c, output to inverting
    input, when there is one). A coil with an RL ladder has instead i_1, the
    current through L0 (when L0 > 0), and i_l1, i_l2, … the sections'
    inductor currents.
    """
    ca, na = p.coil_a, p.input_a
    L = float(ca.L[index])
    Ra = float(ca.R[index])
    Gp = float(ca.Gp[index])
    sec = bool(ca.sec[index] > 0)
    Ct = float(ca.Cw[index] + na.Cl[index])
    Gl = float(na.Gl[index])
    Cs = float(na.Cs[index])
    Rs = float(na.Rs[index])
    Rf = 1.0 / float(p.fb_G[index])
    Cf = float(p.fb_C[index])
    lad = ca.ladder if ca.ladder is not None and bool(ca.ladder.active[index]) else None
    if lad is not None:  # an RL ladder (render.circuit.ladder) in place of L, R_p and the secondary
        l0 = float(lad.L0[index])
        sections = [(float(lk), float(lk) / float(tk)) for lk, tk in zip(lad.Lk[index], lad.tau[index]) if lk > 0 and tk > 0]
        coil_states = (["i_1"] if l0 > 0 else []) + [f"i_l{k + 1}" for k in range(len(sections))]
        sec = False
        L = float(ca.L[index])
    else:
        coil_states = ["i_1"] + (["i_2"] if sec else [])
    names = ["v_s", "v_t"] + coil_states + (["v_f"] if Cf > 0 else [])
    n = len(names)
    ix = {k: i for i, k in enumerate(names)}
    col_e, col_o = n, n + 1  # columns of the inputs e_a and V_o

    def row():
        return np.zeros(n + 2)

    def var(name):
        r = row()
        r[ix[name] if name in ix else {"e": col_e, "o": col_o}[name]] = 1.0
        return r

    v_s, v_t, e, o = var("v_s"), var("v_t"), var("e"), var("o")
    if Cf > 0:
        v_f = var("v_f")
        v_minus = o - v_f
        i_r = (o - v_f - v_s - v_t) / Rs  # through series_r, from the inverting input towards the coil
    else:
        v_minus = (o * Rs + (v_s + v_t) * Rf) / (Rs + Rf)
        i_r = (o - v_s - v_t) / (Rs + Rf)
    if lad is not None:
        # the coil from its terminal to ground: L0 and the sections R_k ∥ L_k in series with R_dc and
        # the EMF; section k's voltage is R_k·(i_c − i_lk). Without L0 the coil's current is algebraic:
        # v_t − e = R_dc·i_c + Σ R_k·(i_c − i_lk).
        i_k = [var(f"i_l{k + 1}") for k in range(len(sections))]
        if l0 > 0:
            i_c = var("i_1")
        else:
            i_c = (v_t - e + sum((r * ik for (_, r), ik in zip(sections, i_k)), row())) / (Ra + sum(r for _, r in sections))
        v_k = [r * (i_c - ik) for (_, r), ik in zip(sections, i_k)]
        rows = {"v_s": i_r / Cs, "v_t": (i_r - Gl * v_t - i_c) / Ct}
        for k, ((lk, _), vk) in enumerate(zip(sections, v_k)):
            rows[f"i_l{k + 1}"] = vk / lk
        if l0 > 0:
            rows["i_1"] = (v_t - e - Ra * i_c - sum(v_k, row())) / l0
    else:
        i_1 = var("i_1")
        # the coil from its terminal to ground: inductor (∥ R_p) in series with R_dc and the EMF
        v_l = (v_t - e - Ra * i_1) / (1.0 + Ra * Gp)
        i_c = i_1 + Gp * v_l
        rows = {"v_s": i_r / Cs, "v_t": (i_r - Gl * v_t - i_c) / Ct}
        if sec:
            # shorted secondary (coil.py): L2 = L1, R2 = ω_e·L2, M = k·L1
            L2 = L
            M = math.sqrt(float(ca.k2[index])) * L
            R2 = float(ca.we[index]) * L2
            inv = np.linalg.inv(np.array([[L, M], [M, L2]]))
            i_2 = var("i_2")
            rows["i_1"] = inv[0, 0] * v_l + inv[0, 1] * (-R2 * i_2)
            rows["i_2"] = inv[1, 0] * v_l + inv[1, 1] * (-R2 * i_2)
        else:
            rows["i_1"] = v_l / L
    if Cf > 0:
        rows["v_f"] = (i_r - v_f / Rf) / Cf
    m = np.array([rows[k] for k in names])
    z0 = math.sqrt(L / Ct)
    scale = np.array([z0 if k.startswith("i_") else 1.0 for k in names])
    return Network(
        a=m[:, :n].copy(),
        b_e=m[:, col_e].copy(),
        b_o=m[:, col_o].copy(),
        c=v_minus[:n].copy(),
        d_e=float(v_minus[col_e]),
        d_o=float(v_minus[col_o]),
        names=tuple(names),
        scale=scale,
    )


def op_amp(design) -> OpAmp:
    """The op-amp of a validated :class:`render.design.Design`."""
    from .limit import design_window

    s = design.supply
    a0 = float(s.open_loop_gain)
    tau = a0 / (2 * math.pi * s.gbw) if s.gbw else None
    return OpAmp(a0, tau, design_window(design), float(s.slew_rate) if s.slew_rate else None)


def dc_output(design) -> float:
    """The op-amp output's DC operating point, A0/(1 + A0) · the divider's voltage (V).

    series_c blocks DC, so V− = V_o at DC and V_o = A0·(V+ − V_o).
    """
    a0 = float(design.supply.open_loop_gain)
    return float(design.bias_v) * a0 / (1.0 + a0)


def static_feedback_fraction(net: Network) -> float:
    """The fraction β of the output's deviation d that reaches the inverting input at low frequency.

    V−_c per d with the network settled: ``series_c`` a short (its voltage held at 0, as at frequencies
    well above its corner), every other capacitor open and every inductor a short. For a coil with
    its DC resistance R_c and no load resistor, β = (series_r + R_c)/(series_r + R_c + feedback r).
    """
    keep = [i for i, name in enumerate(net.names) if name != "v_s"]
    settled = np.linalg.solve(net.a[np.ix_(keep, keep)], -net.b_o[keep])
    return float(net.c[keep] @ settled + net.d_o)


def static_loop_gain(design, *, params=None) -> float:
    """L = A0·β, the loop's gain at low frequency (:func:`static_feedback_fraction`), of a validated design."""
    from ..circuit.params import from_designs

    p = params if params is not None else from_designs([design])
    return float(design.supply.open_loop_gain) * static_feedback_fraction(network(p, 0))


def static_transfer(x_lin, *, window: Window, loop_gain: float) -> np.ndarray:
    """The closed loop's output V_o held at a linear output x_lin, at low frequency (V).

    With the network settled the correction is ξ = −L·d, d = V_o − x_lin (L: :func:`static_loop_gain`),
    so x = x_lin + ξ solves x + L·f(x) = (1 + L)·x_lin and V_o = f(x), f the output stage's window
    (:func:`render.chain.limit.soft_limit`). The left side is increasing and piecewise quadratic: its
    root in closed form, as the loop's steps take it. On f's identity part V_o = x_lin; across a knee
    x_lin − V_o = (x − f(x))/(1 + L), between 0 and knee/(1 + L); the rail is reached at
    x_lin = high + knee/(1 + L).

    x_lin : array_like, V, any shape
    returns : np.ndarray, V, the shape of x_lin
    """
    from .limit import soft_limit

    m = np.asarray(x_lin, dtype=float)
    beta = float(loop_gain)
    centre = window.centre
    half = window.linear_high - centre
    knee = window.knee
    u = m - centre
    t = np.abs(u)
    sign = np.where(u >= 0.0, 1.0, -1.0)
    top = half + knee  # rail − centre
    b1 = 1.0 + beta
    d0 = b1 * (t - half)
    disc = np.maximum(b1 * b1 - beta * d0 / knee, 0.0)
    on_knee = centre + sign * (half + 2.0 * d0 / (b1 + np.sqrt(disc)))
    beyond = centre + sign * (t + beta * (t - top))
    x = np.where(t <= half, m, np.where(t * b1 >= top * b1 + knee, beyond, on_knee))
    return soft_limit(x, window=window)


# --- the discrete loop ---------------------------------------------------------------


@dataclass(frozen=True)
class Loop:
    """The correction's discrete steps at one rate (module text); K = len(Z).

    On a grid θ_k = k/N (k = 0 … N, N = ``substeps``) of each step, σ the time
    within the step in steps and x_lin within it the cubic through steps
    n−2 … n+1 (Lagrange basis ℓ_i, values ``basis`` and derivatives ``basis_d``
    at the grid points, shape (N+1, 4)):

    lin_at, lin_rest : [shape=(N+1, K, K)], the exact identity-part step from 0 to θ_k
        and from θ_k to 1 (autonomous)
    lin_rows : [shape=(N+1, K)], ξ at θ_k per Z[0]
    lin_head, lin_tail : [shape=(N+1, 3, K)], the moments ∫σ^j·d dσ of d = ξ over
        [0, θ_k] per Z[0] and over [θ_k, 1] per Z(θ_k)
    rail_at, rail_rest : [shape=(N+1, K, K)], the network's exact step at a rail (ξ row zero)
    rail_head_g, rail_tail_g : [shape=(N+1, K)], its response to the rail voltage over [0, θ_k], [θ_k, 1]
    rail_head_x, rail_tail_x : [shape=(N+1, 4, K)], and to x_lin's four samples (d = rail − x_lin)
    scan_rows, scan_g, scan_x : [shape=(N+1, K), (N+1,), (N+1, 4)]: w·Z(θ_k) at a rail
        from Z[0], the rail and x_lin's samples, w = c (with gbw: V−_c's state part) or kc (without)
    rail_head_m, rail_tail_m : [shape=(N+1, 3, 4)], ∫σ^j·ℓ_i dσ over [0, θ_k] and [θ_k, 1]
    trbdf2 : (P, r, ρ, M, r', ρ') of TR-BDF2 over L/N steps for L = 0 … N (arrays of shape
        (N+1, …); see :func:`_trbdf2`): the trapezoidal stage to γ, Z = P·Z[0] + r·(d[0] + d), and
        the BDF2 stage, Z = M·(STAGE_1·Z[γ] + STAGE_0·Z[0]) + r'·d
    bdf2 : (M, r, ρ) of BDF2 at 1/N, Z = M·(2·Z[n−1] − Z[n−2]/2) + r·d (see :func:`_step`)
    u_vec : [shape=(K,)], ξ = u·(the short step's prediction) + ρ·d
    kc : [shape=(K,)], the settled op-amp's requested output m = x_lin + kc·Z
    d_row : [shape=(K,)], ξ = d_row·Z on the identity part
    beta_c : the loop's instantaneous gain A0·d_o
    c_vec, d_o : V−_c = c_vec·Z + d_o·d
    open_loop_gain, tau_s : A0 and τ (0 without gbw)
    xi_index : ξ's index in Z (−1 without gbw)
    clamp : (lo, hi), V, the op-amp state's limits (gbw only)
    slew_step : V per step (NO_SLEW without slew_rate)
    scale : [shape=(K,)], V per state unit for the decay test
    sample_rate : Hz, the loop's rate; window : the output window; dc_v : V, the DC operating point
    """

    sample_rate: float
    window: Window
    dc_v: float
    substeps: int
    basis: np.ndarray
    basis_d: np.ndarray
    lin_at: np.ndarray
    lin_rest: np.ndarray
    lin_rows: np.ndarray
    lin_head: np.ndarray
    lin_tail: np.ndarray
    rail_at: np.ndarray
    rail_rest: np.ndarray
    rail_head_g: np.ndarray
    rail_tail_g: np.ndarray
    rail_head_x: np.ndarray
    rail_tail_x: np.ndarray
    scan_rows: np.ndarray
    scan_g: np.ndarray
    scan_x: np.ndarray
    rail_head_m: np.ndarray
    rail_tail_m: np.ndarray
    trbdf2: tuple
    bdf2: tuple
    u_vec: np.ndarray
    kc: np.ndarray
    d_row: np.ndarray
    beta_c: float
    c_vec: np.ndarray
    d_o: float
    open_loop_gain: float
    tau_s: float
    xi_index: int
    clamp: tuple[float, float]
    slew_step: float
    scale: np.ndarray

    @property
    def order(self) -> int:
        return self.kc.size


def correction_system(net: Network, amp: OpAmp):
    """(Ā, b̄, u_c, u_d): dZ/dt = Ā·Z + b̄·d, and without gbw ξ = u_c·Z + u_d·d (with gbw ξ is Z's last entry)."""
    n = net.a.shape[0]
    a0 = amp.open_loop_gain
    if amp.tau_s is None:
        return net.a, net.b_o, -a0 * net.c, -a0 * net.d_o
    t = amp.tau_s
    a = np.zeros((n + 1, n + 1))
    a[:n, :n] = net.a
    a[n, :n] = -a0 * net.c / t
    a[n, n] = -1.0 / t
    b = np.concatenate([net.b_o, [-a0 * net.d_o / t]])
    return a, b, None, None


# cubic Lagrange basis through σ = −1, 0, 1, 2 (x_lin at steps n−2 … n+1), as coefficients of 1, σ, σ², σ³;
# step n runs over σ ∈ [0, 1]; the loop runs one step behind its input for the look-ahead
LAGRANGE = np.array([[0.0, -1 / 3, 1 / 2, -1 / 6], [1.0, -1 / 2, -1.0, 1 / 2], [0.0, 1.0, 1 / 2, -1 / 2], [0.0, -1 / 6, 0.0, 1 / 6]])
# the output kernel's pieces on the last three steps (oldest first), as coefficients of 1, σ, σ²:
# the quadratic B-spline σ²/2, (1 + 2σ − 2σ²)/2, (1 − σ)²/2
KERNEL_PIECES = np.array([[0.0, 0.0, 0.5], [0.5, 1.0, -1.0], [0.5, -1.0, 0.5]])


def _kernel_taps() -> np.ndarray:
    """The output kernel applied to x_lin's cubic: an FIR on x_lin's samples, newest first.

    Output n averages steps n−2, n−1, n; step m's cubic uses samples m−2 … m+1, so the taps
    span samples n+1 … n−4 (6 taps, symmetric: the kernel and the centred cubic both are).
    """
    taps = np.zeros(6)
    for s, piece in zip((-2, -1, 0), KERNEL_PIECES):
        for i in range(4):
            w = sum(piece[a] * LAGRANGE[i, b] / (a + b + 1) for a in range(3) for b in range(4))
            taps[1 - (s - 2 + i)] += w  # sample n + (s − 2 + i) is (1 − (s − 2 + i)) samples back from n+1
    return taps


KERNEL_TAPS = _kernel_taps()


def _phis(m, count):
    """e^M and φ_j = ∫₀¹ e^{M(1−s)}·s^{j−1}/(j−1)! ds for j = 1 … count, from one exponential of
    M augmented with a chain of identities (Van Loan, "Computing integrals involving the matrix
    exponential", IEEE Trans. Automatic Control 23(3):395–404, 1978)."""
    from scipy.linalg import expm

    k = m.shape[0]
    big = np.zeros(((count + 1) * k, (count + 1) * k))
    big[:k, :k] = m
    for j in range(count):
        big[j * k : (j + 1) * k, (j + 1) * k : (j + 2) * k] = np.eye(k)
    e = expm(big)
    return e[:k, :k], [e[:k, (j + 1) * k : (j + 2) * k] for j in range(count)]


def _state_integrals(a, h, length):
    """∫₀^L u^i·e^{A·h·u} du for i = 0, 1, 2 (L = ``length``, in steps), and e^{A·h·L}."""
    e, phi = _phis(a * h * length, 3)
    # ∫₀¹ s^i e^{Ms} ds = ∫₀¹ (1 − s)^i e^{M(1−s)} ds, in φ_j: 1 → φ1, 1 − s → φ1 − φ2, (1 − s)² → φ1 − 2φ2 + 2φ3
    unit = [phi[0], phi[0] - phi[1], phi[0] - 2 * phi[1] + 2 * phi[2]]
    return [length ** (i + 1) * unit[i] for i in range(3)], e


def _driven(a, b, h, start, stop):
    """The exact step of dZ/dt = A·Z + b·u(σ) from σ = start to stop (in steps): (e^{A·h·(stop−start)},
    the responses to u = σ^j for j = 0 … 3, shape (4, n))."""
    from math import comb

    length = stop - start
    e, phi = _phis(a * h * length, 4)
    # ∫₀^L e^{A·h·(L−v)}·b·v^k·h dv = h·L^{k+1}·k!·φ_{k+1}·b
    moment = [h * length ** (k + 1) * math.factorial(k) * (phi[k] @ b) for k in range(4)]
    powers = [sum(comb(j, k) * start ** (j - k) * moment[k] for k in range(j + 1)) for j in range(4)]
    return e, np.array(powers)


def make_loop(design, *, sample_rate: float, params=None) -> Loop:
    """The discrete loop of a validated design at ``sample_rate`` (Hz, the oversampled rate).

    params : the design's :class:`render.circuit.params.Params` when already built
    """
    from math import comb

    from ..circuit.params import from_designs

    p = params if params is not None else from_designs([design])
    net = network(p, 0)
    amp = op_amp(design)
    a, b, u_c, u_d = correction_system(net, amp)
    h = 1.0 / float(sample_rate)
    k = a.shape[0]
    ns = net.a.shape[0]
    a0 = amp.open_loop_gain
    gbw = amp.tau_s is not None
    N = SUBSTEPS
    theta = np.arange(N + 1) / N
    # the settled op-amp's requested output: x = x_lin + ξ with ξ = −A0·(c·s + d_o·ξ)
    kc = np.zeros(k)
    kc[:ns] = -a0 * net.c / (1.0 + a0 * net.d_o)
    if gbw:
        xi = k - 1
        d_row = np.eye(k)[xi]
        u = d_row
    else:
        xi = -1
        d_row = kc
        u = u_c
    a_lin = a + np.outer(b, d_row)  # the identity part: d = ξ
    # --- the identity part's exact steps and the moments of d over them
    lin_at, lin_rest = np.zeros((N + 1, k, k)), np.zeros((N + 1, k, k))
    lin_head, lin_tail = np.zeros((N + 1, 3, k)), np.zeros((N + 1, 3, k))
    for i, t in enumerate(theta):
        ints, lin_at[i] = _state_integrals(a_lin, h, t)
        for j in range(3):
            lin_head[i, j] = d_row @ ints[j]
        ints, lin_rest[i] = _state_integrals(a_lin, h, 1.0 - t)
        for j in range(3):  # ∫_θ¹ σ^j e^{A h (σ−θ)} dσ = Σ_i C(j, i) θ^{j−i} ∫₀^{1−θ} u^i e^{A h u} du
            lin_tail[i, j] = d_row @ sum(comb(j, q) * t ** (j - q) * ints[q] for q in range(j + 1))
    lin_rows = np.einsum("j,ijk->ik", d_row, lin_at)
    # --- at a rail: the network alone (ξ set by the clamp), driven by d = rail − x_lin
    rail_at, rail_rest = np.zeros((N + 1, k, k)), np.zeros((N + 1, k, k))
    rail_head_g, rail_tail_g = np.zeros((N + 1, k)), np.zeros((N + 1, k))
    rail_head_x, rail_tail_x = np.zeros((N + 1, 4, k)), np.zeros((N + 1, 4, k))
    for i, t in enumerate(theta):
        for start, stop, at, g, x in ((0.0, t, rail_at, rail_head_g, rail_head_x), (t, 1.0, rail_rest, rail_tail_g, rail_tail_x)):
            e, powers = _driven(net.a, net.b_o, h, start, stop)
            at[i, :ns, :ns] = e
            g[i, :ns] = powers[0]
            x[i, :, :ns] = -LAGRANGE @ powers
    w = np.zeros(k)
    w[:ns] = net.c if gbw else kc[:ns]
    scan_rows = np.einsum("j,ijk->ik", w, rail_at)
    scan_g = rail_head_g @ w
    scan_x = rail_head_x @ w
    # ∫σ^j ℓ_i dσ over [0, θ] and [θ, 1]
    prim = np.array([[LAGRANGE[i] @ (theta[:, None] ** (np.arange(4) + j + 1) / (np.arange(4) + j + 1)).T for i in range(4)] for j in range(3)])
    rail_head_m = np.transpose(prim, (2, 0, 1))  # (N+1, 3, 4)
    rail_tail_m = rail_head_m[-1][None] - rail_head_m
    basis = (theta[:, None] ** np.arange(4)) @ LAGRANGE.T
    basis_d = (np.arange(4) * theta[:, None] ** np.maximum(np.arange(4) - 1, 0)) @ LAGRANGE.T
    # --- the short steps
    hs = h / N
    eye = np.eye(k)
    g = GAMMA  # type: ignore[assignment]  # the name held a table in the loop above; here TR-BDF2's stage

    def trbdf2(step):
        inv = np.linalg.inv(eye - 0.5 * g * step * a)
        trap = (inv @ (eye + 0.5 * g * step * a), 0.5 * g * step * (inv @ b))
        inv = np.linalg.inv(eye - (1 - g) / (2 - g) * step * a)
        stage = (inv, (1 - g) / (2 - g) * step * (inv @ b))  # Z = inv·(STAGE_1·Z[γ] + STAGE_0·Z[0]) + r·d
        return trap + stage

    tr = [trbdf2(L * hs) for L in range(N + 1)]
    tr_arrays = [np.array([t[q] for t in tr]) for q in range(4)]
    inv = np.linalg.inv(1.5 * eye - hs * a)
    bdf2 = (inv, hs * (inv @ b))  # Z = inv·(2·Z[n−1] − Z[n−2]/2) + r·d

    def rho(r):
        return float(r[xi]) if gbw else float(u_c @ r + u_d)

    def c(x):
        return np.ascontiguousarray(x, dtype=float)

    c_vec = np.zeros(k)
    c_vec[:ns] = net.c
    win = amp.window
    return Loop(
        sample_rate=float(sample_rate),
        window=win,
        dc_v=dc_output(design),
        substeps=N,
        basis=c(basis),
        basis_d=c(basis_d),
        lin_at=c(lin_at),
        lin_rest=c(lin_rest),
        lin_rows=c(lin_rows),
        lin_head=c(lin_head),
        lin_tail=c(lin_tail),
        rail_at=c(rail_at),
        rail_rest=c(rail_rest),
        rail_head_g=c(rail_head_g),
        rail_tail_g=c(rail_tail_g),
        rail_head_x=c(rail_head_x),
        rail_tail_x=c(rail_tail_x),
        scan_rows=c(scan_rows),
        scan_g=c(scan_g),
        scan_x=c(scan_x),
        rail_head_m=c(rail_head_m),
        rail_tail_m=c(rail_tail_m),
        trbdf2=(c(tr_arrays[0]), c(tr_arrays[1]), c([rho(t[1]) for t in tr]), c(tr_arrays[2]), c(tr_arrays[3]), c([rho(t[3]) for t in tr])),
        bdf2=(c(bdf2[0]), c(bdf2[1]), rho(bdf2[1])),
        u_vec=c(u),
        kc=c(kc),
        d_row=c(d_row),
        beta_c=float(a0 * net.d_o),
        c_vec=c(c_vec),
        d_o=float(net.d_o),
        open_loop_gain=float(a0),
        tau_s=float(amp.tau_s or 0.0),
        xi_index=xi,
        clamp=(win.low - win.knee, win.high + win.knee) if gbw else (-math.inf, math.inf),
        slew_step=float(amp.slew_rate * h) if amp.slew_rate else NO_SLEW,
        scale=c(np.concatenate([net.scale, [1.0]]) if gbw else net.scale),
    )


HIST = 6  # carried scalars in the state vector ``hist`` (their places: loop_shared.H_*)


class LoopState:
    """The loop's carried state within one render (mutable; held by one renderer)."""

    def __init__(self, loop: Loop):
        self.loop = loop
        self.z = np.zeros(loop.order)
        self.hist = np.zeros(HIST)
        self.active = False
        self.short_steps = 0

    def start(self, xl_before) -> None:
        """Start from a zero correction, with x_lin's two samples before the first step's end (V, [x[−2], x[−1]])."""
        self.z[:] = 0.0
        self.hist[:] = 0.0
        x2, x1 = (float(v) for v in xl_before)
        self.hist[H_X] = self.hist[H_XL1] = self.hist[H_VO1] = x1
        self.hist[H_XL2] = x2
        self.active = True

    def run(self, xl, *, start: int, loud, loud_base: int, oversample: int):
        """Run the steps over ``xl`` (V, at the loop's rate, samples ``start`` … ``start`` + m); see
        :func:`render.chain._loop_kernel.run_steps`.

        returns : (out_c, out_vo, steps run, clipped steps); ``self.active`` tells whether it is still running
        """
        lp = self.loop
        w = lp.window
        m = max(xl.size - 1, 0)
        out_c = np.zeros(m)
        out_vo = np.empty(m)
        if m == 0:
            return out_c, out_vo, 0, 0
        from ._loop_kernel import run_steps  # numba and the compiled loop, only once a loop runs

        done, clipped, short, active = run_steps(  # type: ignore[call-arg]  # numba's dispatcher takes the kernel's own arguments
            np.ascontiguousarray(xl, dtype=float),
            int(start),
            np.ascontiguousarray(loud, dtype=np.bool_),
            int(loud_base),
            int(oversample),
            lp.sample_rate,
            lp.basis,
            lp.basis_d,
            lp.lin_at,
            lp.lin_rest,
            lp.lin_rows,
            lp.lin_head,
            lp.lin_tail,
            lp.rail_at,
            lp.rail_rest,
            lp.rail_head_g,
            lp.rail_tail_g,
            lp.rail_head_x,
            lp.rail_tail_x,
            lp.scan_rows,
            lp.scan_g,
            lp.scan_x,
            lp.rail_head_m,
            lp.rail_tail_m,
            *lp.trbdf2,
            *lp.bdf2,
            lp.u_vec,
            lp.kc,
            lp.d_row,
            lp.beta_c,
            lp.c_vec,
            lp.d_o,
            lp.open_loop_gain,
            lp.tau_s,
            lp.xi_index,
            w.low,
            w.high,
            w.knee,
            lp.clamp[0],
            lp.clamp[1],
            lp.slew_step,
            lp.scale,
            TOLERANCE_V,
            self.z,
            self.hist,
            out_c,
            out_vo,
        )
        self.active = bool(active)
        self.short_steps += int(short)
        self.steps_run = getattr(self, "steps_run", 0) + int(done)
        return out_c[:done], out_vo[:done], int(done), int(clipped)
