"""Hum cancellation, exact from the engine, and what part tolerances cost.

A uniform field B(t) = field · Σ_h a_h sin(2π h f_mains t) induces in each
coil the EMF e = hum_polarity · turns_area · dB/dt (Faraday), whose
harmonic h has peak turns_area · a_h · field · 2π h f_mains. The rejection
at a frequency is

    rejection_db = 20·log10( max(|V_A|, |V_B|) / |V_A + V_B| )

with V_A the hum at the amp input from coil_a's hum EMF alone (coil_b's set
to zero, the circuit unchanged), V_B likewise.

The Monte Carlo draws every part from its tolerance (uniform within ±t, a
common assumption for toleranced parts; common practice, no source) and
evaluates all trials in one vectorised pass of the engine.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ..circuit.engine import responses
from ..circuit.params import Params, from_designs
from .harmonics import harmonic_amplitudes
from .hum_harmonics import absent_harmonics, field_derivative, quoted_harmonic  # noqa: F401  (their home; imported from here too)

# Reference string signal for the signal-to-hum ratio: a sine of this peak
# velocity at this frequency at both sensing points (our own reference: a
# medium pluck's fundamental on the G string; no source).
REFERENCE_VELOCITY = 0.5  # m/s, peak
REFERENCE_NOTE_HZ = 196.0  # G3 (ISO 16 pitch from A4 = 440 Hz: 195.998 Hz)

DEFAULT_TOLERANCES = {"resistor": 0.01, "capacitor": 0.05, "turns": 0.02}
TOLERANCE_MAX = 0.5  # a relative half-width above ±50 % is no part's tolerance (common practice, no source)
TOLERANCE_RANGE = "a tolerance must be from 0 % to 50 %"  # the refusal's words, the command line's and the library's


def check_tolerances(tolerances) -> dict:
    """``tolerances`` (None, or part class -> relative half-width) checked: known classes only, each from 0 to
    :data:`TOLERANCE_MAX`; an :class:`~render.errors.ArgumentError` naming the class otherwise (the command line's
    ``--tolerance-CLASS`` reads its percentage into the same range)."""
    from ..arguments import instance, number, shown
    from ..errors import ArgumentError
    from ..validate import did_you_mean

    if tolerances is None:
        return {}
    instance("tolerances", tolerances, dict, 'a dict of part class to relative half-width, e.g. {"resistor": 0.01} for ±1 %')
    for cls, v in tolerances.items():
        if cls not in DEFAULT_TOLERANCES:
            raise ArgumentError("tolerances", shown(cls), f"unknown part class{did_you_mean(str(cls), DEFAULT_TOLERANCES, known='classes')}", option="--tolerance")
        name = f"tolerances[{cls!r}]"
        hint = f"; give a fraction: 0.01 is ±1 %{f' ({v:g} would be ±{v * 100:g} %)' if isinstance(v, (int, float)) and v > TOLERANCE_MAX else ''}"
        x = number(name, v, hint=hint, option=f"--tolerance-{cls}")
        if not 0 <= x <= TOLERANCE_MAX:
            raise ArgumentError(name, shown(v), f"{TOLERANCE_RANGE}{hint}", option=f"--tolerance-{cls}")
    return {cls: float(v) for cls, v in tolerances.items()}


# What each number in the hum JSON is (``units``): amplitudes are peak unless the key says rms.
HUM_UNITS = {
    "mains_hz": "Hz",
    "field_t": "T, the reference peak: harmonic h peaks at field_t × harmonic_profile[h−1]",
    "frequency_hz": "Hz",
    "rejection_db": "dB",
    "output_v": "V peak (per harmonic, and each source's share)",
    "coil_a_v": "V peak (per harmonic, and each source's share)",
    "coil_b_v": "V peak (per harmonic, and each source's share)",
    "total_v_rms": "V rms over the harmonics",
    "note_to_hum_db": "dB, rms over rms",
    "moment_a_m2": "A·m², the source's reference peak (harmonic h: × its harmonics[h−1])",
    "linkage_wb": "Wb peak at the source's stated strength (harmonic h: × its harmonics[h−1])",
}


def field_words(field_t: float, profile) -> str:
    """The room's one-number field as the hum report heads it, honest about the fundamental.

    ``field`` is a reference amplitude: harmonic h peaks at field × harmonics[h−1]
    (:func:`field_derivative`), so it is the fundamental's peak only when the
    profile starts with 1; otherwise the words say so and give the fundamental's.
    """
    first = float(profile[0])
    ref = f"field {field_t * 1e6:g} µT"
    if first == 1.0:
        return f"{ref} peak"
    share = "harmonic h peaks at the field × harmonics[h−1]"
    if first == 0.0:
        return f"{ref} reference (no fundamental; {share})"
    return f"{ref} reference, fundamental {field_t * first * 1e6:.4g} µT peak ({share})"


def hum_table(design, resp=None) -> dict:
    """Per-harmonic hum at the amp input and its rejection, for one design.

    Returns a dict with ``mains_hz``, ``field_t``, ``harmonics`` (list of
    {harmonic, frequency_hz, rejection_db, output_v (peak), coil_a_v,
    coil_b_v}), ``total_v_rms``, and the signal-to-hum ratio against the
    reference string signal. With ``[[hum.source]]`` tables
    (:mod:`render.analysis.hum_sources`) ``field_t`` is None, ``sources``
    describes them, each harmonic lists each source's share under
    ``sources``, and ``warnings`` holds the approximations in force. A
    figure that does not exist is None with a ``…_reason`` beside it.
    """
    from . import undefined as U
    from .figures import coil_hum, rejection_db, silence
    from .undefined import cancels, net_hum

    resp = resp or responses(from_designs([design]))
    hum = design.hum
    f, dbdt = field_derivative(hum)
    h = np.arange(1, len(f) + 1)
    sv = None
    if hum.sources:
        from .hum_sources import share_rows, source_record, source_voltages

        sv = source_voltages(design, resp)
        va, vb = sv.coil_a, sv.coil_b
    else:
        va, vb = (x[0] * dbdt for x in coil_hum(resp, f))
    rej = rejection_db(va, vb)
    exact = cancels(va, vb)  # the sum is rounding noise: the coils' hum cancels exactly
    total = net_hum(va, vb)
    absent = absent_harmonics(design)
    rows = []
    for i in range(len(h)):
        row: dict = {"harmonic": int(h[i]), "frequency_hz": float(f[i])}
        why = absent[i]
        if why is not None:
            U.mark(row, "rejection_db", why)
        elif exact[i]:
            U.mark(row, "rejection_db", U.HUM_CANCELS)
        else:
            U.put(row, "rejection_db", rej[i], U.HUM_CANCELS)
        row.update({"output_v": float(abs(total[i])), "coil_a_v": float(abs(va[i])), "coil_b_v": float(abs(vb[i]))})
        if sv is not None:
            row["sources"] = share_rows(sv, i)
        rows.append(row)
    total_rms = float(np.sqrt(np.sum(np.abs(total) ** 2) / 2))
    (why_silent,), (why_passive_silent,) = silence([design], resp, [REFERENCE_NOTE_HZ])
    silent, passive_silent = why_silent is not None, why_passive_silent is not None
    sig = 0.0 if silent else abs(resp.velocity()(REFERENCE_NOTE_HZ)[0, 0]) * REFERENCE_VELOCITY / np.sqrt(2)
    if sv is None:
        zero = np.zeros(1)
        pa, pb = (x(f)[0] * dbdt for x in (resp.passive_mix(resp.hum_a, zero), resp.passive_mix(zero, resp.hum_b)))
        ptotal = net_hum(pa, pb)
    else:
        ptotal = sv.passive
    passive_rms = float(np.sqrt(np.sum(np.abs(ptotal) ** 2) / 2))
    psig = 0.0 if passive_silent else abs(resp.passive_velocity()(REFERENCE_NOTE_HZ)[0, 0]) * REFERENCE_VELOCITY / np.sqrt(2)
    table = {
        "mains_hz": hum.mains,
        "field_t": None if sv is not None else hum.field,
        "harmonic_profile": list(hum.harmonics),
        "harmonics": rows,
        "total_v_rms": total_rms,
        "reference_note": {"velocity_m_per_s_peak": REFERENCE_VELOCITY, "frequency_hz": REFERENCE_NOTE_HZ, "output_v_rms": float(sig)},
        "units": dict(HUM_UNITS),
    }
    # no hum at all: no source (or field harmonic) reaches either coil, or the coils' hum cancels exactly
    unlinked = bool(np.all((np.abs(va) == 0) & (np.abs(vb) == 0)))
    no_hum = U.NOTHING_LINKS if unlinked else U.NO_HUM
    _note_to_hum(table, sig, total_rms, why_silent or U.NO_SIGNAL, no_hum)
    table["passive"] = _note_to_hum({"total_v_rms": passive_rms}, psig, passive_rms, why_passive_silent or U.PASSIVE_NO_SIGNAL, no_hum)
    if sv is not None:
        table["sources"] = [source_record(j, s, sv.linkage_wb) for j, s in enumerate(sv.sources)]
        table["warnings"] = list(sv.warnings)
    else:  # a uniform field: only the coils' areas can be unbacked (sources in space add the point-coil line)
        from ..magnetics.pickup import area_mismatch_warnings

        if mismatch := area_mismatch_warnings(design):
            table["warnings"] = list(mismatch)
    return table


def _note_to_hum(record: dict, signal_v: float, hum_v: float, silent_reason: str, no_hum_reason: str) -> dict:
    """``note_to_hum_db`` = 20·log10(note/hum) (the reference note's rms output over the hum's rms), or None with
    its reason (no hum, or no signal). Not the one-scale ``signal_to_hum_db`` of :mod:`render.analysis.one_scale`."""
    from . import undefined as U

    if hum_v <= 0:
        return U.mark(record, "note_to_hum_db", no_hum_reason)
    if signal_v <= 0:
        return U.mark(record, "note_to_hum_db", silent_reason)
    return U.put(record, "note_to_hum_db", 20 * np.log10(signal_v / hum_v), no_hum_reason)


def rejection_curve(designs, frequency_hz) -> np.ndarray:
    """Rejection (dB) of each design at each frequency: shape (N, F).

    A design with hum sources takes its coils' couplings to them
    (:func:`render.analysis.hum_sources.rejection_curve`).
    """
    designs = list(designs)
    out = _rejection(from_designs(designs), frequency_hz)
    for i, d in enumerate(designs):
        if d.hum.sources:
            from .hum_sources import rejection_curve as source_curve

            out[i] = source_curve(d, frequency_hz)
    return out


# ----------------------------------------------------------------------------
# Tolerances


# (path in Params, part class, label); coil turns are handled separately
PARTS = [
    ("input_a.Rs", "resistor", "input_a.series_r"),
    ("input_b.Rs", "resistor", "input_b.series_r"),
    ("input_a.Gl", "resistor", "input_a.load_r"),
    ("input_b.Gl", "resistor", "input_b.load_r"),
    ("fb_G", "resistor", "feedback.r"),
    ("input_a.Cs", "capacitor", "input_a.series_c"),
    ("input_b.Cs", "capacitor", "input_b.series_c"),
    ("input_a.Cl", "capacitor", "input_a.load_c"),
    ("input_b.Cl", "capacitor", "input_b.load_c"),
    ("input_b.Cn", "capacitor", "input_b.shunt_c"),
    ("fb_C", "capacitor", "feedback.c"),
]
CONDUCTANCES = {"input_a.Gl", "input_b.Gl", "fb_G"}  # stored as 1/R: a factor k on R is 1/k here


def _get(p, path):
    obj = p
    for part in path.split("."):
        obj = getattr(obj, part)
    return obj


def _set(p, path, value):
    head, _, rest = path.partition(".")
    if not rest:
        return replace(p, **{head: value})
    return replace(p, **{head: _set(getattr(p, head), rest, value)})


def _tile(p, n):
    """A Params with every array repeated to length n."""
    from dataclasses import fields

    kw = {}
    for f in fields(p):
        v = getattr(p, f.name)
        kw[f.name] = np.repeat(v, n, axis=0) if isinstance(v, np.ndarray) else None if v is None else _tile(v, n)
    return type(p)(**kw)


def _scale_turns(p: Params, coil: str, k: np.ndarray) -> Params:
    c = getattr(p, coil)
    lad = c.ladder
    if lad is not None:  # an RL ladder scales as L: inductances and resistances by k², time constants kept
        k2 = np.broadcast_to(np.asarray(k, float) ** 2, lad.L0.shape)
        lad = replace(lad, L0=lad.L0 * k2, Lk=lad.Lk * k2[:, None])
    return replace(p, **{coil: replace(c, L=c.L * k**2, R=c.R * k, sig=c.sig * k, hum=c.hum * k, ladder=lad)})


def _scale_bias(p: Params, design, kt, kb) -> Params:
    """The bias node's admittance with bias_top × kt and bias_bottom × kb."""
    ib = design.input_b
    gn = 1.0 / (ib.bias_top * kt) + 1.0 / (ib.bias_bottom * kb)
    return replace(p, input_b=replace(p.input_b, Gn=gn))


