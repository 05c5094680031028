"""Headroom for what is played: how far a render's op-amp swing stays from the limit.

The op-amp output is the identity on [low + knee, high − knee] (the *onset*
of the soft limit, :mod:`render.chain.limit`); from the bias point V_b the
room to the onset is

    onset_up = (high − knee) − V_b,        onset_down = V_b − (low + knee).

A render records x_lin, the op-amp's *linear* output (bias, string and hum,
what the op-amp would swing with no limit; at the loop's own rate around
each block's extremes, :class:`render.chain.stream.Renderer`). Its largest
excursions from the bias are e_up = max x_lin − V_b and e_down = V_b − min x_lin,
and the margin on each side is

    margin = 20·log10(onset / e)   dB,

positive while the phrase stays inside the identity part, negative by as
much as it went past the onset. Where the bias itself lies inside a knee
(onset ≤ 0 on that side: only a divider swept off centre does this, the
loader refuses such a design) the output stage is on that knee with no
signal at all: that side is *limited at rest*, its margin has no value (the
log of zero room), the limit is reached at a pluck of 0, and any render
counts as limited while it rests there. Everything before the limit is linear, so
playing the phrase g dB louder moves every excursion up by g dB: the limit is
reached g = min(margin_up, margin_down) dB above the phrase. A phrase's
plucks set the string's initial displacement, and the string's velocity (so
every coil EMF) is linear in it (modal synthesis, :mod:`render.dry.modal`).
The hum does not grow with the plucks, so the render also keeps the largest
excursions of x_lin's two parts apart, the string's S and the hum's H (each
side). Played with every pluck scaled by k, the swing is at most k·S + H (the
hum's peak falling on the string's), so the limit can be reached once

    k·S + H = onset,    k = (onset − H) / S,

and the phrase's strongest pluck s is then k·s (mm), k the smaller of the two
sides'. That k does not depend on how hard the phrase was played, even where
the hum is most of the swing (a phrase played at a few nanometres). Where
H ≥ onset the hum alone reaches the limit (:data:`HUM_ALONE`): k = 0. The dB
above the phrase is 20·log10(k); with a hum of millivolts against volts of
room it is the smaller margin to within a few thousandths of a dB.

A design with a ``[construction]`` senses the string through a field that is
not linear in its displacement, so there the prediction above is only a
first step: :mod:`render.runs.limit_strength` renders the phrase at scaled
strength and finds s* where the margin is zero (``searched``).

The share of time limited is the render's own count (oversampled steps with
the output stage on a knee or a rail); it is printed without rounding to
zero (:func:`format_share`).

No I/O; the numbers in, a frozen result out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from . import undefined as U

NO_EXCURSION = "the op-amp output never leaves its bias point on this side"
NO_STRING = "the strings move the op-amp output not at all (the two coils cancel them), so no pluck reaches the limit; only the hum swings it"
NO_STRING_CELL = "no string signal"  # a table cell
AT_REST = "limited at rest: the bias lies inside the soft limit's knee on this side, so the output stage is on its knee with no signal"
AT_REST_CELL, AT_REST_MARGIN_CELL = "at rest", "limited at rest"  # table cells: a strength, a margin
NO_PLUCK = "what was played is not a phrase (no pluck strength to scale)"
NOT_FOUND = "not found by rendering at scaled strength: the margin stops falling as the plucks grow (the strings leave the construction's computed flux range)"
HUM_ALONE = "the hum alone reaches the limit's onset, with no string signal at all"
HUM_ALONE_CELL = "hum alone"  # a table cell
LEFT_RANGE = "not found by rendering at scaled strength: the strings swing past the construction's computed flux range before the op-amp output reaches the limit, so no strength there is claimed"


def margin_db(onset_v: float, excursion_v: float) -> float | None:
    """20·log10(onset / excursion), dB; None when the excursion is zero or the onset is not positive (limited at rest)."""
    if excursion_v <= 0 or onset_v <= 0:
        return None
    return 20.0 * math.log10(onset_v / excursion_v)


@dataclass(frozen=True)
class PlayedHeadroom:
    """Headroom of one render.

    Attributes
    ----------
    onset_up_v, onset_down_v : float, V
        From the bias point to the soft limit's onset, above and below.
    excursion_up_v, excursion_down_v : float, V, ≥ 0
        The largest linear excursion of the op-amp output from the bias, each side.
    margin_up_db, margin_down_db : float or None, dB
        20·log10(onset / excursion) each side (negative: past the onset); None with no excursion.
    limited_fraction : float, 0..1
        Share of the render's oversampled steps with the output stage limited.
    strongest_pluck_m : float or None, m
        The phrase's strongest pluck (None for a recording or a bare signal).
    searched : bool
        The sensing is not linear in the pluck (a ``[construction]``), so where the limit is reached was
        found by renders at scaled strength (:mod:`render.runs.limit_strength`), not from the margin.
    searched_strength_m : float or None, m
        That strongest pluck (None: not found).
    searched_margin_db : float or None, dB
        The smaller margin of the render at ``searched_strength_m`` (near 0).
    searched_renders : int
    searched_reason : str or None
        Why ``searched_strength_m`` is None (:data:`NOT_FOUND` or :data:`LEFT_RANGE`).
    searched_range_edge_m : float or None, m
        The strongest pluck whose strings stay inside the construction's computed flux range.
    string_up_v, string_down_v : float or None, V, ≥ 0
        The largest excursion each side of x_lin's string part alone (what scales with the pluck);
        None: not known (then the whole excursion is taken to scale, as in a record from before they were kept).
    hum_up_v, hum_down_v : float, V, ≥ 0
        The largest excursion each side of x_lin's hum part alone (what does not).
    nonlinear : bool
        The design's sensing is not linear in the pluck (a ``[construction]``): unless ``searched``,
        the strengths at the limit are a linear guess (``limit_strength_method`` "linear-guess").
    """

    onset_up_v: float
    onset_down_v: float
    excursion_up_v: float
    excursion_down_v: float
    margin_up_db: float | None
    margin_down_db: float | None
    limited_fraction: float
    strongest_pluck_m: float | None = None
    searched: bool = False
    searched_strength_m: float | None = None
    searched_margin_db: float | None = None
    searched_renders: int = 0
    nonlinear: bool = False
    searched_reason: str | None = None
    searched_range_edge_m: float | None = None
    string_up_v: float | None = None
    string_down_v: float | None = None
    hum_up_v: float = 0.0
    hum_down_v: float = 0.0

    def at_rest(self, side: str | None = None) -> bool:
        """Whether the bias lies inside the knee on ``side`` ("up", "down"; None: either), so that side is limited at rest."""
        return (side != "down" and self.onset_up_v <= 0) or (side != "up" and self.onset_down_v <= 0)

    @property
    def guessed(self) -> bool:
        """Whether the strengths at the limit are only a linear guess (nonlinear sensing, no search)."""
        return self.nonlinear and not self.searched

    def scale_to_limit(self, side: str | None = None) -> float | None:
        """k = (onset − H) / S: by how much the string's part can be scaled before its peak and the hum's reach the
        onset on ``side`` ("up", "down"; None: the smaller); 0 where the hum alone reaches it; None with no string swing."""
        if side is None:
            ks = [k for k in (self.scale_to_limit("up"), self.scale_to_limit("down")) if k is not None]
            return min(ks) if ks else None
        onset, e, string, hum = (
            (self.onset_up_v, self.excursion_up_v, self.string_up_v, self.hum_up_v) if side == "up" else (self.onset_down_v, self.excursion_down_v, self.string_down_v, self.hum_down_v)
        )
        if string is None:  # not known apart: the whole swing taken to scale
            string, hum = e, 0.0
        if string <= 0 or onset <= 0:
            return None
        return max(0.0, (onset - hum) / string)

    def strings_silent(self, side: str | None = None) -> bool:
        """Whether the strings' own part of the swing is known to be zero on ``side`` (None: both) while the output moves (the hum)."""
        if self.string_up_v is None:
            return False
        sides = ("up", "down") if side is None else (side,)
        return all(getattr(self, f"string_{x}_v") == 0 and getattr(self, f"excursion_{x}_v") > 0 for x in sides)

    def _no_swing(self, side: str | None = None) -> str:
        """Why a strength or a dB above the phrase has no value: no string swing (:data:`NO_STRING`), or none at all."""
        return NO_STRING if self.strings_silent(side) else NO_EXCURSION

    def hum_alone(self, side: str | None = None) -> bool:
        """Whether the hum alone reaches the onset on ``side`` (None: either), so that no pluck at all is needed there."""
        if side is None:
            return self.hum_alone("up") or self.hum_alone("down")
        onset, hum = (self.onset_up_v, self.hum_up_v) if side == "up" else (self.onset_down_v, self.hum_down_v)
        return not self.at_rest(side) and hum >= onset

    @property
    def limit_db_above(self) -> float | None:
        """How many dB above the phrase (its plucks scaled alike, the hum not) the limit is reached: 20·log10(k)
        (:meth:`scale_to_limit`), or for a searched design 20·log10(s*/s); None at rest, with the hum alone at the limit,
        or with no swing."""
        if self.at_rest():
            return None
        if self.searched:
            if self.searched_strength_m is None or not self.strongest_pluck_m:
                return None
            return 20.0 * math.log10(self.searched_strength_m / self.strongest_pluck_m)
        k = self.scale_to_limit()
        return None if not k else 20.0 * math.log10(k)

    @property
    def margin_db(self) -> float | None:
        """The smaller margin, dB: how far above the phrase the limit is reached (None: no excursion at all, or limited at rest)."""
        if self.at_rest():
            return None
        m = [x for x in (self.margin_up_db, self.margin_down_db) if x is not None]
        return min(m) if m else None

    def strength_at_limit_m(self, side: str | None = None) -> float | None:
        """The strongest pluck (m) at which the limit is reached, every pluck scaled alike (``side``: "up", "down" or None for the first); 0 where limited at rest."""
        if self.at_rest(side) and self.strongest_pluck_m is not None:
            return 0.0
        if side is None and self.searched:
            return self.searched_strength_m
        k = self.scale_to_limit(side)
        if k is None or self.strongest_pluck_m is None:
            return None
        return self.strongest_pluck_m * k

    def record(self) -> dict:
        """JSON-ready: every figure, None with a ``_reason`` sibling where it has no value."""
        out: dict = {
            "limit_onset_up_v": self.onset_up_v,
            "limit_onset_down_v": self.onset_down_v,
            "linear_excursion_up_v": self.excursion_up_v,
            "linear_excursion_down_v": self.excursion_down_v,
        }
        U.put(out, "played_margin_up_db", self.margin_up_db, AT_REST if self.at_rest("up") else NO_EXCURSION)
        U.put(out, "played_margin_down_db", self.margin_down_db, AT_REST if self.at_rest("down") else NO_EXCURSION)
        if self.string_up_v is not None:  # the excursions of x_lin's parts apart, when the render kept them
            out.update({f"{part}_excursion_{side}_v": getattr(self, f"{part}_{side}_v") for part in ("string", "hum") for side in ("up", "down")})
        U.put(out, "limit_db_above_played", self.limit_db_above, AT_REST if self.at_rest() else NOT_FOUND if self.searched else HUM_ALONE if self.hum_alone() else self._no_swing())
        U.put(out, "strongest_pluck_m", self.strongest_pluck_m, NO_PLUCK)
        for key, side in (("limit_strength_m", None), ("limit_strength_up_m", "up"), ("limit_strength_down_m", "down")):
            U.put(
                out,
                key,
                self.strength_at_limit_m(side),
                NO_PLUCK if self.strongest_pluck_m is None else (self.searched_reason or NOT_FOUND) if self.searched and side is None else self._no_swing(side),
            )
        if self.strongest_pluck_m is not None:
            # "linear": s·10^(margin/20); "rendered": a render at limit_strength_m has the margin limit_strength_check_margin_db
            # "linear-guess": the same formula where the sensing is not linear (no search was made)
            out["limit_strength_method"] = "rendered" if self.searched else "linear-guess" if self.nonlinear else "linear"
        if self.searched:
            lin = replace(self, searched=False)
            U.put(out, "limit_strength_linear_estimate_m", lin.strength_at_limit_m(), NO_EXCURSION)
            U.put(out, "limit_strength_check_margin_db", self.searched_margin_db, self.searched_reason or NOT_FOUND)
            out["limit_strength_renders"] = self.searched_renders
            if self.searched_range_edge_m is not None:
                out["limit_strength_range_edge_m"] = self.searched_range_edge_m
        out["clipped_fraction"] = self.limited_fraction
        out["limited"] = self.limited_fraction > 0
        return out


