"""The figures a designer reads, one definition everywhere.

``check``, ``response``, the clips' JSON and ``fit`` all take their numbers
from :func:`figures`, computed from the small-signal response H(f) from
string velocity (the same at both sensing points) to the amp input:

- ``level_1k_db``: 20·log10|H(1 kHz)|, dB re 1 V per m/s.
- ``peaks``: every peak from 1 kHz to 20 kHz with a prominence of 0.5 dB or
  more, highest first (frequency, height re ``level_1k_db``, prominence, Q:
  :mod:`render.analysis.peaks`); an empty list when there is none.
- ``peak_hz``, ``peak_db``: the highest listed peak's frequency and height
  (dB re ``level_1k_db``), exactly as ``peaks[0]`` gives them
  (:mod:`render.analysis.peaks`); None with a reason when there is no peak.
  ``resonance_hz`` and ``resonance_db`` are the same two figures.
- ``q``: the highest peak's frequency over the width between the −3 dB
  points (re the peak) around it; None when ``peak_db`` < 3 dB, or when the
  response rises above the peak between those points (a higher hump below
  1 kHz or above 20 kHz).
- ``bass_corner_hz``: the highest frequency below 1 kHz where |H| is 3 dB
  under ``level_1k_db``; ``treble_corner_hz``: the highest frequency up to
  20 kHz, above ``peak_hz`` (above 1 kHz when there is no peak), where |H|
  falls through 3 dB under ``level_1k_db`` (its last downward crossing), None
  when it does not or climbs back within 3 dB by 20 kHz ("beyond 20 kHz").
  ``treble_dip_hz``: where the response first fell 3 dB under, when that is
  below the treble corner (it dips and recovers, e.g. between two humps);
  None otherwise.
- ``gain_vs_passive_db``: ``level_1k_db`` minus the passive reference's.
- ``hum_rejection_db``: 20·log10(max(|V_A|, |V_B|)/|V_A + V_B|) at the
  mains fundamental, V_A and V_B the hum at the amp input from each coil's
  hum EMF alone (from the rig's hum sources in space when it has them,
  :mod:`render.magnetics.pickup`). A room without hum at the fundamental
  (a field profile or sources that lack it) is quoted at its lowest harmonic
  with hum, the rule of ``render hum`` (:func:`render.analysis.hum_harmonics.quoted_harmonic`);
  ``hum_rejection_harmonic`` names it (1 for the fundamental).
- ``headroom_v``: the smaller of ``headroom_up_v`` and ``headroom_down_v``.
- ``cable_loss_db``: |H(5 kHz)| without the cable minus with it, in dB.

A figure with no finite value is None with a sibling ``<name>_reason``
(:mod:`render.analysis.undefined`): no Q below a 3 dB peak, no corner in
range, an infinite rejection where the coils' hum cancels exactly (to
rounding, :data:`REJECTION_CAP_DB`), and every response figure when the two
coils cancel the string signal exactly (a coil wired in reverse).

Everything is vectorised over the N designs of one
:class:`~render.circuit.engine.Responses`.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from . import undefined as U
from .peaks import NO_PEAK, Q_HIGHER
from .undefined import REJECTION_CAP_DB  # the one rule for exact cancellation lives there

F_LO, F_HI = 5.0, 40000.0
GRID_POINTS = 1600  # log-spaced; 0.4 % steps, then refined by interpolation


def rejection_db(va, vb) -> np.ndarray:
    """20·log10(max(|V_A|, |V_B|) / |V_A + V_B|), capped at REJECTION_CAP_DB (any shapes, broadcast)."""
    big = np.maximum(np.abs(va), np.abs(vb))
    with np.errstate(divide="ignore", invalid="ignore"):
        return 20 * np.log10(big / np.maximum(np.abs(va + vb), big * 10 ** (-REJECTION_CAP_DB / 20)))


def coil_hum(resp, frequency_hz):
    """(V_A, V_B): the hum at the amp input per T/s of dB/dt from each coil's hum EMF alone, shape (N, F)."""
    return resp.hum_a[:, None] * resp.from_a()(frequency_hz), resp.hum_b[:, None] * resp.from_b()(frequency_hz)