def perturbed(design, factors: dict[str, np.ndarray], n: int) -> Params:
    """n copies of ``design`` with each named part multiplied by its factor array (shape (n,))."""
    p = _tile(from_designs([design]), n)
    for path, _, label in PARTS:
        if label in factors:
            k = factors[label]
            v = _get(p, path)
            p = _set(p, path, v / k if path in CONDUCTANCES else v * k)
    kt, kb = factors.get("input_b.bias_top", 1.0), factors.get("input_b.bias_bottom", 1.0)
    if "input_b.bias_top" in factors or "input_b.bias_bottom" in factors:
        p = _scale_bias(p, design, np.broadcast_to(kt, (n,)), np.broadcast_to(kb, (n,)))
    for coil in ("coil_a", "coil_b"):
        if f"{coil}.turns" in factors:
            p = _scale_turns(p, coil, factors[f"{coil}.turns"])
    return p


def part_labels(design) -> list[tuple[str, str]]:
    """(label, class) of every toleranced part the design has."""
    out = []
    for _path, cls, label in PARTS:
        table, key = label.split(".")
        if getattr(getattr(design, table), key) is not None:
            out.append((label, cls))
    out += [("input_b.bias_top", "resistor"), ("input_b.bias_bottom", "resistor"), ("coil_a.turns", "turns"), ("coil_b.turns", "turns")]
    return out


