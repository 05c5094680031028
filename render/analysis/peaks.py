"""The peaks of a response: every one above a stated prominence, the highest of them its resonance.

A peak is a local maximum of the level in dB on the fine log-frequency grid
of :mod:`render.analysis.figures` (5 Hz to 40 kHz, 0.4 % steps) whose
*prominence* is at least :data:`PROMINENCE_DB`, and whose frequency lies
from 1 kHz to 20 kHz. The prominence is the height of the peak above the
higher of the two lowest points that separate it from any higher part of
the response (the topographic definition that ``scipy.signal.find_peaks``
implements). Each peak is given as

- ``frequency_hz``: refined by a parabola through the three grid points
  around the maximum, in log frequency (as for the single peak before);
- ``height_db``: its level, dB re the level at 1 kHz;
- ``prominence_db``;
- ``q``: its frequency over the width between the two nearest points on
  either side where the level is 3 dB under the peak's (log-frequency
  interpolation). None, with a reason, when the peak is less than 3 dB
  above the 1 kHz level (the response need not fall 3 dB around it), when
  a -3 dB point lies outside the grid, or when the response rises above the
  peak's own level anywhere between its two -3 dB points (:data:`Q_HIGHER`):
  a hump on the flank of a higher one, whose "width" would be mostly the
  other's, so that its Q would jump as the two merge or part. For a
  second-order band-pass resonance this is exactly its Q (the half-power
  bandwidth is f0/Q: Horowitz & Hill, *The Art of Electronics*, 3rd ed.,
  2015, §1.7.14).

Peaks are listed highest first. The resonance (``peak_hz``, ``peak_db`` and
``q``: the figures ``check``, ``summary.md`` and the JSON print) is the
first listed peak, its frequency, height and Q exactly: a hump under the
prominence cut never moves it. When two humps of near-equal height trade
places, the resonance moves from one to the other; the list shows both.
The threshold is our choice (common practice, no source).

``render fit``'s peak aim reads :func:`aimed_peak_hz` instead, which moves
continuously as humps trade places or rise out of one another: a weighted
geometric mean of every local maximum's frequency, the weights falling to
zero 1 dB below the highest listed peak and for maxima with less than 0.5 dB
of depth (see the function). Where one peak stands 1 dB clear, it is that
peak's frequency exactly.
"""

from __future__ import annotations

import numpy as np

from . import undefined as U

PROMINENCE_DB = 0.5  # smallest prominence reported as a peak (common practice, no source)
BAND_HZ = (1000.0, 20000.0)  # where peaks are looked for
Q_MIN_HEIGHT_DB = 3.0  # a peak under this height re 1 kHz gets no Q
BLEND_DB = 1.0  # peaks within this of the highest share fit's peak aim (common practice, no source)

NO_PEAK = U.NO_PEAK_IN_BAND  # worded for PROMINENCE_DB and BAND_HZ
Q_LOW = "less than 3 dB above the 1 kHz level, so no -3 dB width around it"
Q_EDGES = "a -3 dB point lies outside 5 Hz to 40 kHz"
Q_HIGHER = U.Q_SPANS_HIGHER


def _refine(h_db: np.ndarray, f: np.ndarray, k: int) -> tuple[float, float]:
    """(frequency Hz, level dB) of the parabola through grid points k-1, k, k+1 in log f."""
    if k <= 0 or k >= len(f) - 1:
        return float(f[k]), float(h_db[k])
    ya, yb, yc = h_db[k - 1], h_db[k], h_db[k + 1]
    denom = ya - 2 * yb + yc
    off = 0.5 * (ya - yc) / denom if abs(denom) > 1e-12 else 0.0
    off = min(max(off, -0.5), 0.5)
    step = np.log(f[1] / f[0])
    return float(f[k] * np.exp(off * step)), float(yb - 0.25 * (ya - yc) * off)


def _crossing(f, y, i, j) -> float:
    """Log-frequency where y (re the level) crosses zero between grid indices i and j."""
    t = -y[i] / (y[j] - y[i]) if y[j] != y[i] else 0.0
    return float(np.exp(np.log(f[i]) + t * (np.log(f[j]) - np.log(f[i]))))


def peak_q(h_db: np.ndarray, f: np.ndarray, k: int, level_db: float, frequency_hz: float) -> tuple[float | None, str | None]:
    """(Q, None) of the peak at grid index ``k`` (refined ``level_db``, ``frequency_hz``): f over its -3 dB width;
    (None, the reason) when a -3 dB point is off the grid (:data:`Q_EDGES`) or the response rises above the peak's
    level between them (:data:`Q_HIGHER`)."""
    y = h_db - (level_db - 3.0)
    left = np.flatnonzero(y[:k] < 0)
    right = np.flatnonzero(y[k:] < 0)
    if not (left.size and right.size):
        return None, Q_EDGES
    il, ir = int(left[-1]), k + int(right[0])
    if np.max(h_db[il : ir + 1]) > h_db[k]:  # a higher part of the response inside the width: not this peak's own
        return None, Q_HIGHER
    return frequency_hz / (_crossing(f, y, ir - 1, ir) - _crossing(f, y, il, il + 1)), None


