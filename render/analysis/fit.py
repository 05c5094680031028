"""Search part values that meet a voicing's stated aims.

A fit file names aims on the figures of :mod:`render.analysis.figures` and
the parts that may change, each with a range and a preferred-number series
to snap to. The search:

1. a global search over the free parts' log-scaled ranges
   (``scipy.optimize.differential_evolution``, vectorised through the
   engine, seeded);
2. snapping every part to its series (IEC 60063) within its range;
3. a discrete local search around the snapped points (one or two series
   steps per part at a time), so every written value is one a person can buy.

Every candidate of steps 2 and 3 is scored as its design file will hold it
(:func:`as_written`: on its series, or a continuous part to the figures it is
written with), so what a result claims is what its file gives; a candidate
whose design cannot be built (a bias outside the output's linear window) or
whose aimed figures are not finite is never a result.

The score says how far the aims are missed, zero when all hold: the sum over
aims of the miss divided by the aim's tolerance (``value ± p %`` is the band
from value·(1 − p) to value·(1 + p), as it is printed). A peak aim reads the
peak ``render check`` prints (the highest listed one) and holds where that lies
in its band; where it misses, its miss is the mean of that figure's and of
:func:`render.analysis.peaks.aimed_peak_hz`'s, a frequency that moves smoothly
as two humps trade places, so the search is led across the jump. Ties go to fewer
changed parts, then to smaller changes (sum of |log| ratios) from the start
design.

The free parts are checked against the start design before the search
(:func:`check_free`): a part the start derives from another table
(:func:`render.design.derived.derived_parts`) or that cannot change alone is
refused, and each candidate is judged buildable as the design loader would
judge its file (:func:`_valid`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np

from .. import units as U
from ..design import DESIGN_TABLES
from ..errors import InputError
from ..eseries import SERIES, values_between
from ..io.toml import read_toml
from ..validate import Field, Where, check_keys, did_you_mean, quantity, read_value, unknown
from .undefined import REJECTION_CAP_DB

FIGURES = (
    "level_1k_db",
    "peak_hz",
    "peak_db",
    "resonance_hz",
    "resonance_db",
    "q",
    "bass_corner_hz",
    "treble_corner_hz",
    "gain_vs_passive_db",
    "hum_rejection_db",
    "headroom_v",
    "headroom_up_v",
    "headroom_down_v",
    "cable_loss_db",
    "phrase_headroom_db",
)
PHRASE_AIM = "phrase_headroom_db"  # dB above the phrase at which the limit is reached (render.analysis.phrase_headroom)
NO_SWING_DB = 200.0  # what a phrase that never moves the op-amp output counts as when scored
# default scale of a one-sided bound's miss (a 'min' or 'max' with no tolerance): common practice, no source
BOUND_SCALE = {"db": 1.0, "hz": None, "v": 0.1, "q": 0.1}
# what an undefined figure counts as when scored
# (no peak scores as a peak at the band's lower edge, level with 1 kHz: a response falling from 1 kHz)
UNDEFINED = {
    "aimed_peak_hz": 1000.0,
    "q": 0.0,
    "treble_corner_hz": 40000.0,
    "bass_corner_hz": 1.0,
    "hum_rejection_db": REJECTION_CAP_DB,
    "peak_hz": 1000.0,
    "resonance_hz": 1000.0,
    "peak_db": 0.0,
    "resonance_db": 0.0,
}
TOP_KEYS = ("from", "aim", "free", "name", "notes", "phrase", "strength")  # a fit file's tables and keys
AIM_KEYS = ("value", "within", "min", "max")
FREE_KEYS = ("min", "max", "series", "same_as")  # same_as stands alone
ZERO_WITHIN = {"db": "1", "v": "0.1", "q": "0.1", "hz": "100"}  # a tolerance to suggest around a value of 0, by unit
AIM_KINDS = {"hz": U.FREQUENCY, "v": U.VOLTAGE, "db": U.RATIO, "q": U.RATIO}  # what an aim's numbers are read as, by _unit_of
FREE_TABLES = ("coil_a", "coil_b", "input_a", "input_b", "feedback", "output", "supply")
# an aim's second figure, scored beside the one it names: render.analysis.peaks.aimed_peak_hz, continuous as
# two humps trade places, guides a peak aim across the jump of the highest peak (the figure render check prints)
AIMED_PEAK = "aimed_peak_hz"
GUIDES = {"peak_hz": AIMED_PEAK, "resonance_hz": AIMED_PEAK}


def _unit_of(name: str) -> str:
    if name.endswith("_hz"):
        return "hz"
    if name.endswith("_v"):
        return "v"
    if name == "q":
        return "q"
    return "db"


@dataclass(frozen=True)
class Aim:
    figure: str
    value: float | None = None
    within: float | None = None  # absolute, in the figure's unit
    within_rel: float | None = None  # relative (from "5%")
    lo: float | None = None
    hi: float | None = None

    def describe(self) -> str:
        if self.value is not None:
            tol = f"{self.within_rel * 100:g} %" if self.within_rel is not None else f"{self.within:g}"
            return f"{self.figure} = {self.value:g} ± {tol}"
        parts = []
        if self.lo is not None:
            parts.append(f"≥ {self.lo:g}")
        if self.hi is not None:
            parts.append(f"≤ {self.hi:g}")
        return f"{self.figure} {' and '.join(parts)}"

    def miss(self, x: np.ndarray) -> np.ndarray:
        """Normalised miss (0 when the aim holds) for figure values ``x``."""
        x = np.asarray(x, float)
        if self.value is not None:
            # value ± p %: the band value·(1 ± p), as describe() prints it (parse_fit refuses a percentage of 0)
            tol = abs(self.value) * self.within_rel if self.within_rel is not None else self.within if self.within is not None else 0.0
            tol = max(tol, 1e-12)
            return np.maximum(0.0, np.abs(x - self.value) - tol) / tol
        out = np.zeros_like(x)
        for bound, sign in ((self.lo, 1.0), (self.hi, -1.0)):
            if bound is None:
                continue
            scale = BOUND_SCALE[_unit_of(self.figure)] or 0.05 * abs(bound)
            out += np.maximum(0.0, sign * (bound - x)) / scale
        return out


@dataclass(frozen=True)
class Free:
    name: str  # "table.key"
    table: str
    key: str
    spec: Field
    lo: float
    hi: float
    series: str | None  # None: continuous
    choices: np.ndarray | None  # the series values in range
    tie: int | None = None  # index of the free part whose value this one copies

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    @property
    def kind(self) -> U.Kind:
        """The physical kind of the part's value (a free part is always a quantity: see :func:`parse_fit`)."""
        assert isinstance(self.spec.kind, U.Kind), self.name
        return self.spec.kind