def _rejection(p: Params, f) -> np.ndarray:
    from .figures import coil_hum, rejection_db

    return rejection_db(*coil_hum(responses(p), f))


def _design_rejection(design, factors: dict, n: int, f) -> np.ndarray:
    """Rejection (dB) of n copies of ``design`` with the part factors applied, in its own room: shape (n, F)."""
    p = perturbed(design, factors, n)
    if not design.hum.sources:
        return _rejection(p, f)
    from .hum_sources import tolerance_rejection

    return tolerance_rejection(design, responses(p), f, factors)


@dataclass(frozen=True)
class HumTolerances:
    """Hum rejection over random draws of the part tolerances (:func:`render.hum_tolerances`; ``render hum --tolerance``).

    Attributes
    ----------
    frequency_hz : np.ndarray [shape=(H,)], Hz, the mains harmonics
    rejection_db : np.ndarray [shape=(trials, H)], dB, each draw's rejection (inf where it cancels exactly)
    tolerances : dict, part class ("resistor", "capacitor", "turns") to its relative half-width
    trials : int
    seed : int
    sensitivity : list of (str, float or str)
        dB of rejection at harmonic ``sensitivity_at`` per +1 % on each part alone, largest first (a
        reason in words where the change has no finite size)
    absent : tuple of (str or None), one per harmonic
        Why a harmonic has no hum in the design's room (:func:`.hum_harmonics.absent_harmonics`), None where it has some:
        its rejection has no value in any draw, and :meth:`summary` gives the reason.
    sensitivity_at : int or None
        Index of the harmonic ``sensitivity`` (and ``render hum --histogram``) refer to: the lowest with
        hum, the fundamental unless it has none; None where no harmonic has hum (``sensitivity`` is empty).
    """

    frequency_hz: np.ndarray  # (H,)
    rejection_db: np.ndarray  # (trials, H)
    tolerances: dict
    trials: int
    seed: int
    sensitivity: list  # [(label, dB per +1 % at harmonic sensitivity_at, or the reason in words)], largest first
    absent: tuple = ()
    sensitivity_at: int | None = 0

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    def as_dict(self) -> dict:
        """The JSON layout of ``render hum --json``'s ``monte_carlo``."""
        return {
            "trials": self.trials,
            "seed": self.seed,
            "tolerances": self.tolerances,
            "distribution": "uniform within ± the tolerance",
            "harmonics": self.summary(),
            "sensitivity_frequency_hz": None if self.sensitivity_at is None else float(self.frequency_hz[self.sensitivity_at]),
            "sensitivity_db_per_percent": [sensitivity_record(k, v) for k, v in self.sensitivity],
        }

    def summary(self) -> list[dict]:
        """Per harmonic: the median and 5th-percentile rejection (None, with the reason, where infinite)."""
        from . import undefined as U
        from .undefined import REJECTION_CAP_DB

        rows = []
        absent = self.absent or (None,) * len(self.frequency_hz)
        for i, f in enumerate(self.frequency_hz):
            row: dict = {"harmonic": i + 1, "frequency_hz": float(f)}
            for key, value in (("median_db", np.median(self.rejection_db[:, i])), ("p5_db", np.percentile(self.rejection_db[:, i], 5))):
                if absent[i] is not None or np.isnan(value):  # no hum in the room at this harmonic: 0/0 in every draw
                    U.mark(row, key, absent[i] or U.NO_LINKAGE)
                elif value >= REJECTION_CAP_DB:
                    U.mark(row, key, U.HUM_CANCELS)
                else:
                    U.put(row, key, value, U.HUM_CANCELS)
            rows.append(row)
        return rows