def signal_cancels(resp, frequency_hz) -> tuple[np.ndarray, np.ndarray]:
    """(active, passive), each shape (N,): whether the two coils cancel the string signal exactly.

    Exactly means to rounding, as for the hum: at every frequency the sum of
    the two coils' parts is under 10^(-REJECTION_CAP_DB/20) of the larger part.
    """
    f = np.asarray(frequency_hz, float)
    zero = np.zeros(resp.n)
    a, b = resp.sig_a[:, None] * resp.from_a()(f), resp.sig_b[:, None] * resp.from_b()(f)
    pa, pb = resp.passive_mix(resp.sig_a, zero)(f), resp.passive_mix(zero, resp.sig_b)(f)

    def cancel(x, y):
        big = np.maximum(np.abs(x), np.abs(y))
        return np.all(np.abs(x + y) <= big * 10 ** (-REJECTION_CAP_DB / 20), axis=1)

    return cancel(a, b), cancel(pa, pb)


def silence(designs, resp, frequency_hz) -> tuple[list[str | None], list[str | None]]:
    """Why each design gives no signal at the amp input, (active, passive), None where it gives one.

    The volume at 0 (``rig.volume = 0``, decided by the setting: the circuit keeps the pot's end-stop
    resistor, :data:`render.circuit.rig.MIN_R`, so a level computed through it would be a number without
    meaning), or the two coils cancelling the string signal exactly (:func:`signal_cancels`)."""
    silent, passive_silent = signal_cancels(resp, frequency_hz)
    off = [d.rig.volume == 0 for d in designs]
    active = [U.VOLUME_ZERO if o else U.NO_SIGNAL if s else None for o, s in zip(off, silent)]
    passive = [U.VOLUME_ZERO if o else U.PASSIVE_NO_SIGNAL if s else None for o, s in zip(off, passive_silent)]
    return active, passive


def grid(points: int = GRID_POINTS) -> np.ndarray:
    return np.geomspace(F_LO, F_HI, points)


def db(h) -> np.ndarray:
    return 20.0 * np.log10(np.maximum(np.abs(h), 1e-300))


def _crossing(f: np.ndarray, y: np.ndarray, i: np.ndarray, j: np.ndarray, level: np.ndarray) -> np.ndarray:
    """Frequency where y crosses ``level`` between grid indices i and j (log-f interpolation)."""
    rows = np.arange(y.shape[0])
    y0, y1 = y[rows, i], y[rows, j]
    t = np.where(y1 != y0, (level - y0) / (y1 - y0), 0.0)
    lf = np.log(f[i]) + t * (np.log(f[j]) - np.log(f[i]))
    return np.exp(lf)


def _first_below(mask: np.ndarray) -> np.ndarray:
    """Index of the first True along axis 1, or -1."""
    idx = np.argmax(mask, axis=1)
    return np.where(mask.any(axis=1), idx, -1)