@dataclass(frozen=True)
class FitSpec:
    source: str
    start_path: str
    aims: tuple[Aim, ...]
    free: tuple[Free, ...]  # every part that changes, tied ones included
    phrase: str | None = None  # the phrase of a phrase_headroom_db aim, as written (None: the demo phrase)
    strength: float | None = None  # m: its strongest pluck, every pluck scaled alike (None: as written)
    start_in_file: bool = True  # start_path is the file's ``from`` (relative to the fit file), not an override

    @property
    def needs_phrase(self) -> bool:
        return any(a.figure == PHRASE_AIM for a in self.aims)

    @property
    def guided(self) -> list[int]:
        """Indices of the aims scored with a second figure beside their own (:data:`GUIDES`), whose columns follow the aims'."""
        return [j for j, a in enumerate(self.aims) if a.figure in GUIDES]

    @property
    def dims(self) -> list[int]:
        """Indices of the parts the search moves (tied parts follow their partner)."""
        return [i for i, f in enumerate(self.free) if f.tie is None]

    def expand(self, x: np.ndarray) -> np.ndarray:
        """Values of every free part from the searched ones (shape (..., len(dims)))."""
        x = np.asarray(x, float)
        out = np.empty(x.shape[:-1] + (len(self.free),))
        out[..., self.dims] = x
        for i, f in enumerate(self.free):
            if f.tie is not None:
                out[..., i] = out[..., f.tie]
        return out