def played_headroom(
    *,
    linear_min_v: float,
    linear_max_v: float,
    bias_v: float,
    window,
    limited_fraction: float,
    strongest_pluck_m: float | None = None,
    nonlinear: bool = False,
    parts: dict | None = None,
) -> PlayedHeadroom:
    """Headroom of a render from the extremes of its linear op-amp output.

    Parameters
    ----------
    linear_min_v, linear_max_v : float, V
        Extremes of x_lin, bias included (``render_signal``'s ``linear_min_v`` and ``linear_max_v``).
    bias_v : float, V
        The op-amp output's rest point the excursions are measured from.
    window : render.chain.limit.Window
        The output window (its ``linear_low`` and ``linear_high`` are the onsets).
    limited_fraction : float, 0..1
    strongest_pluck_m : float or None, m
    nonlinear : bool
        The sensing is not linear in the pluck (see :attr:`PlayedHeadroom.nonlinear`).
    parts : dict or None
        The excursions of x_lin's string and hum parts apart, V (``string_up_v``, ``string_down_v``, ``hum_up_v``,
        ``hum_down_v``: ``render_signal``'s, :attr:`render.chain.stream.Renderer.part_excursions`); None: not known,
        the whole swing then taken to scale with the pluck.

    Returns
    -------
    PlayedHeadroom
    """
    up, down = window.linear_high - bias_v, bias_v - window.linear_low
    e_up, e_down = max(0.0, linear_max_v - bias_v), max(0.0, bias_v - linear_min_v)
    p = {k: float(max(0.0, v)) for k, v in (parts or {}).items()}
    return PlayedHeadroom(
        onset_up_v=float(up),
        onset_down_v=float(down),
        excursion_up_v=float(e_up),
        excursion_down_v=float(e_down),
        margin_up_db=margin_db(up, e_up),
        margin_down_db=margin_db(down, e_down),
        limited_fraction=float(limited_fraction),
        strongest_pluck_m=None if strongest_pluck_m is None else float(strongest_pluck_m),
        nonlinear=bool(nonlinear),
        string_up_v=p.get("string_up_v"),
        string_down_v=p.get("string_down_v"),
        hum_up_v=p.get("hum_up_v", 0.0),
        hum_down_v=p.get("hum_down_v", 0.0),
    )