def _mc_chunk(args):
    design, factors, f = args
    n = len(next(iter(factors.values())))
    return _design_rejection(design, factors, n, f)


def part_draws(design, *, tolerances=None, trials=2000, seed=0) -> tuple[dict, dict]:
    """(tolerances in force, {part label: factor array of shape (trials,)}), drawn in a fixed part order."""
    tol = {**DEFAULT_TOLERANCES, **check_tolerances(tolerances)}
    rng = np.random.default_rng(seed)
    return tol, {label: 1.0 + tol[cls] * rng.uniform(-1.0, 1.0, trials) for label, cls in part_labels(design)}


def hum_tolerances(design, *, tolerances=None, trials=2000, seed=0, chunk=500, jobs=1) -> HumTolerances:
    """Hum rejection over ``trials`` random draws of the part tolerances.

    Parameters
    ----------
    design : Design
    tolerances : dict or None
        Part class ("resistor", "capacitor", "turns") to a relative
        half-width from 0 to 0.5 (0.01 = ±1 %); a class left out keeps its default (resistor 1 %, capacitor 5 %, turns 2 %).
    trials : int, > 0
    seed : int
    chunk : int, draws evaluated at a time
    jobs : int, worker processes

    Returns
    -------
    HumTolerances
        The rejection of every draw (:class:`render.HumTolerances`); ``summary()`` gives the median and 5th percentile per harmonic.

    Draws are uniform within ± each tolerance, from
    ``numpy.random.default_rng(seed)`` in a fixed part order, all made before
    any is evaluated, so results are identical for a seed whatever ``chunk``
    or ``jobs`` is.
    """
    from ..arguments import seed as check_seed
    from ..arguments import whole

    trials, chunk, jobs, seed = whole("trials", trials), whole("chunk", chunk), whole("jobs", jobs), check_seed("seed", seed)
    tol, draws = part_draws(design, tolerances=tolerances, trials=trials, seed=seed)
    f, _ = field_derivative(design.hum)
    spans = [(s, min(trials, s + chunk)) for s in range(0, trials, chunk)]
    tasks = [(design, {k: v[s:e] for k, v in draws.items()}, f) for s, e in spans]
    from ..parallel import pmap

    out = np.concatenate(pmap(_mc_chunk, tasks, jobs), axis=0)
    absent = absent_harmonics(design)
    at = quoted_harmonic(absent)
    sens = [] if at is None else sensitivities(design, f, harmonic=at)
    return HumTolerances(f, out, tol, trials, seed, sens, absent=absent, sensitivity_at=at)