def parse_fit(data: dict, *, source: str, start_override: str | None = None) -> FitSpec:
    """Validate a fit file's tables; every error is one line."""
    check_keys(Where(source, ""), data, TOP_KEYS)
    start = start_override or data.get("from")
    if not start:
        raise InputError(f'{source}: no start design; add from = "models/<design>.toml" to the file, or name one with --from (start_path= in Python)')
    if not isinstance(start, str):
        raise InputError(f"{source}: from={U.shown(start)}: expected a path string")
    aims_t, free_t = data.get("aim"), data.get("free")
    if not isinstance(aims_t, dict) or not aims_t:
        raise InputError(f'{source}: missing or empty [aim] table; add e.g. peak_hz = {{ value = 3200, within = "5%" }}')
    if not isinstance(free_t, dict) or not free_t:
        raise InputError(f'{source}: missing or empty [free] table; add e.g. "feedback.r" = {{ min = "22k", max = "470k", series = "E24" }}')
    aims = []
    for name, a in aims_t.items():
        where = f"[aim] {name}"
        if name not in FIGURES:
            raise unknown(f"{source}: [aim]", name, FIGURES, what="figure", known="figures")
        if not isinstance(a, dict):
            raise InputError(f"{source}: {where}={a!r}: expected {{ value = …, within = … }} or {{ min = …, max = … }}")
        at = Where(source, where)
        check_keys(at, a, AIM_KEYS)
        kind = AIM_KINDS[_unit_of(name)]
        low = 0.0 if kind is U.FREQUENCY else None  # an aimed frequency is above 0
        if "value" in a:
            if "min" in a or "max" in a:
                raise InputError(f"{source}: {where}: give value and within, or min and/or max, not both")
            value = quantity(at, "value", a["value"], kind, low=low, low_open=True)
            w = a.get("within")
            if w is None:
                raise InputError(f'{source}: {where}: a value needs a tolerance, e.g. within = 1.0 or within = "5%"')
            if isinstance(w, str) and w.strip().endswith("%"):
                try:
                    rel = float(w.strip()[:-1]) / 100
                except ValueError:
                    raise at.fail("within", w, 'expected a number or a percentage like "5%"') from None
                if not 0 < rel < 1:
                    raise at.fail("within", w, "a percentage must be above 0 and below 100")
                if value == 0:
                    raise at.fail("within", w, "a percentage of a value of 0 is no tolerance", f"give it in the figure's own unit, e.g. within = {ZERO_WITHIN[_unit_of(name)]}")
                aims.append(Aim(name, value=value, within_rel=rel))
            else:
                aims.append(Aim(name, value=value, within=quantity(at, "within", w, kind, low=0.0, low_open=True)))
        else:
            if "within" in a:
                raise InputError(f"{source}: {where}: within goes with value")
            lo = quantity(at, "min", a["min"], kind) if "min" in a else None
            hi = quantity(at, "max", a["max"], kind) if "max" in a else None
            if lo is None and hi is None:
                raise InputError(f"{source}: {where}: give value and within, or min and/or max")
            if lo is not None and hi is not None and lo > hi:
                raise InputError(f"{source}: {where}: min={lo:g} is above max={hi:g}; these bounds contradict each other")
            aims.append(Aim(name, lo=lo, hi=hi))
        if name in ("peak_hz", "resonance_hz"):
            a0 = aims[-1]
            for v in (a0.value, a0.lo, a0.hi):
                if v is not None and not 1000 <= v <= 20000:
                    raise InputError(f"{source}: {where}: {v:g} Hz is outside 1 kHz to 20 kHz, where the peak is looked for")
    frees: list[Free] = []
    known = [f"{t}.{k}" for t in FREE_TABLES for k, s in DESIGN_TABLES[t].items() if isinstance(s.kind, U.Kind)]
    for name, f in free_t.items():
        where = f'[free] "{name}"'
        if name not in known:
            table, _, key = str(name).partition(".")
            if table in ("coil_a", "coil_b") and key == "turns":  # not the nearest name, turns_area: a different part
                raise InputError(
                    f"{source}: {where}: a coil's number of turns is not a part render fit changes (it sets L, R, sensitivity and turns_area together);"
                    f" see what ±N % turns do with render check DESIGN --turns-sweep N, or free {table}.inductance where it is typed"
                )
            raise unknown(f"{source}: [free]", name, known, what="part", known="parts that can change")
        table, key = name.split(".")
        spec = DESIGN_TABLES[table][key]
        if isinstance(f, dict) and "same_as" in f:
            other = f["same_as"]
            if set(f) != {"same_as"}:
                raise InputError(f"{source}: {where}: same_as stands alone (the range and series are the other part's)")
            names = [x.name for x in frees]
            if other == name:
                raise InputError(f"{source}: {where}: same_as={other!r} names the part itself; give it its own {{ min = …, max = … }}, or name another free part it copies")
            if other not in names:
                raise InputError(f"{source}: {where}: same_as={other!r} must name a free part listed above it{_same_as_hint(str(other), name, names, free_t)}")
            j = names.index(other)
            if frees[j].tie is not None or frees[j].spec.kind is not spec.kind:
                raise InputError(f"{source}: {where}: same_as={other!r} must name an untied part of the same kind")
            src = frees[j]
            frees.append(Free(name, table, key, spec, src.lo, src.hi, src.series, src.choices, tie=j))
            continue
        if not isinstance(f, dict) or "min" not in f or "max" not in f:
            raise InputError(f'{source}: {where}={f!r}: expected {{ min = …, max = …, series = "E24" }}')
        check_keys(Where(source, where), f, FREE_KEYS)
        lo = read_value(f["min"], spec, source=source, table="free", key=f"{name}.min")
        hi = read_value(f["max"], spec, source=source, table="free", key=f"{name}.max")
        if not lo < hi:
            raise InputError(f"{source}: {where}: min={f['min']!r} must be below max={f['max']!r}")
        if not lo > 0:
            raise InputError(f"{source}: {where}: min={f['min']!r}: the search runs over log-scaled ranges; give a min above 0")
        series = f.get("series", "E24")
        if series in ("none", None):
            series, choices = None, None
        elif series not in SERIES:
            raise InputError(f'{source}: {where}: series={series!r}: expected one of {", ".join(SERIES)} or "none"')
        else:
            choices = values_between(series, lo, hi)
            if choices.size == 0:
                raise InputError(f"{source}: {where}: no {series} value lies between {f['min']} and {f['max']}; widen the range")
        frees.append(Free(name, table, key, spec, lo, hi, series, choices))
    phrase, strength = _phrase_keys(data, source, aims, frees)
    return FitSpec(source=source, start_path=start, aims=tuple(aims), free=tuple(frees), phrase=phrase, strength=strength, start_in_file=start_override is None)