def from_record(m: dict) -> PlayedHeadroom | None:
    """The :class:`PlayedHeadroom` back from a record written by :meth:`PlayedHeadroom.record` (None if it has none)."""
    if "limit_onset_up_v" not in m:
        return None
    return PlayedHeadroom(
        onset_up_v=m["limit_onset_up_v"],
        onset_down_v=m["limit_onset_down_v"],
        excursion_up_v=m["linear_excursion_up_v"],
        excursion_down_v=m["linear_excursion_down_v"],
        margin_up_db=m.get("played_margin_up_db"),
        margin_down_db=m.get("played_margin_down_db"),
        limited_fraction=m["clipped_fraction"],
        strongest_pluck_m=m.get("strongest_pluck_m"),
        searched=m.get("limit_strength_method") == "rendered",
        searched_strength_m=m.get("limit_strength_m") if m.get("limit_strength_method") == "rendered" else None,
        searched_margin_db=m.get("limit_strength_check_margin_db"),
        searched_renders=int(m.get("limit_strength_renders", 0)),
        nonlinear=m.get("limit_strength_method") in ("rendered", "linear-guess"),
        searched_reason=m.get("limit_strength_m_reason") if m.get("limit_strength_method") == "rendered" else None,
        searched_range_edge_m=m.get("limit_strength_range_edge_m"),
        string_up_v=m.get("string_excursion_up_v"),
        string_down_v=m.get("string_excursion_down_v"),
        hum_up_v=m.get("hum_excursion_up_v", 0.0),
        hum_down_v=m.get("hum_excursion_down_v", 0.0),
    )