def response_figures(h_db: np.ndarray, f: np.ndarray) -> dict[str, Any]:
    """Peak, Q and corners from sampled levels ``h_db`` (N, F) on grid ``f`` (F,)."""
    n = h_db.shape[0]
    i1k = int(np.argmin(np.abs(np.log(f / 1000.0))))
    lvl = np.array([np.interp(0.0, np.log(f[i1k - 1 : i1k + 2] / 1000.0), r[i1k - 1 : i1k + 2]) for r in h_db])
    # every peak above the stated prominence; the resonance is the highest of them, with its Q
    from .peaks import aimed_peak_hz, response_peaks

    found = [response_peaks(h_db[r], f, level_1k_db=lvl[r]) for r in range(n)]
    aimed = np.array([np.nan if (a := aimed_peak_hz(h_db[r], f, peaks=found[r][0], level_1k_db=lvl[r])) is None else a for r in range(n)])
    peak_hz = np.array([x[1] for x in found])
    peak_db = np.array([x[2] for x in found])
    q = np.array([np.nan if not x[0] or x[0][0]["q"] is None else x[0][0]["q"] for x in found])

    # bass corner: highest f below 1 kHz with |H| 3 dB under level_1k
    below = h_db[:, :i1k] < (lvl[:, None] - 3.0)
    rev = below[:, ::-1]
    jr = _first_below(rev)
    bass = np.full(n, np.nan)
    ok = jr >= 0
    jj = i1k - 1 - jr  # grid index of the first point under the level, going down
    bass[ok] = _crossing(f, h_db[ok], jj[ok], jj[ok] + 1, lvl[ok] - 3.0)

    # treble corner: the last downward crossing of level_1k - 3 dB above peak_hz, up to 20 kHz, with the response
    # still under at 20 kHz; a first crossing below it is a dip the response recovers from
    treble, dip = np.full(n, np.nan), np.full(n, np.nan)
    top = int(np.searchsorted(f, 20000.0))
    for r in range(n):
        first = int(np.searchsorted(f, peak_hz[r] if np.isfinite(peak_hz[r]) else 1000.0))
        under = h_db[r, first - 1 :] < lvl[r] - 3.0
        down = first + np.flatnonzero(under[1:] & ~under[:-1])  # grid index just past each downward crossing
        cross = [_crossing(f, h_db[r : r + 1], np.array([j - 1]), np.array([j]), np.array([lvl[r] - 3.0]))[0] for j in down]
        in_band = [fc for fc in cross if fc <= 20000.0]
        if not in_band:
            continue
        still_under = bool(np.all(h_db[r, int(np.searchsorted(f, in_band[-1])) : top + 1] < lvl[r] - 3.0))
        if still_under:
            treble[r] = in_band[-1]
        if in_band[0] < in_band[-1] or not still_under:
            dip[r] = in_band[0]
    return {
        "level_1k_db": lvl,
        "peak_hz": peak_hz,
        "peak_db": peak_db,
        "q": q,
        "bass_corner_hz": bass,
        "treble_corner_hz": treble,
        "treble_dip_hz": dip,
        "peaks": [x[0] for x in found],
        "aimed_peak_hz": aimed,
    }


def hum_rejection_db(resp, frequency_hz) -> np.ndarray:
    """Rejection (dB) at ``frequency_hz`` (scalar or shape (N,)) for each design.

    20·log10(max(|V_A|, |V_B|)/|V_A + V_B|), V_A the hum at the amp input
    from coil_a's hum EMF alone (coil_b's set to zero, circuit unchanged).
    """
    f = np.broadcast_to(np.asarray(frequency_hz, float), (resp.n,))
    out = np.empty(resp.n)
    for fv in np.unique(f):
        sel = f == fv
        out[sel] = rejection_db(*coil_hum(resp, fv))[sel, 0]
    return out


def _quoted_rejection(designs, resp) -> tuple[np.ndarray, list[int | None], list[str | None]]:
    """Each design's rejection (dB) at the harmonic it quotes, that harmonic (1-based), and why there is none.

    The harmonic is the lowest with hum in the design's room (:func:`render.analysis.hum_harmonics.quoted_harmonic`,
    the rule of ``render hum``): the fundamental unless its field or every source lacks it. Where no
    harmonic has hum the harmonic is None and the reason is given.
    """
    from .hum_harmonics import quoted_for

    at, emf = zip(*(quoted_for(d) for d in designs)) if designs else ((), ())  # emf: (2, H) each, with sources in space
    freq = np.array([d.hum.mains * (1 + (k or 0)) for d, k in zip(designs, at)])
    rej = hum_rejection_db(resp, freq)
    no_hum: list[str | None] = [None if k is not None else U.NOTHING_LINKS for k in at]
    for i, e in enumerate(emf):
        if e is not None and at[i] is not None:  # sources in space: each coil's own EMF at the quoted harmonic
            ek = e[:, at[i]]
            rej[i] = rejection_db(resp.from_a()(freq[i])[i, 0] * ek[0], resp.from_b()(freq[i])[i, 0] * ek[1])
    return rej, [None if k is None else k + 1 for k in at], no_hum