def _same_as_hint(other: str, name: str, names: list[str], free_t: dict) -> str:
    """The end of a refused ``same_as``: where the named part is, or what it might have meant."""
    if other in free_t:
        return f'; move the line "{other}" = {{ … }} above "{name}" in [free]'
    if not names:
        return f'; no free part is listed above it: give "{name}" its own {{ min = …, max = … }}, or list the part it copies first'
    return did_you_mean(other, names, known="parts above it")


def _phrase_keys(data: dict, source: str, aims, frees) -> tuple[str | None, float | None]:
    """The fit file's ``phrase`` and ``strength``, which go with a phrase_headroom_db aim."""
    phrase, strength = data.get("phrase"), data.get("strength")
    if not any(a.figure == PHRASE_AIM for a in aims):
        if phrase is not None or strength is not None:
            raise InputError(f"{source}: phrase and strength go with a {PHRASE_AIM} aim; add one to [aim] or remove them")
        return None, None
    if phrase is not None and not isinstance(phrase, str):
        raise InputError(f"{source}: phrase={phrase!r}: expected a path string to a phrase (.toml)")
    if phrase is not None and not phrase.lower().endswith(".toml"):
        raise InputError(f"{source}: phrase={phrase!r}: {PHRASE_AIM} needs a phrase file (.toml), whose plucks can be scaled")
    moved = [f.name for f in frees if f.key in ("position", "aperture")]
    if moved:
        raise InputError(f"{source}: [free] {moved[0]}: a {PHRASE_AIM} aim plays the phrase at the start's sensing points; keep them fixed")
    s = None
    if strength is not None:
        s = read_value(strength, Field(U.LENGTH, lo=0.0, hi=0.05, lo_open=True), source=source, table="", key="strength")
    return phrase, s


def load_fit(path, *, start_override=None) -> FitSpec:
    data, _ = read_toml(path)
    return parse_fit(data, source=str(path), start_override=start_override)


# ----------------------------------------------------------------------------


def with_free_values(design, frees, values):
    """``design`` with each free part set to its value (unvalidated)."""
    tables: dict[str, dict[str, float]] = {}
    for fr, v in zip(frees, values):
        tables.setdefault(fr.table, {})[fr.key] = float(v)
    return replace(design, **{t: replace(getattr(design, t), **kv) for t, kv in tables.items()})


# a part that the design loader refuses without its partner (render.design.loading.parse_design): key -> partner
PARTNERS = {"eddy_coupling": "eddy_corner", "eddy_corner": "eddy_coupling", "slew_rate": "gbw"}


def check_free(spec: FitSpec, start) -> None:
    """Refuse, before any search, a free part that ``start`` derives from another table or that cannot change alone.

    One line, naming the fit file and the part, why, and what to vary instead: a
    value set on a derived part (:func:`render.design.derived.derived_parts`)
    is not the one its file would give, as the loader computes it again; a
    part whose partner the loader requires with it (:data:`PARTNERS`) needs
    that partner in the start design or free beside it.
    """
    from ..design.derived import derived_parts

    derived = derived_parts(start)
    names = {fr.name for fr in spec.free}
    design = start.source or start.name
    for fr in spec.free:
        d = derived.get(fr.name)
        if d is not None:
            raise InputError(f'{spec.source}: [free] "{fr.name}": in {design} it {d.why}, so a value the search sets alone is not what a result\'s file would give; {d.instead}')
        partner = PARTNERS.get(fr.key)
        if partner is not None and getattr(getattr(start, fr.table), partner) is None and f"{fr.table}.{partner}" not in names:
            raise InputError(
                f'{spec.source}: [free] "{fr.name}": {design} has no {fr.table}.{partner}, which {fr.key} needs beside it; give {partner} a value in the design, or free "{fr.table}.{partner}" too'
            )