def format_share(fraction: float) -> str:
    """A share of time as a percentage that never rounds a non-zero share to zero.

    "none" only when exactly 0, "100 %" only when every sample; two significant digits below 10 % ("0.35 %", "2.0 %",
    "8.0e-06 %", "9.9 %"), whole percents above ("10 %", "42 %"), with as many decimals as keep a share short of all
    from reading 100 ("99.99 %").
    """
    if fraction <= 0:
        return "none"
    if fraction >= 1:
        return "100 %"
    pct = 100.0 * fraction
    if pct < 9.95:  # two digits would not round up to "10." here
        return f"{pct:#.2g} %"
    decimals = 0
    while decimals < 12 and float(f"{pct:.{decimals}f}") >= 100:
        decimals += 1
    return f"{pct:.{decimals}f} %"


def format_margin(db: float | None) -> str:
    """A margin in dB with its sign ("+6.1 dB"), or "no swing"."""
    return "no swing" if db is None else f"{db:+.1f} dB"


def margin_cell(h: PlayedHeadroom, side: str) -> str:
    """``side``'s margin ("up" or "down") as a table cell: :func:`format_margin`, or "limited at rest"."""
    return AT_REST_MARGIN_CELL if h.at_rest(side) else format_margin(h.margin_up_db if side == "up" else h.margin_down_db)


