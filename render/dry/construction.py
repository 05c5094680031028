"""A phrase as a constructed pickup senses it: two polarisations, bends, and the nonlinear flux.

Used when a design has ``[construction]`` (:mod:`render.magnetics.sensing`);
without one, :func:`render.dry.synthesize` is unchanged.

Model, per note (the modes of :mod:`render.dry.modal`: stiff-string
frequencies, a triangular pluck, losses b1 + b3·(nπ/L)², mutes):

- **Two polarisations.** Each mode moves in two perpendicular directions
  across the string, the eigen-axes of the bridge's support, tilted by
  ``polarisation_angle`` from the top. The one nearer the top's plane
  decays with ``lateral_decay`` (T60 of the lowest modes), the other with
  ``decay``; their frequencies differ by ``polarisation_split`` cents. A
  pluck at ``angle`` from the top starts both, each with its share of the
  displacement; their sum shows the double decay and the beating of guitar
  plucks (Woodhouse, "On the synthesis of guitar plucks", Acta Acustica
  united with Acustica 90(5), 928–944, 2004; and "Plucked guitar
  transients: comparison of measurements and synthesis", same volume,
  945–965).
- **What each coil sees.** By reciprocity, an element dx of string moved by
  u_y, u_z changes the coil's flux linkage by (g_y(x)·u_y + g_z(x)·u_z)·dx,
  g_y, g_z its sideways and vertical sensing functions (``along_y``,
  ``along_z``; their integrals S_y, S_z are the sensitivities). The flux
  table Φ(y, z) is that of the whole string displaced rigidly, so it is
  looked up at one displacement "at the pickup": each mode's shape
  projected on the vertical function w(x) = g_z/S_z (a unit integral),
  ū = Σ_n a_n(t)·∫ w(x)·sin(nπx/L) dx, in both directions.
- **Bends.** A bend pushes the string sideways at the fret until its
  tension gives the pitch: (f'/f)² − 1 = ΔL/(ε0·L_s), with ε0 the string's
  strain at pitch (its tension over E·A of the core; the tension from
  Mersenne's law with the wound string's wrap counted as mass), L_s the
  scale length (the string slides over the frets) and ΔL ≈ D²/2·(1/L + 1/l)
  the stretch of the two straight parts, L from the saddle to the fret and l
  from the fret to the nut. At the pickup the offset is D·x/L. Strings 1 to
  n/2 are pushed towards the bass side (−y), the others pulled towards the
  treble side (+y) (common practice, no source). Open strings do not bend
  sideways.
- **The EMF**, per coil, as it drives its input: hum_polarity·dΦ/dt with
  Φ(ū_y, ū_z) the flux linkage of the string displaced rigidly by ū (the
  construction's table, a bicubic spline), so dΦ/dt = Φ_y·dū_y/dt + Φ_z·dū_z/dt,
  plus, per direction d, the part of the motion the rigid table misses at
  first order: r = Σ_d ∫ (g_d(x) − S_d·w(x))·∂u_d/∂t dx. So each direction's
  motion is projected on its own sensing function, the sideways motion on
  g_y (its shape differs from the vertical one: on the demos' open strings
  a mode's two couplings differ by a median of up to 2.2 dB over modes 1–5
  and 7.5 dB over modes 11–20; and S_y can be near zero over a pole), while the slopes' change with the
  displacement (the nonlinearity and a bend's dropout) is taken at ū. To
  first order the EMF is Σ_d ∫ g_d·∂u_d/∂t dx, but for the spline's slope at
  rest against S_d (within 4e-4 of each string's S_z on the demos, measured by hand). The vertical part of r
  is zero (w is g_z/S_z) unless a coil senses no vertical motion, when w is
  the sideways function. Summed over the strings.

The result is a :class:`~render.dry.Dry` whose rows are each coil's EMF
divided by that coil's ``signal_polarity``·``sensitivity`` (the derived
figures of :mod:`render.design.construction`): the rest of the chain
multiplies them back, so it renders the EMF exactly.

Memory: five rows per coil (ū_y, ū_z, their rates and r) of one string at a
time, float64: 80 bytes per sample. A limit search keeps every moving
string's motion instead (:class:`PhraseMotion`, float32: 240 bytes per sample
with six strings, 98 MB for the 8.5 s demo phrase), up to
:data:`MOTION_BYTES_MOST` (256 MiB, about 23 s of six moving strings at 48
kHz); a longer phrase is synthesised again at each strength.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
from scipy.interpolate import RectBivariateSpline

from ..errors import InputError
from .modal import (
    _BLOCK,
    _DIRECT_SPAN,
    _FLOOR,
    _MODE_GROUP,
    MAX_MODE_HZ,
    T60_FACTOR,
    Plucks,
    _highest_ratio,
    _retuned_time,
    _sum_blocks,
    decay_rates,
    mode_frequencies,
    mute_rates,
    one_blas_thread,
    pitch_ratio,
    pluck_amplitudes,
    plucks,
    unsynthesised_notes,
)
from .phrase import LATERAL_DECAY_FACTOR, STEEL_DENSITY, STEEL_MODULUS, Note, Phrase

# The displacement that looks the flux up is summed over the modes below this
# frequency only: a mode's displacement falls as 1/n² (a triangular pluck), so
# the modes above it move the string little: the largest of them is about
# 7e-4 of the fundamental's amplitude for an open low E, 1e-2 for an open high
# E and 2e-2 an octave above that (measured by hand; no test holds these).
# They enter the EMF only through the flux's curvature over that small
# displacement (a second-order effect); their velocity, which the EMF
# carries, is summed in full (our own bound, no source).
DISPLACEMENT_MAX_HZ = 4000.0

ROWS = 5  # per coil: ū_y, ū_z, dū_y/dt, dū_z/dt (m, m/s) and r, the linear remainder of the EMF (V; see the EMF above)

__all__ = ["ROWS", "LeftRange", "Pickup", "bend_offset", "bend_share", "mode_couplings", "mode_projections", "pickup_emf", "pickup_velocity", "string_strain"]
assert _BLOCK > 0  # the block sums of modal.py are shared as they are


class LeftRange(str):
    """A warning that a string swung past the construction's flux table (the flux is held at its edge).

    A ``str`` like every other warning; :mod:`render.runs.limit_strength` tells it apart by its type.
    """


def string_strain(*, core: float, outer: float, frequency: float, scale_length: float) -> float:
    """ε0 = T/(E·A_core): the strain of a string tuned to ``frequency`` (Hz) over ``scale_length`` (m).

    The tension T = µ·(2·L·f)² (Mersenne's law) with the linear density µ of
    the core plus, for a wound string, one layer of round wrap wire of
    diameter w = (outer − core)/2 laid turn against turn: ρ·π²·w·(core + w)/4
    per metre. Steel: E = 200 GPa, ρ = 7850 kg/m³ (from memory, as in
    :mod:`render.dry.phrase`).
    """
    w = (outer - core) / 2.0
    mu = STEEL_DENSITY * (math.pi / 4.0 * core**2 + math.pi**2 * w * (core + w) / 4.0)
    tension = mu * (2.0 * scale_length * frequency) ** 2
    return tension / (STEEL_MODULUS * math.pi / 4.0 * core**2)


def bend_offset(ratio, *, strain: float, length: float, scale_length: float) -> np.ndarray:
    """The sideways push D (m) at the fret that raises the pitch by ``ratio`` (≥ 1).

    length : m, saddle to the fret (the vibrating length); scale_length : m
    From (ratio² − 1) = ΔL/(ε0·L_s), ΔL ≈ D²/2·(1/L + 1/l), l = L_s − L.
    An open string (l = 0) gives 0.
    """
    r = np.maximum(np.asarray(ratio, float), 1.0)
    rest = scale_length - length
    if rest <= 1e-6:
        return np.zeros_like(r)
    return np.sqrt(2.0 * (r * r - 1.0) * strain * scale_length / (1.0 / length + 1.0 / rest))


def bend_share(sense, *, x_offset: float, length: float) -> float:
    """The share x/L of a bend's sideways push (at the fret) that reaches a coil: x its sensing's centre.

    sense : StringSensing, the string as the coil senses it; x_offset : m, pickup axes to the saddle;
    length : m, saddle to the fret. The centre is the mean of x weighted by the vertical sensing
    function (its positive part, sign taken out); 1 beyond the fret.
    """
    w = np.clip(_weight(sense), 0.0, None)
    x_p = float(((sense.x + x_offset) * w).sum() / w.sum())
    return min(x_p / length, 1.0)


def mode_couplings(n: np.ndarray, *, x_saddle: np.ndarray, weight: np.ndarray, length: float) -> np.ndarray:
    """∫ w(x)·sin(nπx/L) dx over the samples (uniform spacing), w normalised to a unit integral: shape (len(n),).

    x_saddle : np.ndarray [shape=(m,)], m from the bridge saddle; weight : np.ndarray [shape=(m,)]
    Samples at or beyond the stopping fret see no motion.
    """
    w = np.where(x_saddle < length, weight, 0.0)
    total = weight.sum()
    shapes = np.sin(np.outer(n, np.pi * x_saddle / length))
    return shapes @ w / total


def mode_projections(n: np.ndarray, *, x_saddle: np.ndarray, along: np.ndarray, length: float) -> np.ndarray:
    """∫ g(x)·sin(nπx/L) dx over the samples (uniform spacing, rectangle rule), g a sensing function as it is (V·s/m per metre): shape (len(n),), V·s/m.

    x_saddle : np.ndarray [shape=(m,)], m from the bridge saddle; along : np.ndarray [shape=(m,)]
    Samples at or beyond the stopping fret see no motion.
    """
    step = float(x_saddle[1] - x_saddle[0]) if x_saddle.size > 1 else 0.0
    g = np.where(x_saddle < length, along, 0.0)
    return np.sin(np.outer(n, np.pi * x_saddle / length)) @ g * step


def _remainders(n: np.ndarray, sense, *, x_saddle: np.ndarray, length: float, k: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per direction (y, z), ∫ (g_d − S_d·w)·sin(nπx/L) dx: what the rigid table, looked up at the projection k on w, misses of each mode's linear EMF (V·s/m)."""
    return tuple(mode_projections(n, x_saddle=x_saddle, along=g, length=length) - s_d * k for g, s_d in ((sense.along_y, sense.sensitivity_y), (sense.along_z, sense.sensitivity_z)))


def _bend_remainder(sense, *, x_offset: float, length: float, scale_length: float, share: float) -> float:
    """∫ g_y(x)·b(x)/share dx − S_y (V·s/m): r per m/s of a bend's sideways push at the pickup, b(x) the bent string's shape
    (x/L from the saddle to the fret, back to 0 at the nut) and ``share`` its value at the coil's centre (:func:`bend_share`)."""
    xs = sense.x + x_offset
    rest = max(scale_length - length, 1e-9)
    shape = np.clip(np.where(xs < length, xs / length, (scale_length - xs) / rest), 0.0, 1.0)
    step = float(xs[1] - xs[0]) if xs.size > 1 else 0.0
    return float((sense.along_y * shape).sum() * step / share - sense.sensitivity_y) if share > 0 else 0.0


def _weight(sense) -> np.ndarray:
    """Where a coil sees the string: its vertical sensing function with its sign taken out (the lateral one where it senses no vertical motion)."""
    if sense.sensitivity_z != 0.0:
        return sense.along_z * np.sign(sense.sensitivity_z)
    if sense.sensitivity_y != 0.0:
        return sense.along_y * np.sign(sense.sensitivity_y)
    return np.abs(sense.along_z) + np.abs(sense.along_y) + (sense.x == sense.x[np.argmin(np.abs(sense.x))])


def _direct(buf, amp, sigma, omega, lives, delta, fs, *, ratio) -> None:
    """Modes whose frequency moves (a bend or vibrato): Im(A·e^{−σt + iω·τ(t)})·√ratio, τ the integral of the ratio.

    The √ratio is the velocity's amplitude under the adiabatic invariant
    E/ω of a slowly retuned oscillator, as in :mod:`render.dry.modal`.
    """
    span = buf.shape[1]
    t = (np.arange(span) + delta) / fs
    tau = _retuned_time(ratio, delta, fs)
    order = np.argsort(-lives, kind="stable")
    for g in range(0, order.size, _MODE_GROUP):
        idx = order[g : g + _MODE_GROUP]
        for a in range(0, int(lives[idx].max()), _DIRECT_SPAN):
            sl = slice(a, min(a + _DIRECT_SPAN, int(lives[idx].max())))
            env = np.exp(np.maximum(-np.outer(sigma[idx], t[sl]), -700.0))
            ph = np.outer(omega[idx], tau[sl])
            buf[:, sl] += amp[:, idx].real @ (np.sin(ph) * env) + amp[:, idx].imag @ (np.cos(ph) * env)
    buf *= np.sqrt(ratio)[None, :]


def pickup_emf(phrase: Phrase, sensing, *, hum_polarity=(1, 1), cores, outers, sample_rate: int, seed: int = 0, seconds: float | None = None) -> tuple[np.ndarray, tuple[str, ...]]:
    """Each coil's EMF at its input (V), shape (2, n), and warnings.

    sensing : :class:`render.magnetics.sensing.PickupSensing`
    hum_polarity : each coil's wiring (+1 or −1)
    cores, outers : m, the strings' core and outer diameters, lowest first (for bends)
    """
    emf, warnings, _ = sense_phrase(phrase, sensing, hum_polarity=hum_polarity, cores=cores, outers=outers, sample_rate=sample_rate, seed=seed, seconds=seconds)
    return emf, warnings


@one_blas_thread
def sense_phrase(phrase: Phrase, sensing, *, hum_polarity=(1, 1), cores, outers, sample_rate: int, seed: int = 0, seconds: float | None = None, keep: bool = False):
    """:func:`pickup_emf`'s EMF and warnings, and with ``keep`` the strings' motion kept for sensing again at another strength.

    Returns
    -------
    emf : np.ndarray [shape=(2, n)], V
    warnings : tuple of str
    motion : :class:`PhraseMotion` or None
        None unless ``keep``, when no string sounds, or when it would take more than :data:`MOTION_BYTES_MOST`.
    """
    from .strength import strongest_pluck

    plan = _plan(phrase, sensing, cores=cores, outers=outers, sample_rate=sample_rate, seed=seed, seconds=seconds)
    keep = keep and bool(plan.strings) and len(plan.strings) * 2 * ROWS * plan.n_total * 4 <= MOTION_BYTES_MOST
    emf = np.zeros((2, plan.n_total))
    warnings: list[str] = []
    moving, fixed = [], []
    for j in plan.strings:  # one string's motion at a time (see Memory above), unless kept
        chans, bent = _string_motion(plan, j, keep_fixed=keep)
        _add_string_emf(emf, warnings, sensing, j, chans, hum_polarity)
        if keep:
            moving.append((chans - bent if bent is not None else chans).astype(np.float32))
            fixed.append(bent)
    motion = PhraseMotion(sensing=sensing, strings=plan.strings, moving=tuple(moving), fixed=tuple(fixed), strongest_m=strongest_pluck(phrase), samples=plan.n_total) if keep else None
    return emf, tuple(dict.fromkeys(warnings)), motion


@dataclass(frozen=True, eq=False)
class PhraseMotion:
    """Every moving string's motion at both coils, kept to be sensed again at another pluck strength.

    Attributes
    ----------
    sensing : :class:`render.magnetics.sensing.PickupSensing`
    strings : tuple of int
        The moving strings (indices into the sensing tables, lowest string first).
    moving : tuple of np.ndarray [shape=(2, ROWS, n)], float32, m, m/s and V
        Per string, per coil, ū_y, ū_z, dū_y/dt, dū_z/dt and r of the plucks: linear in the pluck strength.
    fixed : tuple of (np.ndarray [shape=(2, ROWS, n)] or None), m, m/s and V
        Per string, the part that does not scale with the pluck (a bend's sideways offset).
    strongest_m : float, m
        The phrase's strongest pluck as synthesised.
    samples : int
        The length n.
    """

    sensing: object
    strings: tuple
    moving: tuple
    fixed: tuple
    strongest_m: float
    samples: int


MOTION_BYTES_MOST = 256 * 2**20  # a longer phrase is synthesised again at each strength instead of kept


def phrase_motion(phrase: Phrase, sensing, *, cores, outers, sample_rate: int, seed: int = 0, seconds: float | None = None) -> PhraseMotion | None:
    """The phrase's string motion at both coils (:class:`PhraseMotion`), or None when it would take more than :data:`MOTION_BYTES_MOST`.

    Kept in float32: the EMF sensed from it differs from a new synthesis by about 1e-7 of itself.
    """
    return sense_phrase(phrase, sensing, cores=cores, outers=outers, sample_rate=sample_rate, seed=seed, seconds=seconds, keep=True)[2]


def motion_emf(motion: PhraseMotion, *, strongest_m: float, hum_polarity=(1, 1)) -> tuple[np.ndarray, tuple[str, ...]]:
    """Each coil's EMF (V), shape (2, n), and warnings, with every pluck of ``motion`` scaled so that its strongest is ``strongest_m`` (m).

    The plucks' motion is linear in their strength (:mod:`render.dry.strength`); a bend's offset is not scaled.
    """
    k = strongest_m / motion.strongest_m
    emf = np.zeros((2, motion.samples))
    warnings: list[str] = []
    for j, moving, fixed in zip(motion.strings, motion.moving, motion.fixed):
        _add_string_emf(emf, warnings, motion.sensing, j, moving, hum_polarity, scale=k, fixed=fixed)
    return emf, tuple(dict.fromkeys(warnings))


def range_strength_m(motion: PhraseMotion) -> float:
    """The strongest pluck (m) at which every string of ``motion`` stays inside its computed flux table, at both coils.

    The plucks' displacement ū is linear in their strength, a bend's offset f is not: at the strength
    k·s (s the phrase's strongest) a sample is inside [lo, hi] while k·ū + f is, so
    k ≤ (hi − f)/ū where ū > 0 and k ≤ (lo − f)/ū where ū < 0; the least such k over every
    sample, string, coil and direction, times s. 0 when a bend alone leaves the table; inf when
    no string moves.
    """
    k_most = np.inf
    for j, moving, fixed in zip(motion.strings, motion.moving, motion.fixed):
        for c, coil in enumerate((motion.sensing.coil_a, motion.sensing.coil_b)):  # type: ignore[attr-defined]
            table = coil[j]
            for axis, grid in ((0, table.dy), (1, table.dz)):
                u = np.asarray(moving[c][axis], float)
                f = np.zeros_like(u) if fixed is None else np.asarray(fixed[c][axis], float)
                lo, hi = float(grid[0]), float(grid[-1])
                if np.any(f < lo) or np.any(f > hi):
                    return 0.0
                with np.errstate(divide="ignore", invalid="ignore"):
                    up = np.where(u > 0, (hi - f) / u, np.inf)
                    down = np.where(u < 0, (lo - f) / u, np.inf)
                k_most = min(k_most, float(np.min(up, initial=np.inf)), float(np.min(down, initial=np.inf)))
    return k_most * motion.strongest_m


def motion_velocity(motion: PhraseMotion, pickup: Pickup, *, strongest_m: float) -> tuple[np.ndarray, tuple[str, ...]]:
    """:func:`pickup_velocity`'s rows (m/s, shape (2, n)) and warnings from a kept :class:`PhraseMotion`, its plucks scaled so that the strongest is ``strongest_m`` (m)."""
    emf, warnings = motion_emf(motion, strongest_m=strongest_m, hum_polarity=pickup.hum_polarity)
    return emf / np.asarray(pickup.gain, float)[:, None], warnings


@dataclass(frozen=True)
class _Plan:
    """What every string's synthesis shares: the phrase and its checked, jittered notes."""

    phrase: Phrase
    sensing: Any  # render.magnetics.sensing.PickupSensing
    cores: tuple
    outers: tuple
    plucks: Plucks
    strings: tuple  # indices j of the strings with a note that sounds

    @property
    def n_total(self) -> int:
        return self.plucks.n_total


def _plan(phrase: Phrase, sensing, *, cores, outers, sample_rate: int, seed: int, seconds: float | None) -> _Plan:
    inst = phrase.instrument
    n_strings = len(sensing.coil_a)
    if inst.strings != n_strings:
        raise InputError(
            f"{phrase.source}: the phrase's instrument has {inst.strings} strings, the design's [construction] {n_strings};"
            f" play it a phrase for {n_strings} strings (--dry, with [instrument] tuning of {n_strings} pitches) or give the construction's string_cores (and string_diameters and string_height, where they are lists) one entry per string of the phrase"
        )
    p = plucks(phrase, sample_rate=sample_rate, seed=seed, seconds=seconds)
    strings = tuple(j for j in range(n_strings) if any(note.string == n_strings - j for note, _ in p.notes))
    return _Plan(phrase, sensing, tuple(cores), tuple(outers), p, strings)


def _string_motion(plan: _Plan, j: int, *, keep_fixed: bool) -> tuple[np.ndarray, np.ndarray | None]:
    """String j's (2, ROWS, n) motion at both coils (ū_y, ū_z, dū_y/dt, dū_z/dt, r per coil), and its unscaled part (a bend's offset) when asked and present."""
    inst = plan.phrase.instrument
    n_strings = len(plan.sensing.coil_a)
    string = n_strings - j
    chans = np.zeros((2, ROWS, plan.n_total))
    fixed = np.zeros((2, ROWS, plan.n_total)) if keep_fixed else None
    bent = False
    strain = string_strain(core=plan.cores[j], outer=plan.outers[j], frequency=inst.open_pitches[j], scale_length=inst.scale_length)
    for note, args in plan.plucks.notes:
        if note.string != string:
            continue
        bent |= _add_note(
            chans,
            note,
            inst,
            coils=[plan.sensing.coil_a[j], plan.sensing.coil_b[j]],
            x_offset=plan.sensing.x_offset,
            strain=strain,
            side=-1.0 if string <= n_strings / 2 else 1.0,
            fixed=fixed,
            **args,
        )
    return chans, (fixed if bent else None)


def _add_string_emf(emf: np.ndarray, warnings: list, sensing, j: int, chans: np.ndarray, hum_polarity, *, scale: float = 1.0, fixed: np.ndarray | None = None) -> None:
    """Add string j's EMF, Φ_y·dū_y/dt + Φ_z·dū_z/dt + r per coil, from its (2, ROWS, n) motion ``scale``·chans + ``fixed``.

    The slopes Φ = ∂F/∂y, ∂F/∂z are those of the flux table's bicubic spline (scipy's
    ``RectBivariateSpline(...).ev(y, z, dx=1)``, ``dy=1``), evaluated compiled in one pass
    (:func:`render.dry._flux_kernel.add_emf`); the displacement is held at the table's edge.
    """
    from ._flux_kernel import add_emf, slope_tables  # numba, only once a constructed pickup is sensed

    string = len(sensing.coil_a) - j
    for c, coil in enumerate((sensing.coil_a, sensing.coil_b)):
        s = coil[j]
        spline = RectBivariateSpline(s.dy, s.dz, s.flux, kx=3, ky=3)
        box = (s.dy[0], s.dy[-1], s.dz[0], s.dz[-1])
        emf[c] += hum_polarity[c] * scale * chans[c, 4]
        if fixed is not None:
            emf[c] += hum_polarity[c] * fixed[c, 4]
        if add_emf(slope_tables(spline.tck), box, chans[c, :4], emf[c], scale=scale, fixed=None if fixed is None else fixed[c, :4], sign=hum_polarity[c]):
            warnings.append(
                LeftRange(
                    f"string {string}: its displacement at the pickup left the computed range "
                    f"({s.dy[0] * 1e3:+.1f}…{s.dy[-1] * 1e3:+.1f} mm sideways, {s.dz[0] * 1e3:+.1f}…{s.dz[-1] * 1e3:+.1f} mm vertically); the flux is held at its edge there"
                )
            )


def _add_note(chans, note: Note, inst, *, coils, x_offset, fs, onset, end, strength, pluck_at, strain, side, fixed=None) -> bool:
    """Add one note's displacement and velocity at the pickup, both directions, to ``chans`` (2, 4, n); its bend's offset to ``fixed`` too when given. True when it bends sideways."""
    length = note.length
    b = inst.string_inharmonicity(note.string) * (inst.scale_length / length) ** 2
    f0 = note.frequency / math.sqrt(1.0 + b)
    hi_ratio = _highest_ratio(note)
    limit = min(MAX_MODE_HZ, 0.5 * fs)
    n = np.arange(1, max(1, int(limit / (f0 * hi_ratio)) + 1) + 1, dtype=float)
    freqs = mode_frequencies(n, f0=f0, inharmonicity=b)
    # the split moves the higher polarisation up by half of it: that one stays below Nyquist too
    spread = 2.0 ** (inst.polarisation_split / 2400.0)
    keep = (freqs * hi_ratio < limit) & (freqs * hi_ratio * spread < 0.5 * fs)
    n, freqs = n[keep], freqs[keep]
    if n.size == 0:
        return False
    mute = mute_rates(freqs, mute=note.mute, mute_decay=inst.mute_decay)
    sig_v = decay_rates(n, length=length, decay=inst.decay, curvature_loss=inst.curvature_loss) + mute
    lateral = inst.lateral_decay if inst.lateral_decay is not None else inst.decay * LATERAL_DECAY_FACTOR
    sig_l = decay_rates(n, length=length, decay=lateral, curvature_loss=inst.curvature_loss) + mute
    split = 2.0 ** (inst.polarisation_split / 1200.0)
    om = 2.0 * np.pi * freqs
    om_l, om_v = om / math.sqrt(split), om * math.sqrt(split)
    a = pluck_amplitudes(n, strength=strength, beta=pluck_at / length)
    tilt, ang = math.radians(inst.polarisation_angle), math.radians(note.angle)
    e_l = np.array([math.cos(tilt), math.sin(tilt)])  # (y, z): the axis nearer the top's plane
    e_v = np.array([-math.sin(tilt), math.cos(tilt)])
    p = np.array([math.cos(ang), math.sin(ang)])
    sigma = np.r_[sig_l, sig_v]
    omega = np.r_[om_l, om_v]
    # released from rest: displacement Im((σ/ω + i)·e^{st}), velocity Im(−(ω² + σ²)/ω·e^{st})
    disp = np.r_[a, a] * (sigma / omega + 1j)
    vel = -np.r_[a, a] * (omega**2 + sigma**2) / omega + 0j
    amp = np.zeros((2 * ROWS, 2 * n.size), complex)
    for c, sense in enumerate(coils):
        xs = sense.x + x_offset
        k = mode_couplings(n, x_saddle=xs, weight=_weight(sense), length=length)
        kk = np.r_[k, k]
        for d, rest in enumerate(_remainders(n, sense, x_saddle=xs, length=length, k=k)):  # y, z
            share = np.r_[np.full(n.size, (p @ e_l) * e_l[d]), np.full(n.size, (p @ e_v) * e_v[d])]
            amp[ROWS * c + d] = disp * kk * share
            amp[ROWS * c + 2 + d] = vel * kk * share
            amp[ROWS * c + 4] += vel * np.r_[rest, rest] * share
    sigma_rel = T60_FACTOR / inst.release
    hold = end - onset
    life = _FLOOR / sigma
    if math.isfinite(hold):
        life = np.minimum(life, hold + _FLOOR / (sigma + sigma_rel))
    n_total = chans.shape[2]
    i0 = int(math.ceil(onset * fs - 1e-9))
    if i0 >= n_total:
        return False
    delta = i0 - onset * fs
    span = min(n_total - i0, int(math.ceil(float(life.max()) * fs)) + 1)
    lives = np.minimum(np.ceil(life * fs).astype(int) + 1, span)
    buf = np.zeros((2 * ROWS, span))
    t = (np.arange(span) + delta) / fs
    disp = np.array([0, 1, ROWS, ROWS + 1])
    vel = np.array([2, 3, 4, ROWS + 2, ROWS + 3, ROWS + 4])  # the rates and r
    low = np.flatnonzero(omega < 2 * np.pi * DISPLACEMENT_MAX_HZ)  # the displacement's modes (see DISPLACEMENT_MAX_HZ)
    if note.bend is None and note.vibrato is None:
        part = np.zeros((vel.size, span))
        _sum_blocks(part, amp[vel], sigma, omega, lives, delta, fs)
        buf[vel] = part
        part = np.zeros((4, span))
        _sum_blocks(part, amp[disp][:, low], sigma[low], omega[low], lives[low], delta, fs)
        buf[disp] = part
    else:
        ratio = pitch_ratio(t, note=note)
        part = np.zeros((vel.size, span))
        _direct(part, amp[vel], sigma, omega, lives, delta, fs, ratio=ratio)
        buf[vel] = part
        part = np.zeros((4, span))
        _direct(part, amp[disp][:, low], sigma[low], omega[low], lives[low], delta, fs, ratio=ratio)
        buf[disp] = part / ratio  # displacement falls as ratio^(−1/2) where velocity rises as ratio^(1/2)
    if math.isfinite(hold):
        buf *= np.exp(-sigma_rel * np.maximum(t - hold, 0.0))
    if note.bend is not None and note.bend.semitones > 0:
        ratio = pitch_ratio(t, note=replace(note, vibrato=None))
        d_fret = bend_offset(ratio, strain=strain, length=length, scale_length=inst.scale_length)
        for c, sense in enumerate(coils):
            share = bend_share(sense, x_offset=x_offset, length=length)
            off = side * d_fret * share
            if math.isfinite(hold):  # the finger lets go as the note is damped
                off = off * np.exp(-sigma_rel * np.maximum(t - hold, 0.0))
            slope = np.gradient(off, 1.0 / fs)
            per_push = _bend_remainder(sense, x_offset=x_offset, length=length, scale_length=inst.scale_length, share=share)
            buf[ROWS * c] += off
            buf[ROWS * c + 2] += slope
            buf[ROWS * c + 4] += per_push * slope
            if fixed is not None:
                fixed[c, 0, i0 : i0 + span] += off
                fixed[c, 2, i0 : i0 + span] += slope
                fixed[c, 4, i0 : i0 + span] += per_push * slope
        chans[:, :, i0 : i0 + span] += buf.reshape(2, ROWS, span)
        return True
    chans[:, :, i0 : i0 + span] += buf.reshape(2, ROWS, span)
    return False


@dataclass(frozen=True, eq=False)
class Pickup:
    """What the dry synthesis needs of a design with a construction.

    sensing : :class:`render.magnetics.sensing.PickupSensing`
    hum_polarity : (coil_a, coil_b), the wiring
    gain : (coil_a, coil_b), V·s/m, each coil's signal_polarity·sensitivity (the chain multiplies by it)
    cores, outers : m, the strings' core and outer diameters, lowest first
    """

    sensing: object
    hum_polarity: tuple
    gain: tuple
    cores: tuple
    outers: tuple


def pickup_velocity(
    phrase: Phrase, pickup: Pickup, *, sample_rate: int, seed: int = 0, seconds: float | None = None, keep_motion: bool = False
) -> tuple[np.ndarray, tuple[str, ...], dict, PhraseMotion | None]:
    """The phrase as the constructed pickup's coils sense it: each coil's EMF over its gain (m/s), shape (2, n); warnings; a description; the kept motion (:func:`sense_phrase`)."""
    from .phrase import describe

    emf, warnings, motion = sense_phrase(
        phrase, pickup.sensing, hum_polarity=pickup.hum_polarity, cores=pickup.cores, outers=pickup.outers, sample_rate=sample_rate, seed=seed, seconds=seconds, keep=keep_motion
    )
    velocity = emf / np.asarray(pickup.gain, float)[:, None]
    spread = 2.0 ** (phrase.instrument.polarisation_split / 2400.0)  # the upper polarisation, as _add_note keeps it
    warnings = (*phrase.warnings, *unsynthesised_notes(phrase, sample_rate, spread=spread), *warnings)
    info = describe(phrase) | {
        "seed": int(seed),
        "pickup": "construction: two polarisations, the sensing function and the nonlinear flux of the field solve; rows are each coil's EMF over its signal_polarity·sensitivity",
    }
    return velocity, warnings, info, motion
