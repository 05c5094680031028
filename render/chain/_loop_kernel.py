"""The loop's time stepping, compiled (numba): the kernel of :mod:`render.chain.loop`.

Kept apart so that numba is imported, and the compiled code loaded from its
cache, only when a loop actually runs (a render that never clips needs
neither). The equations, the steps and their sources are in
:mod:`render.chain.loop`'s text.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .loop_shared import GAMMA, H_P1, H_P2, H_VO1, H_X, H_XL1, H_XL2, NO_SLEW, RAIL_TOL_V, STAGE_0, STAGE_1

# --- the output stage, scalar (numba) -----------------------------------------------------


@njit(cache=True, inline="always", error_model="numpy")
def _f(x, centre, half, knee, low, high):
    """The window f(x) (render.chain.limit.soft_limit); half = linear_high − centre."""
    u = x - centre
    t = abs(u) - half
    if t <= 0.0:
        return x
    q = 2.0 * knee - t
    if q < 0.0:
        q = 0.0
    # q²/(4·knee) with the reciprocal taken once per call site would change no value the tests check,
    # but keep the division: it is only reached on a knee or a rail
    if u >= 0.0:
        return high - q * q / (4.0 * knee)
    return low + q * q / (4.0 * knee)


@njit(cache=True, inline="always", error_model="numpy")
def _solve(m, beta, centre, half, knee):
    """The root x of x + β·f(x) = (1 + β)·m (f's knee in closed form)."""
    u = m - centre
    t = abs(u)
    if t <= half:
        return m
    s = 1.0 if u >= 0.0 else -1.0
    top = half + knee  # rail − centre
    b1 = 1.0 + beta
    if t * b1 >= top * b1 + knee:
        return centre + s * (t + beta * (t - top))
    d0 = b1 * (t - half)
    disc = b1 * b1 - beta * d0 / knee
    if disc < 0.0:
        disc = 0.0
    return centre + s * (half + 2.0 * d0 / (b1 + math.sqrt(disc)))


@njit(cache=True, inline="always", error_model="numpy")
def _region(x, centre, half, knee):
    """0 on f's identity part, ±1 on a knee, ±2 at a rail (within RAIL_TOL_V of the clamp)."""
    u = x - centre
    t = abs(u)
    if t <= half:
        return 0
    r = 1 if t < half + 2.0 * knee - RAIL_TOL_V else 2
    return r if u > 0.0 else -r


@njit(cache=True, inline="always", error_model="numpy")
def _step(z1, z2, M, c1, c2, r, d_start, u, rho, xi_index, x_lin, x_prev, slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, zp, z_out):
    """One short step, Z = M·(c1·z1 + c2·z2) + r·(d_start + d), with the nonlinear equation solved.

    d_start : the input at the step's start for the trapezoidal stage, else 0
    returns : (x, V_o, whether the slew limit acted), and Z in ``z_out``
    """
    n = z1.size
    beta = -rho
    inv_b1 = 1.0 / (1.0 + beta)
    for k in range(n):
        z_out[k] = c1 * z1[k] + c2 * z2[k]
    p = 0.0
    for j in range(n):
        acc = r[j] * d_start
        for k in range(n):
            acc += M[j, k] * z_out[k]
        zp[j] = acc
        p += u[j] * acc
    m = x_lin + p * inv_b1
    x = _solve(m, beta, centre, half, knee)
    slewed = False
    if xi_index >= 0:
        if x > clamp_hi:
            x = clamp_hi
        elif x < clamp_lo:
            x = clamp_lo
        if x > x_prev + slew_step:
            x = x_prev + slew_step
            slewed = True
        elif x < x_prev - slew_step:
            x = x_prev - slew_step
            slewed = True
    vo = _f(x, centre, half, knee, low, high)
    d = vo - x_lin
    for j in range(n):
        z_out[j] = zp[j] + r[j] * d
    if xi_index >= 0:
        z_out[xi_index] = x - x_lin
    return x, vo, slewed


@njit(cache=True, inline="always", error_model="numpy")
def _matvec(m, i, z, out):
    """out = m[i]·z (m of shape (G, n, n))."""
    n = z.size
    for j in range(n):
        acc = 0.0
        for k in range(n):
            acc += m[i, j, k] * z[k]
        out[j] = acc


@njit(cache=True, inline="always", error_model="numpy")
def _dot(a, i, z, ns):
    """a[i]·z over z's first ns entries (a of shape (G, n); a[i, ns:] zero where ns < n)."""
    acc = 0.0
    for j in range(ns):
        acc += a[i, j] * z[j]
    return acc


@njit(cache=True, inline="always", error_model="numpy")
def _dot3(a, i, r, z):
    """a[i, r]·z (a of shape (G, R, n))."""
    acc = 0.0
    for j in range(z.size):
        acc += a[i, r, j] * z[j]
    return acc


@njit(cache=True, inline="always", error_model="numpy")
def _vdot(a, z):
    acc = 0.0
    for j in range(z.size):
        acc += a[j] * z[j]
    return acc


@njit(cache=True, inline="always", error_model="numpy")
def _xs(a, i, x4):
    """a[i]·x4 (a of shape (G, 4))."""
    return a[i, 0] * x4[0] + a[i, 1] * x4[1] + a[i, 2] * x4[2] + a[i, 3] * x4[3]


@njit(cache=True, inline="always", error_model="numpy")
def _xs3(a, i, r, x4):
    """a[i, r]·x4 (a of shape (G, R, 4))."""
    return a[i, r, 0] * x4[0] + a[i, r, 1] * x4[1] + a[i, r, 2] * x4[2] + a[i, r, 3] * x4[3]


@njit(cache=True, inline="always", error_model="numpy")
def _rail_state(at, g, xr, k, z, rail, x4, out, ns):
    """Z at grid point k from Z[0] at a rail: at[k]·Z + rail·g[k] + xr[k]·x4.

    ns : the network's states, Z's first ns entries; with gbw the op-amp's state (Z's last entry)
    takes no part in the network's step at a rail (its row and column of at, g and xr are zero):
    its entry is written as 0 here and set from the clamp by the caller
    """
    n = z.size
    for j in range(ns):
        acc = rail * g[k, j] + xr[k, 0, j] * x4[0] + xr[k, 1, j] * x4[1] + xr[k, 2, j] * x4[2] + xr[k, 3, j] * x4[3]
        for q in range(ns):
            acc += at[k, j, q] * z[q]
        out[j] = acc
    for j in range(ns, n):
        out[j] = 0.0


@njit(cache=True, inline="always", error_model="numpy")
def _rail_holds(side, xlin_t, dxlin_t, wz, rail, gbw, x_cl, tau, a0, d_o, beta_c, centre, half, knee):
    """Whether the op-amp stays at the rail ``side`` (±1) given w·Z (module text)."""
    if gbw:
        # τ·dx/dt without the limit: τ·dx_lin/dt + x_lin − x − A0·V−_c (the linear solution obeys
        # τ·dx_lin/dt = A0·(V+ − V−_lin) − x_lin); the rail holds while that pushes outwards
        drive = tau * dxlin_t + xlin_t - x_cl - a0 * (wz + d_o * (rail - xlin_t))
        return drive >= 0.0 if side > 0 else drive <= 0.0
    # without gbw: the settled op-amp's requested output m is beyond the rail's saturation point
    m = xlin_t + wz
    edge = half + knee + knee / (1.0 + beta_c)
    return m - centre >= edge if side > 0 else centre - m >= edge


@njit(cache=True, inline="always", error_model="numpy")
def _cubic(t, x4):
    """x_lin at σ = t within the step: the cubic through x4 at σ = −1, 0, 1, 2 (LAGRANGE)."""
    return -t * (t - 1.0) * (t - 2.0) / 6.0 * x4[0] + (t + 1.0) * (t - 1.0) * (t - 2.0) / 2.0 * x4[1] - (t + 1.0) * t * (t - 2.0) / 2.0 * x4[2] + (t + 1.0) * t * (t - 1.0) / 6.0 * x4[3]


@njit(cache=True, inline="always", error_model="numpy")
def _paced(basis, lin_rows, x4, z, k, x_k, sub_slew, centre, half, knee):
    """Whether the exact step on f's identity part from grid point k (correction z, state x_k there) to
    the step's end keeps x there and within the slew limit at every grid point, not only at the end:
    the closed loop's own fast pole moves x far faster than x_lin while the correction decays, and a
    check of the end alone lets it jump across a slew reversal that falls inside the step."""
    N = basis.shape[0] - 1
    xp = x_k
    for m in range(1, N - k + 1):
        xn = _xs(basis, k + m, x4) + _dot(lin_rows, m, z, z.size)
        if _region(xn, centre, half, knee) != 0 or abs(xn - xp) > sub_slew:
            return False
        xp = xn
    return True


@njit(cache=True, inline="always", error_model="numpy")
def _piece(mom, ta, tb, da, db):
    """Add ∫σ^j·d dσ (j = 0, 1, 2) over [ta, tb] for d linear from da to db."""
    w = tb - ta
    mom[0] += w * (da + db) / 2.0
    mom[1] += w * (da * (2.0 * ta + tb) + db * (ta + 2.0 * tb)) / 6.0
    mom[2] += w * (da * (3.0 * ta * ta + 2.0 * ta * tb + tb * tb) + db * (ta * ta + 2.0 * ta * tb + 3.0 * tb * tb)) / 12.0


@njit(cache=True, error_model="numpy")
def _trbdf2(z0, d0, x0, ta, length, TP, Tr, Trho, GP, Gr, Grho, u, xi_index, x4, slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, mom, zp, zg, z_out):
    """TR-BDF2 over [ta, ta + L] (L = length/N steps; matrices of index ``length``): the trapezoidal
    rule to γ, then BDF2 through the start, γ and the end. Adds d's moments over the two pieces.

    returns : (x at the end, V_o at the end, x at γ, whether the slew limit acted)
    """
    N = Trho.size - 1
    step = length / N
    tg = ta + GAMMA * step
    tb = ta + step
    xg_lin = _cubic(tg, x4)
    xb_lin = _cubic(tb, x4)
    xg, vg, s1 = _step(z0, z0, TP[length], 1.0, 0.0, Tr[length], d0, u, Trho[length], xi_index, xg_lin, x0, GAMMA * step * slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, zp, zg)
    xb, vb, s2 = _step(
        zg, z0, GP[length], STAGE_1, STAGE_0, Gr[length], 0.0, u, Grho[length], xi_index, xb_lin, xg, (1.0 - GAMMA) * step * slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, zp, z_out
    )
    _piece(mom, ta, tg, d0, vg - xg_lin)
    _piece(mom, tg, tb, vg - xg_lin, vb - xb_lin)
    return xb, vb, xg, s1 or s2


@njit(cache=True, inline="always", error_model="numpy")
def _store(hist, h_x, h_xl1, h_xl2, h_vo1, h_p1, h_p2):
    hist[H_X] = h_x
    hist[H_XL1] = h_xl1
    hist[H_XL2] = h_xl2
    hist[H_VO1] = h_vo1
    hist[H_P1] = h_p1
    hist[H_P2] = h_p2


@njit(cache=True, error_model="numpy")
def run_steps(
    xl,
    start,
    loud,
    loud_base,
    oversample,
    rate,
    basis,
    basis_d,
    lin_at,
    lin_rest,
    lin_rows,
    lin_head,
    lin_tail,
    rail_at,
    rail_rest,
    rail_head_g,
    rail_tail_g,
    rail_head_x,
    rail_tail_x,
    scan_rows,
    scan_g,
    scan_x,
    rail_head_m,
    rail_tail_m,
    TP,
    Tr,
    Trho,
    GP,
    Gr,
    Grho,
    P2,
    r2,
    rho2,
    u,
    kc,
    d_row,
    beta_c,
    c_vec,
    d_o,
    a0,
    tau,
    xi_index,
    low,
    high,
    knee,
    clamp_lo,
    clamp_hi,
    slew_step,
    scale,
    tol,
    z,
    hist,
    out_c,
    out_vo,
):
    """Run the loop's steps over ``xl``; stop early, at an output-sample boundary, once it has decayed.

    xl : x_lin, V, shape (m + 1,), at the loop's rate ``rate`` (Hz): samples ``start`` … ``start`` + m;
        step j runs from sample start + j − 1 to start + j and needs sample start + j + 1 as well, so
        m steps are run
    start : int, the oversampled index of xl[0] (any origin; boundaries are where it is a multiple of R)
    loud : bool: output samples where x_lin may leave f's identity part, loud[k − loud_base] for
        output sample k = index // R
    the rest : the fields of :class:`Loop`
    z, hist : the carried state (changed in place)
    out_c : V, shape (R·m,): written with the correction to the kernel-weighted mean of x_lin
    out_vo : V, shape (R·m,): written with the op-amp output V_o
    returns : (steps run, steps with x outside f's identity part, steps with short steps, still active);
        out_c[j] is the correction for step start + j, which the chain places at sample start + j + 1
    """
    n = z.size
    N = basis.shape[0] - 1
    centre = 0.5 * (low + high)
    half = high - knee - centre
    gbw = xi_index >= 0
    ns = n - 1 if gbw else n  # the network's states (with gbw the op-amp's state is Z's last entry)
    dl = 1.0 / N
    sub_slew = slew_step * dl
    w_rail = c_vec if gbw else kc
    zp = np.empty(n)
    zn = np.empty(n)
    za = np.empty(n)
    zb = np.empty(n)
    zc = np.empty(n)
    zg = np.empty(n)
    x4 = np.empty(4)
    mom = np.zeros(3)
    mom2 = np.zeros(3)
    clipped = 0
    short = 0
    total = xl.size - 1
    h_x, h_xl1, h_xl2, h_vo1, h_p1, h_p2 = hist[H_X], hist[H_XL1], hist[H_XL2], hist[H_VO1], hist[H_P1], hist[H_P2]
    # the step's place among the output samples, counted rather than divided at every step:
    # start + i = R·k_out + phase, 0 ≤ phase < R (floor division, as Python's)
    phase = start % oversample
    k_out = start // oversample - loud_base
    for i in range(total):
        if phase == 0 and not loud[k_out]:
            small = abs(h_vo1 - h_xl1) < tol and abs(h_x - h_xl1) < tol
            if small:
                for j in range(n):
                    if abs(z[j]) * scale[j] >= tol:
                        small = False
                        break
            if small:
                for j in range(n):
                    z[j] = 0.0
                _store(hist, h_x, h_xl1, h_xl2, h_vo1, h_p1, h_p2)
                return i, clipped, short, False
        x_lin = xl[i]
        x4[0] = h_xl2
        x4[1] = h_xl1
        x4[2] = x_lin
        x4[3] = xl[i + 1]
        x_prev = h_x
        v_prev = h_vo1
        side = _region(x_prev, centre, half, knee)
        mom[0] = 0.0
        mom[1] = 0.0
        mom[2] = 0.0
        done = False
        x_a = x_prev
        v_a = v_prev
        if side == 0:
            # on f's identity part: the closed loop's exact step (no input: x_lin is in the linear solution)
            x_end = x_lin + _dot(lin_rows, N, z, n)
            if _region(x_end, centre, half, knee) == 0 and abs(x_end - x_prev) <= slew_step and (slew_step >= NO_SLEW or _paced(basis, lin_rows, x4, z, 0, x_prev, sub_slew, centre, half, knee)):
                _matvec(lin_at, N, z, zn)
                for j in range(3):
                    mom[j] = _dot3(lin_head, N, j, z)
                x_a = x_end
                v_a = x_end
                done = True
        elif side == 2 or side == -2:
            # at a rail: the network's exact step driven by d = rail − x_lin
            rail = high if side > 0 else low
            x_cl = clamp_hi if side > 0 else clamp_lo
            wz = _dot(scan_rows, N, z, ns) + rail * scan_g[N] + _xs(scan_x, N, x4)
            if _rail_holds(side, x_lin, rate * _xs(basis_d, N, x4), wz, rail, gbw, x_cl, tau, a0, d_o, beta_c, centre, half, knee):
                _rail_state(rail_at, rail_head_g, rail_head_x, N, z, rail, x4, zn, ns)
                if gbw:
                    zn[xi_index] = x_cl - x_lin
                    x_a = x_cl
                else:
                    x_a = _solve(x_lin + _vdot(kc, zn), beta_c, centre, half, knee)
                v_a = rail
                mom[0] = rail - _xs3(rail_head_m, N, 0, x4)
                mom[1] = rail / 2.0 - _xs3(rail_head_m, N, 1, x4)
                mom[2] = rail / 3.0 - _xs3(rail_head_m, N, 2, x4)
                done = True
        if not done:
            # the op-amp leaves a piece within this step, or starts on a knee: the exact step up to the
            # last grid point where it holds; on a knee TR-BDF2 over quarter steps (f smooth there);
            # short steps wherever a rail is reached or left (or the slew limit acts); the exact step
            # again from the first grid point where it holds to the end
            short += 1
            k = 0
            have_b = False
            for j in range(n):
                za[j] = z[j]
            x_a = x_prev
            v_a = v_prev
            if side == 2 or side == -2:
                rail = high if side > 0 else low
                x_cl = clamp_hi if side > 0 else clamp_lo
                # the last grid point where the rail still holds (it fails at the end): bisection
                lo_k = 0
                hi_k = N
                while hi_k - lo_k > 1:
                    kk = (lo_k + hi_k) // 2
                    wz = _dot(scan_rows, kk, z, ns) + rail * scan_g[kk] + _xs(scan_x, kk, x4)
                    if _rail_holds(side, _xs(basis, kk, x4), rate * _xs(basis_d, kk, x4), wz, rail, gbw, x_cl, tau, a0, d_o, beta_c, centre, half, knee):
                        lo_k = kk
                    else:
                        hi_k = kk
                k0 = lo_k
                if k0 > 0:
                    _rail_state(rail_at, rail_head_g, rail_head_x, k0, z, rail, x4, za, ns)
                    _rail_state(rail_at, rail_head_g, rail_head_x, k0 - 1, z, rail, x4, zb, ns)
                    have_b = True
                    t0 = k0 * dl
                    mom[0] = rail * t0 - _xs3(rail_head_m, k0, 0, x4)
                    mom[1] = rail * t0 * t0 / 2.0 - _xs3(rail_head_m, k0, 1, x4)
                    mom[2] = rail * t0 * t0 * t0 / 3.0 - _xs3(rail_head_m, k0, 2, x4)
                    if gbw:
                        za[xi_index] = x_cl - _xs(basis, k0, x4)
                        zb[xi_index] = x_cl - _xs(basis, k0 - 1, x4)
                        x_a = x_cl
                    else:
                        x_a = _solve(_xs(basis, k0, x4) + _vdot(kc, za), beta_c, centre, half, knee)
                    v_a = rail
                    k = k0
            elif side == 0:
                xk = x_prev
                if slew_step >= NO_SLEW:
                    # the last grid point still on the identity part (it is off at the end): bisection
                    lo_k = 0
                    hi_k = N
                    while hi_k - lo_k > 1:
                        kk = (lo_k + hi_k) // 2
                        xn = _xs(basis, kk, x4) + _dot(lin_rows, kk, z, n)
                        if _region(xn, centre, half, knee) == 0:
                            lo_k = kk
                            xk = xn
                        else:
                            hi_k = kk
                    k0 = lo_k
                else:
                    k0 = N - 1
                    for kk in range(1, N + 1):
                        xn = _xs(basis, kk, x4) + _dot(lin_rows, kk, z, n)
                        if _region(xn, centre, half, knee) != 0 or abs(xn - xk) > sub_slew:
                            k0 = kk - 1
                            break
                        xk = xn
                if k0 > 0:
                    _matvec(lin_at, k0, z, za)
                    _matvec(lin_at, k0 - 1, z, zb)
                    have_b = True
                    for j in range(3):
                        mom[j] = _dot3(lin_head, k0, j, z)
                    x_a = xk
                    v_a = xk
                    k = k0
            tried = 9
            va = v_a - _xs(basis, k, x4)  # d at the current grid point
            vo_end = v_a
            while k < N:
                ta = k * dl
                reg = _region(x_a, centre, half, knee)
                if reg == 1 or reg == -1:
                    # on a knee (f smooth): TR-BDF2 over as much as x_lin takes to move a quarter of the
                    # knee (at most the rest of the step), kept while it stays off the rails
                    dxl = abs(x4[2] - x4[1])
                    seg = N if 4.0 * dxl <= knee else max(1, int(knee * N / (4.0 * dxl)))
                    seg = min(seg, N - k)
                    mom2[0] = 0.0
                    mom2[1] = 0.0
                    mom2[2] = 0.0
                    x_e, v_e, x_g, sl = _trbdf2(za, va, x_a, ta, seg, TP, Tr, Trho, GP, Gr, Grho, u, xi_index, x4, slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, mom2, zp, zg, zc)
                    rg = _region(x_g, centre, half, knee)
                    re = _region(x_e, centre, half, knee)
                    if not sl and rg != 2 and rg != -2 and re != 2 and re != -2:
                        for j in range(3):
                            mom[j] += mom2[j]
                        for j in range(n):
                            za[j] = zc[j]
                        have_b = False
                        x_a = x_e
                        k += seg
                        vo_end = v_e
                        va = v_e - _xs(basis, k, x4)
                        tried = 9
                        continue
                # a short step
                xt = _xs(basis, k + 1, x4)
                if have_b:
                    x_a, vb, sl = _step(za, zb, P2, 2.0, -0.5, r2, 0.0, u, rho2, xi_index, xt, x_a, sub_slew, clamp_lo, clamp_hi, centre, half, knee, low, high, zp, zc)
                    vo_end = vb
                    vb -= xt
                    _piece(mom, ta, ta + dl, va, vb)
                else:
                    x_a, vb, x_g, sl = _trbdf2(za, va, x_a, ta, 1, TP, Tr, Trho, GP, Gr, Grho, u, xi_index, x4, slew_step, clamp_lo, clamp_hi, centre, half, knee, low, high, mom, zp, zg, zc)
                    vo_end = vb
                    vb -= xt
                va = vb
                for j in range(n):
                    zb[j] = za[j]
                    za[j] = zc[j]
                have_b = True
                k += 1
                if k == N:
                    break
                reg = _region(x_a, centre, half, knee)
                if reg == tried:
                    continue
                tried = reg
                if reg == 0:
                    x_end = x_lin + _dot(lin_rows, N - k, za, n)
                    if (
                        _region(x_end, centre, half, knee) == 0
                        and abs(x_end - x_a) <= slew_step * (N - k) * dl
                        and (slew_step >= NO_SLEW or _paced(basis, lin_rows, x4, za, k, x_a, sub_slew, centre, half, knee))
                    ):
                        for j in range(3):
                            mom[j] += _dot3(lin_tail, k, j, za)
                        _matvec(lin_rest, k, za, zc)
                        for j in range(n):
                            za[j] = zc[j]
                        x_a = x_end
                        vo_end = x_end
                        break
                elif reg == 2 or reg == -2:
                    rl = high if reg > 0 else low
                    xcl = clamp_hi if reg > 0 else clamp_lo
                    _rail_state(rail_rest, rail_tail_g, rail_tail_x, k, za, rl, x4, zc, ns)
                    if _rail_holds(reg, x_lin, rate * _xs(basis_d, N, x4), _vdot(w_rail, zc), rl, gbw, xcl, tau, a0, d_o, beta_c, centre, half, knee):
                        t0 = k * dl
                        mom[0] += rl * (1.0 - t0) - _xs3(rail_tail_m, k, 0, x4)
                        mom[1] += rl * (1.0 - t0 * t0) / 2.0 - _xs3(rail_tail_m, k, 1, x4)
                        mom[2] += rl * (1.0 - t0 * t0 * t0) / 3.0 - _xs3(rail_tail_m, k, 2, x4)
                        for j in range(n):
                            za[j] = zc[j]
                        if gbw:
                            za[xi_index] = xcl - x_lin
                            x_a = xcl
                        else:
                            x_a = _solve(x_lin + _vdot(kc, za), beta_c, centre, half, knee)
                        vo_end = rl
                        break
            for j in range(n):
                zn[j] = za[j]
            v_a = vo_end
        for j in range(n):
            z[j] = zn[j]
        # the output: V_o averaged with the quadratic B-spline kernel over the last three steps:
        # loop.KERNEL_TAPS, [-1, 3, 88, 88, 3, -1]/180, on x_lin's samples (the linear path) plus the exact average of d
        # (kernel pieces σ²/2, (1 + 2σ − 2σ²)/2 and (1 − σ)²/2 on the three steps, oldest first)
        m0 = mom[0]
        m1 = mom[1]
        m2 = mom[2]
        out_c[i] = h_p1 + 0.5 * (m0 - 2.0 * m1 + m2)
        h_p1 = h_p2 + 0.5 * (m0 + 2.0 * m1 - 2.0 * m2)
        h_p2 = 0.5 * m2
        out_vo[i] = v_a
        if abs(x_a - centre) > half or (slew_step < NO_SLEW and abs(x_a - h_x) >= slew_step * (1.0 - 1e-9)):
            clipped += 1  # limited: the output past a knee, or the state slewing at its limit
        h_x = x_a
        h_xl2 = h_xl1
        h_xl1 = x_lin
        h_vo1 = v_a
        phase += 1
        if phase == oversample:
            phase = 0
            k_out += 1
    _store(hist, h_x, h_xl1, h_xl2, h_vo1, h_p1, h_p2)
    return total, clipped, short, True