def sensitivities(design, frequency_hz, *, harmonic: int = 0) -> list[tuple[str, float | str]]:
    """Change of rejection (dB) at ``frequency_hz[harmonic]`` for +1 % on each part alone, largest first.

    ``frequency_hz`` are the room's mains harmonics in order (a source's EMF is taken at the same index).

    Where the design or the changed one cancels its hum exactly, the change
    has no finite size: its entry is the reason in words
    (:data:`~render.analysis.undefined.NOMINAL_CANCELS` or ``PART_CANCELS``),
    ordered by the rejection the change leaves when the design itself cancels,
    else after the finite changes.
    """
    from . import undefined as U
    from .undefined import REJECTION_CAP_DB

    labels = [label for label, _ in part_labels(design)]
    n = len(labels) + 1
    factors = {label: np.where(np.arange(n) == i + 1, 1.01, 1.0) for i, label in enumerate(labels)}
    r = _design_rejection(design, factors, n, np.asarray(frequency_hz, float))[:, harmonic]
    exact = r >= REJECTION_CAP_DB
    rows: list[tuple[str, float | str]] = []
    for i, label in enumerate(labels):
        if exact[0] and not exact[i + 1]:
            rows.append((label, f"{U.NOMINAL_CANCELS}; with +1 % on this part alone it is {r[i + 1]:.1f} dB"))
        elif exact[i + 1] and not exact[0]:
            rows.append((label, U.PART_CANCELS))
        else:
            rows.append((label, 0.0 if exact[0] else float(r[i + 1] - r[0])))
    if exact[0]:  # the parts that spoil an exact balance most come first
        return sorted(rows, key=lambda x: r[labels.index(x[0]) + 1])
    return sorted(rows, key=lambda x: -abs(x[1]) if isinstance(x[1], float) else 0.0)