def _valid(design) -> bool:
    """Whether the design loader would accept the design's values (the checks that depend on free parts' values)."""
    s = design.supply
    lo, hi = design.limit_low_v + s.knee, design.limit_high_v - s.knee
    if not (lo < design.bias_v < hi and s.battery - s.margin_low - s.margin_high - 2 * s.knee > 0):
        return False
    if design.hum.sources:  # a coil moved (or its turns_area changed) next to a hum source: render.design.loading._check_places
        from ..magnetics.schema import check_source_places

        try:
            check_source_places(design.hum.sources, coil_a=design.coil_a, coil_b=design.coil_b, source="")
        except InputError:
            return False
    return True


class Evaluator:
    """Scores batches of part values through the vectorised engine, and remembers them."""

    def __init__(self, spec: FitSpec, start, *, phrase=None):
        self.spec, self.start = spec, start
        self.seen_fig: list[np.ndarray] = []  # figure matrices of every evaluation (for conflict analysis)
        self.written_fig: list[np.ndarray] = []  # those of the candidates as they would be written (on their series)
        self.phrase = phrase  # a render.analysis.phrase_headroom.PhraseHeadroom for a phrase_headroom_db aim

    def phrase_margins(self, designs) -> np.ndarray:
        """phrase_headroom_db of each design (dB; a phrase that never moves the output counts as NO_SWING_DB)."""
        if self.phrase is None:
            raise InputError(f'{self.spec.source}: a {PHRASE_AIM} aim needs its phrase; give phrase = "…toml" in the fit file')
        return np.nan_to_num(self.phrase.margins(designs), nan=NO_SWING_DB)

    def design_figures(self, designs) -> list[dict]:
        """Each design's figures (render.analysis.figures), with phrase_headroom_db where an aim asks for it."""
        from .figures import figures

        figs = figures(designs)
        if self.spec.needs_phrase:
            for f, m in zip(figs, self.phrase_margins(designs)):
                f[PHRASE_AIM] = float(m)
        return figs

    def figures(self, values: np.ndarray, *, written: bool = False) -> np.ndarray:
        """Figure matrix (S, n_aims + n_guided) for part values (S, n_free): :func:`aim_values`; NaN rows for invalid designs.

        written : the values are as their files would hold them (:func:`as_written`)
        """
        designs = [with_free_values(self.start, self.spec.free, row) for row in values]
        ok = np.array([_valid(d) for d in designs])
        out = np.full((len(designs), len(self.spec.aims) + len(self.spec.guided)), np.nan)
        if ok.any():
            valid = [d for d, k in zip(designs, ok) if k]
            out[np.flatnonzero(ok)] = [aim_values(self.spec, f) for f in self.design_figures(valid)]
        self.seen_fig.append(out)
        if written:
            self.written_fig.append(out)
        return out

    def misses(self, fig: np.ndarray) -> np.ndarray:
        """Each aim's normalised miss (S, n_aims); an invalid design's or undefined figure's is 1e3."""
        m = aim_misses(self.spec, fig)
        return np.where(np.isnan(m), 1e3, m)

    def score(self, values: np.ndarray) -> np.ndarray:
        return self.misses(self.figures(values)).sum(axis=1)


def aim_values(spec: FitSpec, fig: dict) -> np.ndarray:
    """The figures one design's aims score: each aim's own, then each guided aim's second (:data:`GUIDES`);
    an undefined figure as its stand-in, else NaN."""
    out = []
    for key in [a.figure for a in spec.aims] + [GUIDES[spec.aims[j].figure] for j in spec.guided]:
        v = fig.get(key)
        out.append(v if v is not None else UNDEFINED.get(key, np.nan))
    return np.asarray(out, dtype=float)


def aim_misses(spec: FitSpec, fig: np.ndarray) -> np.ndarray:
    """Each aim's normalised miss (S, n_aims) from a figure matrix of :func:`aim_values` rows (NaN where a figure is).

    A guided aim holds where its own figure holds (zero miss); where it misses, its miss is the mean of its own
    figure's and its guide's, so the score moves smoothly in part where its own figure jumps."""
    n = len(spec.aims)
    m = np.column_stack([a.miss(fig[:, j]) for j, a in enumerate(spec.aims)])
    for k, j in enumerate(spec.guided):
        own = m[:, j]
        m[:, j] = np.where(own > 0, 0.5 * (own + spec.aims[j].miss(fig[:, n + k])), own)
    return m