def figures(designs, *, resp=None, resp_no_cable=None) -> list[dict]:
    """The one-number figures of each design (its rig applied), as plain dicts.

    Parameters
    ----------
    designs : sequence of Design
    resp, resp_no_cable : keyword-only, internal
        The designs' responses already computed (with and without the cable), reused by render's own
        callers; leave them out.

    Returns
    -------
    list of dict
        One per design, in order; among its keys: ``level_1k_db`` (dB re 1 V per m/s); the resonance
        ``peak_hz`` (Hz), ``peak_db`` (dB above ``level_1k_db``, as ``render check`` prints it) and ``q``;
        ``bass_corner_hz`` and ``treble_corner_hz`` (Hz); ``gain_vs_passive_db`` (dB, ``level_1k_db`` minus the
        passive reference's); ``hum_rejection_db`` (dB, at the mains fundamental, or at the lowest harmonic
        with hum when the room has none there) and ``hum_rejection_harmonic`` (that harmonic, 1 for the
        fundamental; None where no harmonic has hum); ``bias_v``,
        ``headroom_up_v``, ``headroom_down_v`` and ``headroom_v`` (V); ``cable_loss_db``, the cable's loss at 5 kHz (dB);
        ``output_impedance_1k_ohm`` and ``output_impedance_10k_ohm`` (Ω); and ``passive``, the same
        response figures of the design's passive reference. An undefined figure is None, with the
        reason in words under its key plus ``_reason`` (``peak_hz_reason``).
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs, without_cable

    designs = list(designs)
    p = from_designs(designs)
    resp = resp or responses(p)
    resp_nc = resp_no_cable or responses(without_cable(p, designs))
    f = grid()
    vel, pvel = resp.velocity(), resp.passive_velocity()
    with np.errstate(divide="ignore", invalid="ignore"):  # a silent response's figures are replaced by reasons below
        fig = response_figures(db(vel(f)), f)
        pfig = response_figures(db(pvel(f)), f)
    rej, quoted, no_hum = _quoted_rejection(designs, resp)
    h5 = np.abs(vel(5000.0)[:, 0])
    h5nc = np.abs(resp_nc.velocity()(5000.0)[:, 0])
    hp5 = np.abs(pvel(5000.0)[:, 0])
    hp5nc = np.abs(resp_nc.passive_velocity()(5000.0)[:, 0])
    zo = resp.z_out([1000.0, 10000.0])
    zp = resp.z_out_passive([1000.0, 10000.0])
    why_silent, why_passive_silent = silence(designs, resp, f)
    silent = [w is not None for w in why_silent]
    passive_silent = [w is not None for w in why_passive_silent]
    out = []
    for i, d in enumerate(designs):
        no_signal, no_passive_signal = why_silent[i] or U.NO_SIGNAL, why_passive_silent[i] or U.PASSIVE_NO_SIGNAL
        row = _response_row(fig, i, silent[i], no_signal)
        if silent[i]:
            U.mark(row, "gain_vs_passive_db", no_signal)
        elif passive_silent[i]:
            U.mark(row, "gain_vs_passive_db", no_passive_signal)
        else:
            U.put(row, "gain_vs_passive_db", fig["level_1k_db"][i] - pfig["level_1k_db"][i], U.NO_SIGNAL)
        if no_hum[i] is not None:
            U.mark(row, "hum_rejection_db", str(no_hum[i]))
        elif rej[i] >= REJECTION_CAP_DB:
            U.mark(row, "hum_rejection_db", U.HUM_CANCELS)
        else:
            U.put(row, "hum_rejection_db", rej[i], U.HUM_CANCELS)
        row["hum_rejection_harmonic"] = quoted[i]
        row["bias_v"] = d.bias_v
        row["headroom_up_v"] = d.headroom_up_v
        row["headroom_down_v"] = d.headroom_down_v
        row["headroom_v"] = min(d.headroom_up_v, d.headroom_down_v)
        _cable_loss(row, h5nc[i], h5[i], silent[i], no_signal)
        row["output_impedance_1k_ohm"] = float(abs(zo[i, 0]))
        row["output_impedance_10k_ohm"] = float(abs(zo[i, 1]))
        row["passive"] = _response_row(pfig, i, passive_silent[i], no_passive_signal, resonance=False)
        _cable_loss(row["passive"], hp5nc[i], hp5[i], passive_silent[i], no_passive_signal)
        row["passive"]["output_impedance_1k_ohm"] = float(abs(zp[i, 0]))
        row["passive"]["output_impedance_10k_ohm"] = float(abs(zp[i, 1]))
        out.append(row)
    return out


RESPONSE_KEYS = ("level_1k_db", "peak_hz", "peak_db", "q", "bass_corner_hz", "treble_corner_hz", "treble_dip_hz")


def _response_row(fig: dict, i: int, silent: bool, silent_reason: str, *, resonance: bool = True) -> dict:
    """The response figures of design i, with a reason beside each None."""
    row: dict = {}
    for k in RESPONSE_KEYS:
        if silent:
            U.mark(row, k, silent_reason)
        elif k == "q":
            first = fig["peaks"][i][0] if fig["peaks"][i] else {}
            spans = first.get("q_reason") == Q_HIGHER  # the highest listed peak's width takes in a higher part outside the band
            U.put(row, k, fig[k][i], NO_PEAK if not np.isfinite(fig["peak_db"][i]) else Q_HIGHER if spans else U.PEAK_EDGES if fig["peak_db"][i] >= 3.0 else U.NO_PEAK)
        elif k in ("peak_hz", "peak_db"):
            U.put(row, k, fig[k][i], NO_PEAK)
        else:
            U.put(row, k, fig[k][i], {"bass_corner_hz": U.NO_BASS_CORNER, "treble_corner_hz": U.NO_TREBLE_CORNER, "treble_dip_hz": U.NO_TREBLE_DIP}.get(k, silent_reason))
    row["peaks"] = [] if silent else fig["peaks"][i]
    if resonance:  # the frequency a peak aim of render fit scores (render.analysis.peaks.aimed_peak_hz)
        U.put(row, "aimed_peak_hz", np.nan if silent else fig["aimed_peak_hz"][i], silent_reason if silent else NO_PEAK)
    if resonance:
        for new, old in (("resonance_hz", "peak_hz"), ("resonance_db", "peak_db")):
            U.put(row, new, row[old], U.reason(row, old))
    return row


def _cable_loss(row: dict, without_cable: float, with_cable: float, silent: bool, silent_reason: str) -> None:
    if silent or not (with_cable > 0 and without_cable > 0):
        U.mark(row, "cable_loss_db", silent_reason)
    else:
        U.put(row, "cable_loss_db", 20 * np.log10(without_cable / with_cable), silent_reason)


def pole_resonance(rational, i: int = 0, f_max: float = 20000.0):
    """The most resonant complex pole pair below ``f_max``: (f0 Hz, Q) or (None, None).

    For a pole pair p, f0 = |p|/(2π) and Q = |p| / (2·|Re p|) (circuit theory).
    """
    _, p, _ = rational.zpk(i)
    cand = [(abs(x) / (2 * np.pi), abs(x) / (2 * abs(x.real))) for x in p if x.imag > 0 and abs(x) / (2 * np.pi) < f_max]
    if not cand:
        return None, None
    return max(cand, key=lambda c: c[1])