def strength_cell(h: PlayedHeadroom, side: str | None = None, *, mark_guess: bool = True) -> str:
    """The strongest pluck at which ``side`` reaches the limit as a table cell: :func:`format_strength` (with "≈" before a
    linear guess, unless not ``mark_guess``), "at rest", or "hum alone"."""
    if h.at_rest(side):
        return AT_REST_CELL
    if h.hum_alone(side) and not (side is None and h.searched):
        return HUM_ALONE_CELL
    return format_strength(h.strength_at_limit_m(side), guessed=mark_guess and h.guessed)


def reach_cell(h: PlayedHeadroom) -> str:
    """Where the limit is reached, as the "limit reached at" cell: the strongest pluck and the dB above the phrase
    ("1.86 mm (+5.4 dB)"), only the dB for a recording ("+5.4 dB above"), or words (at rest, the hum alone, beyond the
    construction's flux range, not found)."""
    strength = h.strength_at_limit_m()
    if h.at_rest():
        return AT_REST_CELL
    if h.searched and strength is None:
        edge = h.searched_range_edge_m
        return ("beyond " + format_strength(edge) if edge else "past the flux range") if h.searched_reason == LEFT_RANGE else "not found"
    if h.hum_alone() and not h.searched:
        return HUM_ALONE_CELL
    if strength is None and h.limit_db_above is None and h.strings_silent():
        return NO_STRING_CELL
    return f"{format_margin(h.limit_db_above)} above" if strength is None else f"{format_strength(strength, guessed=h.guessed)} ({format_margin(h.limit_db_above)})"


def format_strength(m: float | None, *, guessed: bool = False) -> str:
    """A pluck strength in mm with three significant digits, or a dash; "≈" before a linear guess."""
    return "—" if m is None else f"{'≈' if guessed else ''}{f'{m * 1e3:#.3g}'.rstrip('.')} mm"  # 3 digits kept (2.00 mm), no bare point (175 mm)


GUESS_NOTE = "≈: a linear guess; this design's sensing is not linear in the pluck (render clips finds the strength by rendering)"