def _start_values(spec: FitSpec, start) -> np.ndarray:
    out = []
    for fr in spec.free:
        v = getattr(getattr(start, fr.table), fr.key)
        out.append(np.nan if v is None else float(v))
    return np.array(out)


def _tiebreak(values, start_vals):
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.abs(np.log(values / start_vals))
    changed = ~np.isclose(values, start_vals, rtol=1e-9, atol=0.0) | np.isnan(start_vals)
    ratio = np.where(np.isnan(ratio), 1.0, ratio)
    return changed.sum(axis=-1), ratio.sum(axis=-1)


def snap(spec: FitSpec, x: np.ndarray) -> np.ndarray:
    """Each value to the nearest series value in range (log distance); continuous parts clipped."""
    out = np.array(x, float)
    for j, fr in enumerate(spec.free):
        if fr.choices is None:
            out[..., j] = np.clip(out[..., j], fr.lo, fr.hi)
        else:
            idx = np.argmin(np.abs(np.log(out[..., j][..., None] / fr.choices)), axis=-1)
            out[..., j] = fr.choices[idx]
    return out


def as_written(spec: FitSpec, x: np.ndarray) -> np.ndarray:
    """Each value as a result's design file holds it: snapped (:func:`snap`), then written
    (:func:`format_value`) and read back as the design parser reads it, so that a candidate is scored
    on exactly the value its file gives."""
    out = snap(spec, x)
    flat = out.reshape(-1, len(spec.free))
    for row in flat:
        for j, fr in enumerate(spec.free):
            row[j] = U.parse_quantity(format_value(fr, row[j]), fr.kind)
    return flat.reshape(out.shape)


@dataclass(frozen=True)
class FitCandidate:
    """One candidate of a design fit: its free values, its score and figures, and whether it meets every aim."""

    values: np.ndarray  # (n_free,), as the result's file holds them
    score: float  # from ``figures``, the figures of those values
    figures: dict
    meets: bool
    changed: int
    change: float
    missed: tuple[Aim, ...] = ()  # the aims it misses (empty when it meets every aim)

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)


def verdict(spec: FitSpec, r: FitCandidate) -> str:
    """Whether a result meets every aim, or which it misses and what it measures there, in words."""
    if not r.missed:
        return "meets every aim"
    parts = []
    for a in r.missed:
        v = r.figures.get(a.figure)
        has = "has none" if v is None else f"measures {v:.4g}"
        parts.append(f"{a.describe()} (it {has})")
    return "misses " + "; ".join(parts)