def response_peaks(h_db: np.ndarray, f: np.ndarray, *, level_1k_db: float) -> tuple[list[dict], float, float]:
    """The peaks of one response and its resonance (the highest of them).

    Parameters
    ----------
    h_db : np.ndarray [shape=(F,)], dB
        Level on the log-spaced grid ``f``.
    f : np.ndarray [shape=(F,)], Hz
    level_1k_db : float, dB
        The level at 1 kHz, which heights are given against.

    Returns
    -------
    (peaks, peak_hz, peak_db)
        ``peaks``: dicts (``frequency_hz``, ``height_db``, ``prominence_db``,
        ``q`` and, when ``q`` is None, ``q_reason``), highest first;
        ``peak_hz`` (Hz) and ``peak_db`` (dB re 1 kHz): the first peak's
        frequency and height; both NaN when there is no peak.
    """
    from scipy.signal import find_peaks

    h_db = np.asarray(h_db, float)
    if not np.all(np.isfinite(h_db)):
        return [], float("nan"), float("nan")
    idx, props = find_peaks(h_db, prominence=0.0)
    cands = []
    for k, prom in zip(idx.tolist(), props["prominences"].tolist()):
        fk, lk = _refine(h_db, f, k)
        if BAND_HZ[0] <= fk <= BAND_HZ[1] and prom > 1e-6:
            cands.append((k, fk, lk, prom))
    shown = [c for c in cands if c[3] >= PROMINENCE_DB]
    if not shown:
        return [], float("nan"), float("nan")
    peaks = []
    for k, fk, lk, prom in sorted(shown, key=lambda c: -c[2]):
        height = lk - level_1k_db
        p: dict = {"frequency_hz": fk, "height_db": float(height), "prominence_db": float(prom)}
        q, why = peak_q(h_db, f, k, lk, fk) if height >= Q_MIN_HEIGHT_DB else (None, Q_LOW)
        p["q"] = q
        if q is None:
            p["q_reason"] = why
        peaks.append(p)
    return peaks, peaks[0]["frequency_hz"], peaks[0]["height_db"]


def describe_peaks(fig: dict, *, q: bool = True, unit: str = " dB") -> str:
    """The peaks of a figures record in words, or the reason there is none.

    One peak: ``"peak 4066 Hz, +4.94 dB, Q 1.47"``; several: ``"peaks 4702 Hz,
    +5.10 dB, Q 2.10; 5301 Hz, …"`` (highest first: the first is the
    resonance). A peak under 3 dB re 1 kHz also gives its prominence (a peak
    near 1 kHz reads about +0.00 dB); a peak with no Q says why in words after its height.
    """
    peaks = fig.get("peaks")
    if not peaks:
        return U.reason(fig, "peak_hz", NO_PEAK)
    parts = []
    for p in peaks:
        text = f"{p['frequency_hz']:.0f} Hz, {p['height_db']:+.2f}{unit}"
        if p["height_db"] < Q_MIN_HEIGHT_DB and "prominence_db" in p:
            # a peak near the 1 kHz level reads about +0.00 dB: its prominence says it is a real hump
            text += f" (prominence {p['prominence_db']:.2f} dB)"
        if q:
            text += f", Q {p['q']:.2f}" if p["q"] is not None else f", no Q ({p['q_reason']})"
        parts.append(text)
    return ("peak " if len(parts) == 1 else "peaks ") + "; ".join(parts)


def aimed_peak_hz(h_db: np.ndarray, f: np.ndarray, *, peaks: list[dict], level_1k_db: float) -> float | None:
    """The frequency ``render fit``'s peak aim sees (Hz), or None without a listed peak.

    Parameters
    ----------
    h_db : np.ndarray [shape=(F,)], dB, the level on the log-spaced grid ``f``
    f : np.ndarray [shape=(F,)], Hz
    peaks : list of dict, the listed peaks (:func:`response_peaks`), highest first
    level_1k_db : float, dB, the level their heights are given against

    Every local maximum from 1 to 20 kHz takes part, listed or not, with the
    weight w = max(0, 1 − (top − height)/BLEND_DB)·min(1, depth/PROMINENCE_DB):
    ``top`` the highest listed peak's level, ``depth`` the maximum's height
    above the higher of the lowest points between it and its neighbouring
    maxima (the grid's ends where it has none). The aim is exp(Σ w·ln f / Σ w).
    Heights and depths vary continuously with the parts, and a maximum that
    appears or vanishes does so with zero depth, so the aim moves continuously,
    whichever of two humps is the higher; the depth, unlike the prominence,
    does not depend on which of them that is. Where only one maximum has
    weight (every other 1 dB or more below), the aim is its frequency exactly.
    """
    if not peaks:
        return None
    from scipy.signal import find_peaks

    h_db = np.asarray(h_db, float)
    idx = find_peaks(h_db)[0]
    if idx.size == 0:
        return float(peaks[0]["frequency_hz"])
    top = peaks[0]["height_db"] + level_1k_db
    bounds = np.concatenate([[0], idx, [h_db.size - 1]])
    freqs, weights = [], []
    for n, k in enumerate(idx):
        fk, lk = _refine(h_db, f, int(k))
        if not BAND_HZ[0] <= fk <= BAND_HZ[1]:
            continue
        left = h_db[bounds[n] : k + 1].min()
        right = h_db[k : bounds[n + 2] + 1].min()
        depth = lk - max(left, right)
        w = max(0.0, 1.0 - max(top - lk, 0.0) / BLEND_DB) * min(1.0, depth / PROMINENCE_DB)
        if w > 0:
            freqs.append(fk)
            weights.append(w)
    if not weights:
        return float(peaks[0]["frequency_hz"])
    if len(weights) == 1:  # one maximum alone: its frequency exactly
        return float(freqs[0])
    w = np.array(weights)
    return float(np.exp(np.sum(w * np.log(freqs)) / np.sum(w)))