def sensitivity_record(part: str, change) -> dict:
    """One entry of ``sensitivity_db_per_percent``: {"part", "db"}, or "db": null with "db_reason"."""
    from . import undefined as U

    row = {"part": part}
    return U.mark(row, "db", change) if isinstance(change, str) else U.put(row, "db", change, "undefined")


# ----------------------------------------------------------------------------
# Measured from a time-domain render


def hum_only(design, *, coil: str | None = None, seconds: float = 2.0, sample_rate: int = 48000) -> np.ndarray:
    """A hum-only render at the amp input (V): the field's dB/dt through the digital filters.

    ``coil`` = "coil_a" or "coil_b" keeps only that coil's hum EMF (the other's
    turns_area set to zero, the circuit unchanged). The dB/dt signal is
    computed analytically and passed through the discretised common path
    (not the engine's steady-state shortcut), so this is a true time-domain
    render of the hum, start-up transient included.
    """
    if design.hum.sources:
        from .hum_sources import hum_only as source_hum_only

        return source_hum_only(design, coil=coil, seconds=seconds, sample_rate=sample_rate)
    from ..chain import hum as hm
    from ..chain.stream import make_plan, render_signal

    d = design
    if coil is not None:
        other = "coil_b" if coil == "coil_a" else "coil_a"
        d = replace(d, **{other: replace(getattr(d, other), turns_area=0.0)})
    n = int(round(seconds * sample_rate))
    h = d.hum
    dbdt = hm.field_rate(n, sample_rate=sample_rate, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics)
    plan = make_plan(d, sample_rate=sample_rate, hum_filter=True)
    return render_signal(d, np.zeros((2, n)), sample_rate=sample_rate, db_dt=dbdt, plan=plan)["out"]