def run_fit(spec: FitSpec, start, *, top: int = 3, seed: int = 0, maxiter: int = 60, popsize: int = 12, phrase=None):
    """Search, snap and refine; returns (results best first, evaluator, start values).

    phrase : a :class:`render.analysis.phrase_headroom.PhraseHeadroom`, needed by a phrase_headroom_db aim
    """
    from scipy.optimize import differential_evolution

    check_free(spec, start)
    ev = Evaluator(spec, start, phrase=phrase)
    start_vals = _start_values(spec, start)
    dims = spec.dims
    bounds = [(math.log10(spec.free[i].lo), math.log10(spec.free[i].hi)) for i in dims]

    def objective(xt):  # vectorised: xt has shape (n_dims, S)
        return ev.score(spec.expand(10.0**xt.T))

    de = differential_evolution(
        objective,
        bounds,
        seed=seed,
        vectorized=True,
        updating="deferred",
        maxiter=maxiter,
        popsize=popsize,
        tol=1e-8,
        polish=False,
        init="latinhypercube",
    )
    pop = 10.0**de.population
    pop_scores = de.population_energies
    order = np.argsort(pop_scores)
    seeds = [spec.expand(10.0**de.x)] + [spec.expand(pop[i]) for i in order[: max(4, top)]]
    # every candidate as written, by its values' logs: (values, score, buildable with finite aimed figures)
    seen: dict[tuple, tuple[np.ndarray, float, bool]] = {}

    def key_of(v):
        return tuple(np.round(np.log10(v), 9))

    def evaluate(cands):
        cands = np.unique(as_written(spec, np.asarray(cands)), axis=0)
        new = [c for c in cands if key_of(c) not in seen]
        if new:
            fig = ev.figures(np.array(new), written=True)
            for c, sc, ok in zip(new, ev.misses(fig).sum(axis=1), np.isfinite(fig).all(axis=1)):
                seen[key_of(c)] = (c, float(sc), bool(ok))
        return [seen[key_of(c)][:2] for c in cands]

    def rank(c, sc):
        n, r = _tiebreak(c, start_vals)
        return (round(sc, 12), n, r)

    for s0 in seeds:
        cur, cur_sc = evaluate([s0])[0]
        for _ in range(60):
            moves: list[np.ndarray] = []

            def move(j, value, cur=cur, moves=moves):
                c = cur.copy()
                c[j] = value
                moves.append(spec.expand(c[dims]))

            for j in dims:
                fr = spec.free[j]
                if fr.choices is None:
                    for k in (0.98, 1.02):
                        move(j, np.clip(cur[j] * k, fr.lo, fr.hi))
                    continue
                i = int(np.argmin(np.abs(np.log(fr.choices / cur[j]))))
                for step in (-2, -1, 1, 2):
                    if 0 <= i + step < fr.choices.size:
                        move(j, fr.choices[i + step])
                # a step back to the start's own value (or the series value nearest it) keeps changes few
                if not np.isnan(start_vals[j]) and fr.lo <= start_vals[j] <= fr.hi:
                    move(j, start_vals[j])
            if not moves:
                break
            scored = evaluate(moves)
            best_c, best_s = min(scored, key=lambda cs: rank(*cs))
            if rank(best_c, best_s) < rank(cur, cur_sc):
                cur, cur_sc = best_c, best_s
            else:
                break
    # only designs that can be built and whose aimed figures are finite; each once (the keys are of written values)
    ranked = sorted(((c, sc) for c, sc, ok in seen.values() if ok), key=lambda cs: rank(*cs))
    results = []
    for v, _ in ranked[:top]:
        # the figures of the values as written, and the score and verdict from those figures
        fig = ev.design_figures([with_free_values(start, spec.free, v)])[0]
        miss = ev.misses(aim_values(spec, fig)[None, :])[0]
        missed = tuple(a for a, m in zip(spec.aims, miss) if m > 1e-12)
        n, r = _tiebreak(v, start_vals)
        results.append(FitCandidate(values=v, score=float(miss.sum()), figures=fig, meets=not missed, changed=int(n), change=float(r), missed=missed))
    return results, ev, start_vals


def _held(spec: FitSpec, fig: np.ndarray) -> np.ndarray:
    """Whether each aim holds (columns) at each design tried (rows)."""
    return aim_misses(spec, fig) <= 1e-12  # False where a figure is NaN


def conflicts(spec: FitSpec, ev: Evaluator) -> str:
    """Which aims the search could not meet, alone or together, as one sentence.

    Judged on every design the search tried, between the series' values too; where
    those met every aim together but none on the series did, it says so, with
    how near the series' values came to each aim they missed."""
    tried = np.vstack([f for f in ev.seen_fig if f.size])
    if not _held(spec, tried).all(axis=1).any():
        return _conflicts(spec, tried)
    written = np.vstack([f for f in ev.written_fig if f.size])
    held = _held(spec, written)
    parts = []
    for j, a in enumerate(spec.aims):
        col = written[:, j][~np.isnan(written[:, j])]
        if not held[:, j].any() and col.size:
            parts.append(f"{a.describe()} (the series values the search tried measured {_reached(a.figure, col)})")
    missed = f": {'; '.join(parts)}" if parts else ""
    return f"every aim held together only between the series' values, at none the search tried on them{missed}; {_finer(spec)}"


def _reached(figure: str, col: np.ndarray) -> str:
    """The figures tried as "a to b", an exact hum balance (scored as REJECTION_CAP_DB) in words."""

    def show(v: float) -> str:
        return "infinite (an exact balance)" if figure == "hum_rejection_db" and v >= REJECTION_CAP_DB else f"{v:.4g}"

    return f"{show(col.min())} to {show(col.max())}"


def _finer(spec: FitSpec) -> str:
    """The advice after a miss between a series' values: the series finer than the coarsest in use, or none."""
    order = list(SERIES)
    used = [order.index(f.series) for f in spec.free if f.series in order]
    finer = order[min(used) + 1 :] if used else order
    offer = f"try a finer series ({', '.join(finer)}) or " if finer else "try "
    return offer + 'series = "none" (a continuous value)'


def _conflicts(spec: FitSpec, fig: np.ndarray) -> str:
    ok = _held(spec, fig)
    alone = [spec.aims[j] for j in range(len(spec.aims)) if not ok[:, j].any()]
    if alone:
        parts = []
        for a in alone:
            j = spec.aims.index(a)
            col = fig[:, j][~np.isnan(fig[:, j])]
            sub = UNDEFINED.get(a.figure)
            none = (
                "no Q (no peak 3 dB above the 1 kHz level, or one whose -3 dB width takes in a higher peak)"
                if a.figure == "q"
                else f"no {a.figure.removesuffix('_hz').removesuffix('_db').replace('_', ' ')}"
            )  # "no peak", "no resonance"
            if sub is not None and np.all(col == sub):  # every design tried scored the stand-in of an undefined figure
                parts.append(f"{a.describe()} (the design has {none} to aim at, and no variant the search tried has one)")
                continue
            if sub is not None and np.any(col == sub):
                col = col[col != sub]
                parts.append(f"{a.describe()} (the designs the search tried measured {_reached(a.figure, col)}; some of them have {none})")
                continue
            parts.append(f"{a.describe()} (the designs the search tried measured {_reached(a.figure, col)})")
        return "out of reach with these free parts and ranges: " + "; ".join(parts)
    pairs = []
    for i in range(len(spec.aims)):
        for j in range(i + 1, len(spec.aims)):
            if not (ok[:, i] & ok[:, j]).any():
                pairs.append(f"{spec.aims[i].describe()} and {spec.aims[j].describe()}")
    if pairs:
        return "these aims conflict as far as the search can tell: " + "; ".join(pairs)
    return "no design met every aim together, though every pair was met somewhere; loosen a tolerance or widen a range"


# ----------------------------------------------------------------------------
# Writing design files


WRITTEN_DIGITS = 6  # significant figures of a written value: a series value's own (E96 has 3), a continuous one's within 5 ppm


def format_value(fr: Free, v: float) -> str:
    """A value as it is written: RKM for resistors and capacitors, prefixes otherwise (to WRITTEN_DIGITS figures)."""
    kind = fr.kind
    if kind is U.RESISTANCE:
        return U.format_rkm(v, digits=WRITTEN_DIGITS)
    if kind is U.CAPACITANCE:
        return U.format_rkm(v, unit_letter="", digits=WRITTEN_DIGITS)
    if kind.power != 1:  # a prefix on a squared unit squares too (mm² = 1e-6 m²): the number in the SI unit
        return f"{v:.{WRITTEN_DIGITS}g}{kind.unit}"
    return U.format_si(v, kind.unit, digits=WRITTEN_DIGITS).replace(" ", "")


def rebase_files(text: str, *, from_dir: Path, to_dir: Path) -> str:
    """The design text with each relative ``measured = "…"`` path (relative to its file's folder) made relative to
    ``to_dir`` instead, so that the design written there still finds its measurement."""
    import os
    import re

    def moved(m):
        quote, value = m.group(2), m.group(3)
        if Path(value).is_absolute():
            return m.group(0)
        new = os.path.relpath(Path(from_dir) / value, Path(to_dir)).replace(os.sep, "/")
        return f"{m.group(1)}{quote}{new}{quote}{m.group(4)}"

    # a basic ("…", no escapes in a path) or a literal ('…') TOML string
    return re.sub(r"""^(\s*measured\s*=\s*)(["'])([^"'\\]+)\2(.*)$""", moved, text, flags=re.M)


def rewrite(text: str, changes: list[tuple[Free, float, float | None]], header: str, name: str | None = None) -> str:
    """The start design's text with each changed part's value replaced (or added) in its table,
    and its top-level ``name`` set to ``name`` (so a result never shares the start's name)."""
    import re

    lines = text.splitlines()
    if name is not None:
        first_table = next((i for i, ln in enumerate(lines) if re.match(r"^\s*\[", ln)), len(lines))
        at = next((i for i in range(first_table) if re.match(r"^\s*name\s*=", lines[i])), None)
        if at is None:
            lines.insert(0, f'name = "{name}"')
        else:
            lines[at] = f'name = "{name}"'

    for fr, new, old in changes:
        value = f'"{format_value(fr, new)}"'
        note = f"   # fit: was {format_value(fr, old) if old is not None else 'absent'}"
        table = None
        header_at = None
        done = False
        for i, line in enumerate(lines):
            m = re.match(r"^\s*\[([^\[\]]+)\]\s*(#.*)?$", line)
            if m:
                table = m.group(1).strip()
                if table == fr.table:
                    header_at = i
                continue
            if table == fr.table and re.match(rf"^\s*{re.escape(fr.key)}\s*=", line):
                lines[i] = f"{fr.key} = {value}{note}"
                done = True
                break
        if not done:
            if header_at is None:
                lines += ["", f"[{fr.table}]", f"{fr.key} = {value}{note}"]
            else:
                lines.insert(header_at + 1, f"{fr.key} = {value}{note}")
    return header + "\n".join(lines) + "\n"