def measured_rejection(design, *, seconds: float = 2.0, settle: float = 1.0, sample_rate: int = 48000) -> dict:
    """Per-harmonic rejection measured from time-domain hum-only renders.

    Returns {"frequency_hz", "rejection_db", "output_v", and the three
    waveforms "both", "coil_a", "coil_b"}; the first ``settle`` seconds (the
    coupling capacitors' start-up) are left out of the measurement, which
    spans a whole number of mains cycles.
    """
    f, _ = field_derivative(design.hum)
    waves = {k: hum_only(design, coil=c, seconds=seconds, sample_rate=sample_rate) for k, c in (("both", None), ("coil_a", "coil_a"), ("coil_b", "coil_b"))}
    start = int(round(settle * sample_rate))
    cycles = int((waves["both"].size - start) * design.hum.mains // sample_rate)
    stop = start + int(round(cycles * sample_rate / design.hum.mains))
    amp = {k: harmonic_amplitudes(w[start:stop], sample_rate=sample_rate, frequencies_hz=f) for k, w in waves.items()}
    big = np.maximum(np.abs(amp["coil_a"]), np.abs(amp["coil_b"]))
    with np.errstate(divide="ignore", invalid="ignore"):
        rej = 20 * np.log10(big / np.abs(amp["both"]))
    return {"frequency_hz": f, "rejection_db": rej, "output_v": np.abs(amp["both"]), **waves}


# ----------------------------------------------------------------------------
# The library form of ``render hum``


@dataclass(frozen=True)
class HumHarmonic:
    """One mains harmonic at the amp input (peak volts)."""

    harmonic: int
    frequency_hz: float
    rejection_db: float | None  # None where the field has no such harmonic, or where the coils' hum cancels exactly
    output_v: float
    coil_a_v: float
    coil_b_v: float
    rejection_db_reason: str | None = None  # why rejection_db is None, in words
    sources: tuple[dict, ...] = ()  # with hum sources: each one's share (source, kind, rejection_db, output_v, coil_a_v, coil_b_v)


@dataclass(frozen=True)
class HumReport:
    """A design's hum, per mains harmonic, with its passive reference's (see :func:`hum`).

    Attributes
    ----------
    design : str
    mains_hz : float, Hz
    field_t : float or None, T, the room's reference peak flux density
        (harmonic h peaks at field_t × its harmonics[h−1]); None
        when hum sources replace the one-number field
    harmonics : tuple of HumHarmonic
    total_v_rms : float, V rms over the harmonics
    note_to_hum_db : float or None, dB
        The reference note (``reference_note``: 196 Hz, 0.5 m/s peak string
        velocity) over the total hum, both rms; None when there is no hum
        (the coils cancel it exactly, or no source links either coil) or no
        signal (the coils cancel the string), with the reason in
        ``note_to_hum_reason``. Hum and noise on one scale (a 1 kHz
        reference) are in ``render hum --json``'s ``hum_and_noise``.
    passive_total_v_rms : float, V
    passive_note_to_hum_db : float or None, dB
    reference_note : dict
        What ``note_to_hum_db`` is relative to.
    note_to_hum_reason, passive_note_to_hum_reason : str or None
        Why the figure beside it is None, in words.
    table : dict
        The same figures in the JSON layout of ``render hum --json`` (also :meth:`as_dict`).
    sources : tuple of dict
        The hum sources (kind, strength, place, axis, profile, phase, each
        coil's flux linkage); empty for the one-number field.
    warnings : tuple of str
        Approximations in force (a dipole source on a coil without geometry).
    """

    design: str
    mains_hz: float
    field_t: float | None
    harmonics: tuple[HumHarmonic, ...]
    total_v_rms: float
    note_to_hum_db: float | None
    passive_total_v_rms: float
    passive_note_to_hum_db: float | None
    reference_note: dict
    table: dict
    note_to_hum_reason: str | None = None
    passive_note_to_hum_reason: str | None = None
    sources: tuple[dict, ...] = ()
    warnings: tuple[str, ...] = ()

    def as_dict(self) -> dict:
        return dict(self.table)


def hum(design, *, rig=None, sources=None) -> HumReport:
    """Hum cancellation of ``design`` with its own coils, per mains harmonic.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
        Its ``[hum]`` (mains, field or sources, harmonics) and controls replace the design's own.
    sources : sequence of DipoleSource / UniformSource, or None
        Hum sources in space (:mod:`render.magnetics.hum`) that replace the
        room's (after ``rig``); each coil's turns are its ``geometry``
        (:meth:`render.design.Design.with_geometry`) or, without one, a
        point coil of its ``turns_area``.

    Returns
    -------
    HumReport
        See also :func:`render.hum_map` (rejection against a dipole's place)
        and :func:`render.hum_positions` (over random places).
    """
    from ..arguments import items
    from ..design import apply_rig
    from ..magnetics.hum import DipoleSource, UniformSource

    if sources is not None:
        sources = items("sources", sources, (DipoleSource, UniformSource), "render.DipoleSource(...) or render.UniformSource(...)")
        from ..magnetics.schema import MAX_SOURCES, too_many_sources

        if len(sources) > MAX_SOURCES:  # as a rig file's [[hum.source]] tables are held
            from ..errors import ArgumentError

            raise ArgumentError("sources", f"{len(sources)} sources", too_many_sources())
    d = apply_rig(design, rig)
    if sources is not None:
        from ..magnetics.schema import check_source_places

        check_source_places(sources, coil_a=d.coil_a, coil_b=d.coil_b, argument="sources")  # as a rig file's [[hum.source]] are checked
        d = replace(d, hum=replace(d.hum, sources=sources))
    t = hum_table(d)
    return HumReport(
        design=d.name,
        mains_hz=t["mains_hz"],
        field_t=t["field_t"],
        harmonics=tuple(HumHarmonic(**{**row, "sources": tuple(row.get("sources", ()))}) for row in t["harmonics"]),
        total_v_rms=t["total_v_rms"],
        note_to_hum_db=t["note_to_hum_db"],
        passive_total_v_rms=t["passive"]["total_v_rms"],
        passive_note_to_hum_db=t["passive"]["note_to_hum_db"],
        reference_note=t["reference_note"],
        table=t,
        note_to_hum_reason=t.get("note_to_hum_db_reason"),
        passive_note_to_hum_reason=t["passive"].get("note_to_hum_db_reason"),
        sources=tuple(t.get("sources", ())),
        warnings=tuple(t.get("warnings", ())),
    )
