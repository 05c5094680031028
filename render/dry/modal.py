"""Modal synthesis of the transverse velocity of plucked strings.

Each note is a sum of damped modes of a stiff string, plucked from rest into
a triangle and sensed at points along the string through windows of finite
width. Everything here is a pure function of its arguments.

Model (per note; L is the vibrating length, n = 1, 2, ...):

- mode frequencies f_n = n f0 sqrt(1 + B n^2) (stiff string), with f0 chosen
  so that f_1 is the note's pitch;
- displacement amplitudes of a triangular pluck of height h at beta = p / L,
  a_n = 2 h sin(n pi beta) / (n^2 pi^2 beta (1 - beta));
- decay rates sigma_n = b1 + b3 (n pi / L)^2, T60 = 6.908 / sigma_n, plus a
  mute term that grows with frequency;
- sensing weight sin(n pi x / L) at a point x from the bridge saddle, times
  sin(u) / u with u = n pi W / (2 L) for a window of width W;
- each mode released from rest: y_n(t) = a_n e^(-sigma t) (cos wt + (sigma/w) sin wt),
  so its velocity is -a_n (w^2 + sigma^2) / w e^(-sigma t) sin wt.

Notes with constant pitch are summed block by block as one matrix product
per group of modes (exact exponentials, no recursion); notes that bend or
carry vibrato are summed directly with a phase that integrates the
instantaneous frequency.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from render.dry.phrase import Instrument, Note, Phrase
from render.dry.phrase import highest_ratio as _highest_ratio
from render.errors import InputError
from render.units import shown

# ln(1000): a 60 dB fall in amplitude, T60 = T60_FACTOR / sigma.
T60_FACTOR = 3.0 * math.log(10.0)
# No modes above this, whatever the sample rate (upper limit of hearing,
# common practice, no source).
MAX_MODE_HZ = 20_000.0
# A mode is dropped once it has fallen 120 dB (e^-13.8).
_FLOOR = 6.0 * math.log(10.0)
# Frequency above which the mute's extra damping doubles (common practice, no source).
MUTE_CORNER_HZ = 1000.0
# Random variations per note, as fractions (common practice, no source).
STRENGTH_JITTER = 0.03
PLUCK_JITTER = 0.015

_BLOCK = 512  # samples per block of the matrix-product path
_MODE_GROUP = 32  # modes per matrix product
_BLOCKS_PER_PASS = 1024  # blocks per product, to bound memory (~8 MB per pass for two points)
_DIRECT_SPAN = 8192  # samples per slab of the direct (bent) path


# ---------------------------------------------------------------------------
# The pieces of the model, each testable on its own


def mode_frequencies(n: np.ndarray, *, f0: float, inharmonicity: float) -> np.ndarray:
    """Stiff-string mode frequencies f_n = n f0 sqrt(1 + B n^2).

    n : array of int, mode numbers >= 1
    f0 : float, Hz, the frequency the flexible string would have
    inharmonicity : float, B, dimensionless, >= 0
    Returns Hz, same shape as ``n``.
    """
    n = np.asarray(n, dtype=float)
    return n * f0 * np.sqrt(1.0 + inharmonicity * n**2)


def pluck_amplitudes(n: np.ndarray, *, strength: float, beta: float) -> np.ndarray:
    """Displacement amplitudes of a string released from a triangle.

    n : array of int, mode numbers >= 1
    strength : float, m, height h of the triangle at the pluck point
    beta : float, pluck point as a fraction of the vibrating length, 0 < beta < 1
    Returns m, same shape as ``n``: a_n = 2h sin(n pi beta) / (n^2 pi^2 beta (1 - beta)).
    """
    n = np.asarray(n, dtype=float)
    return 2.0 * strength * np.sin(n * np.pi * beta) / (n**2 * np.pi**2 * beta * (1.0 - beta))


def position_weights(n: np.ndarray, *, position: float | np.ndarray, length: float) -> np.ndarray:
    """Mode shape sin(n pi x / L) at a sensing point.

    n : array of int, mode numbers; position : m from the bridge saddle (broadcasts
    against ``n``); length : m, vibrating length. Points at or beyond the
    stopping fret see no motion (weight 0).
    """
    n = np.asarray(n, dtype=float)
    x = np.asarray(position, dtype=float)
    w = np.sin(n * np.pi * x / length)
    return np.where(x < length, w, 0.0)


def unheard_notes(phrase, positions, names=("the sensing point",)) -> tuple[str, ...]:
    """Warnings for the notes whose vibrating length ends at or before a sensing point (the string
    does not move there, :func:`position_weights`), one per note and point, as a user reads them.

    positions : m from the bridge saddle, or lengths as a design file writes them ("40mm");
    names : what each point is called in the warning.
    """
    positions = _lengths("positions", positions).reshape(-1)
    out = []
    for note in phrase.notes:
        for x, name in zip(positions, names):
            if note.length <= x:
                out.append(
                    f"string {note.string}, fret {note.fret:g} at {note.time:g} s: its vibrating length {note.length * 1e3:.0f} mm ends before"
                    f" {name} at {x * 1e3:g} mm from the saddle, so it is not heard there"
                )
    return tuple(out)


def unsynthesised_notes(phrase, sample_rate: int, *, spread: float = 1.0) -> tuple[str, ...]:
    """Warnings for the notes not synthesised at ``sample_rate``: their first partial (at its highest, with bend
    and vibrato, times ``spread`` for a construction's upper polarisation) reaches the Nyquist frequency or
    :data:`MAX_MODE_HZ`, above which no mode is synthesised (:func:`_add_note`), one per note, as a user reads them."""
    nyquist = 0.5 * float(sample_rate)
    limit = min(MAX_MODE_HZ, nyquist)
    out = []
    for note in phrase.notes:
        top = note.frequency * _highest_ratio(note)
        if top * spread >= nyquist or top >= MAX_MODE_HZ:
            bent = f" (bent or swung up to {top:.0f} Hz)" if top > note.frequency * (1 + 1e-9) else ""
            why = f"the Nyquist limit of the {sample_rate} Hz sample rate, {nyquist:g} Hz" if limit == nyquist else f"{MAX_MODE_HZ:g} Hz, above which no mode is synthesised"
            out.append(
                f"string {note.string}, fret {note.fret:g} at {note.time:g} s: its pitch {note.frequency:.0f} Hz{bent} reaches {why}, so it is not heard; raise the sample rate or play it lower"
            )
    return tuple(out)


def aperture_weights(n: np.ndarray, *, aperture: float | np.ndarray, length: float) -> np.ndarray:
    """Window factor sin(u) / u, u = n pi W / (2 L), of a sensing window of width W.

    n : array of int, mode numbers; aperture : W in m, >= 0 (broadcasts against
    ``n``); length : m, vibrating length. Returns a dimensionless factor, 1 for W = 0.
    """
    n = np.asarray(n, dtype=float)
    u = n * np.asarray(aperture, dtype=float) / (2.0 * length)  # u / pi
    return np.sinc(u)


def decay_rates(n: np.ndarray, *, length: float, decay: float, curvature_loss: float) -> np.ndarray:
    """Loss rates sigma_n = b1 + b3 (n pi / L)^2 in 1/s.

    n : array of int, mode numbers; length : m, vibrating length;
    decay : s, T60 of the lowest modes (b1 = 6.908 / decay);
    curvature_loss : b3 in m^2/s.
    """
    n = np.asarray(n, dtype=float)
    return T60_FACTOR / decay + curvature_loss * (n * np.pi / length) ** 2


def mute_rates(frequencies: np.ndarray, *, mute: float, mute_decay: float) -> np.ndarray:
    """Extra loss in 1/s from palm muting: mute * 6.908 / mute_decay * (1 + f / 1 kHz).

    frequencies : Hz; mute : 0..1; mute_decay : s, the T60 a full mute gives low modes.
    """
    f = np.asarray(frequencies, dtype=float)
    return mute * (T60_FACTOR / mute_decay) * (1.0 + f / MUTE_CORNER_HZ)


def t60(sigma: float | np.ndarray) -> float | np.ndarray:
    """Time in s for a mode with loss rate ``sigma`` (1/s) to fall 60 dB."""
    return T60_FACTOR / np.asarray(sigma, dtype=float)


def pitch_ratio(t: np.ndarray, *, note: Note) -> np.ndarray:
    """Instantaneous frequency of ``note`` over its pitch without bends, at times ``t`` (s since the pluck).

    A bend rises along a raised cosine from ``start`` over ``over`` seconds
    and holds; a vibrato swings sinusoidally after ``start``, its depth
    growing over its first cycle. Returns a dimensionless ratio, shape of ``t``.
    """
    cents = np.zeros_like(t, dtype=float)
    if note.bend is not None:
        b = note.bend
        if b.over > 0:
            s = np.clip((t - b.start) / b.over, 0.0, 1.0)
            cents += 100.0 * b.semitones * 0.5 * (1.0 - np.cos(np.pi * s))
        else:
            cents += np.where(t >= b.start, 100.0 * b.semitones, 0.0)
    if note.vibrato is not None:
        v = note.vibrato
        since = np.maximum(t - v.start, 0.0)
        ramp = np.clip(since * v.rate_hz, 0.0, 1.0)
        cents += v.depth_cents * ramp * np.sin(2.0 * np.pi * v.rate_hz * since)
    return 2.0 ** (cents / 1200.0)


# ---------------------------------------------------------------------------
# The whole phrase


def one_blas_thread(fn):
    """Run ``fn`` with one BLAS thread: the synthesis's matrix products then sum in one order, so its bits
    do not depend on the machine's core count, on ``--jobs``, or on whether it runs from the API or a command."""

    @functools.wraps(fn)
    def wrapper(*args, **kwargs):
        from threadpoolctl import threadpool_limits

        with threadpool_limits(1):
            return fn(*args, **kwargs)

    return wrapper


@one_blas_thread
def string_velocity(
    phrase: Phrase,
    *,
    sample_rate: int,
    positions,
    apertures,
    seed: int = 0,
    seconds: float | None = None,
) -> np.ndarray:
    """Transverse string velocity at each sensing point, in m/s.

    Parameters
    ----------
    phrase : Phrase
        What is played.
    sample_rate : int, Hz, 8000..384000
    positions : sequence of float, m from the bridge saddle, 0 < x < scale length, shape (P,)
    apertures : float or sequence of float, m, window widths >= 0, shape () or (P,)
    seed : int
        Seeds the small per-note variations (strum timing, strength, pluck point).
    seconds : float or None, s
        Length of the result; default the phrase's own length.

    Returns
    -------
    np.ndarray, float64, shape (P, round(seconds * sample_rate)), m/s.

    Raises
    ------
    InputError
        For a sample rate, position, aperture or length out of range.
    """
    x, w = _check_points(positions, apertures, phrase.instrument.scale_length)
    p = plucks(phrase, sample_rate=sample_rate, seed=seed, seconds=seconds)
    out = np.zeros((x.size, p.n_total))
    for note, args in p.notes:
        _add_note(out, note, phrase.instrument, positions=x, apertures=w, **args)
    return out


@dataclass(frozen=True)
class Plucks:
    """What every synthesis of a phrase shares: the checked rate and length, and each sounding note's arguments.

    fs : Hz; n_total : samples in the result
    notes : ((note, args), ...) in the phrase's order, one for each note that sounds (its end after its
        onset); args are the keywords ``fs``, ``onset``, ``end``, ``strength`` and ``pluck_at`` of the
        per-note synthesis, with the seeded jitter applied
    """

    fs: float
    n_total: int
    notes: tuple[tuple[Note, dict], ...]


def plucks(phrase: Phrase, *, sample_rate: int, seed: int, seconds: float | None) -> Plucks:
    """Check the rate, length and seed of a phrase's synthesis and draw each note's jitter (see :class:`Plucks`)."""
    from render.arguments import seed as check_seed

    fs = _check_rate(sample_rate)
    total = phrase.seconds if seconds is None else seconds
    if not (isinstance(total, (int, float)) and math.isfinite(total) and 0 < total <= 3600):
        raise InputError(f"seconds={shown(total)}: the length must be > 0 s and <= 3600 s")
    seed = check_seed("seed", seed)
    notes = phrase.notes
    rng = np.random.default_rng(int(seed))
    jitter = rng.uniform(-1.0, 1.0, size=(len(notes), 3))
    onsets = np.array([max(0.0, n.time + n.spread * jitter[i, 0]) for i, n in enumerate(notes)])
    ends = _note_ends(notes, onsets)
    sounding = tuple(
        (
            note,
            dict(
                fs=fs,
                onset=float(onsets[i]),
                end=float(ends[i]),
                strength=note.strength * (1.0 + STRENGTH_JITTER * jitter[i, 1]),
                pluck_at=min(note.pluck_at * (1.0 + PLUCK_JITTER * jitter[i, 2]), 0.999 * note.length),
            ),
        )
        for i, note in enumerate(notes)
        if ends[i] > onsets[i]
    )
    return Plucks(fs, int(round(total * fs)), sounding)


def _check_rate(sample_rate) -> float:
    from ..validate import sample_rate as checked_rate

    return float(checked_rate(sample_rate, name="sample_rate"))


def _lengths(name: str, values) -> np.ndarray:
    """``values`` (m, or strings such as "40mm") as a float array; one line saying what to give otherwise."""
    from ..units import LENGTH, QuantityError, parse_quantity

    items = np.atleast_1d(np.asarray(values, dtype=object))
    try:
        return np.array([parse_quantity(v, LENGTH) for v in items.ravel()], dtype=float).reshape(items.shape)
    except (QuantityError, TypeError, ValueError) as e:
        raise InputError(f"{name}={shown(values)}: {e}") from None


def _check_points(positions, apertures, scale_length: float) -> tuple[np.ndarray, np.ndarray]:
    x = _lengths("positions", positions)
    if x.ndim != 1 or x.size == 0:
        raise InputError(f"positions={shown(positions)}: expected one or more sensing points (m from the bridge saddle)")
    a = _lengths("apertures", apertures)
    if a.size not in (1, x.size) or a.ndim > 1:
        raise InputError(f"apertures={shown(apertures)}: give one width for every sensing point, or one per point ({x.size})")
    w = np.broadcast_to(a.reshape(-1) if a.size > 1 else a.reshape(()), x.shape).astype(float)
    for xi in x:
        if not (math.isfinite(xi) and 0.0 < xi < scale_length):
            raise InputError(f'position={xi:g} m: a sensing point must lie between the bridge saddle and the nut (0 < x < {scale_length:g} m); give it in metres or as "40mm"')
    for wi in w:
        if not (math.isfinite(wi) and 0.0 <= wi < scale_length / 2):
            raise InputError(f"aperture={wi:g} m: a sensing window must be >= 0 and < half the scale length ({scale_length / 2:g} m)")
    return x, w


def _note_ends(notes: tuple[Note, ...], onsets: np.ndarray) -> np.ndarray:
    """When each note's damping starts: its duration, or the next pluck on its string."""
    ends = np.array([onsets[i] + (n.duration if n.duration is not None else math.inf) for i, n in enumerate(notes)])
    by_string: dict[int, list[int]] = {}
    for i, n in enumerate(notes):
        by_string.setdefault(n.string, []).append(i)
    for idx in by_string.values():
        idx.sort(key=lambda i: (onsets[i], i))
        for a, b in zip(idx, idx[1:]):
            ends[a] = min(ends[a], onsets[b])
    return ends


def _add_note(
    out: np.ndarray,
    note: Note,
    inst: Instrument,
    *,
    fs: float,
    onset: float,
    end: float,
    strength: float,
    pluck_at: float,
    positions: np.ndarray,
    apertures: np.ndarray,
) -> None:
    """Add one note's velocity at every sensing point into ``out`` (P, n_total)."""
    length = note.length
    b = inst.string_inharmonicity(note.string) * (inst.scale_length / length) ** 2  # B grows as 1/L^2
    f0 = note.frequency / math.sqrt(1.0 + b)
    hi_ratio = _highest_ratio(note)
    limit = min(MAX_MODE_HZ, 0.5 * fs)
    n_max = max(1, int(limit / (f0 * hi_ratio)) + 1)
    n = np.arange(1, n_max + 1, dtype=float)
    freqs = mode_frequencies(n, f0=f0, inharmonicity=b)
    keep = freqs * hi_ratio < limit
    n, freqs = n[keep], freqs[keep]
    if n.size == 0:
        return
    sigma = decay_rates(n, length=length, decay=inst.decay, curvature_loss=inst.curvature_loss)
    sigma = sigma + mute_rates(freqs, mute=note.mute, mute_decay=inst.mute_decay)
    omega = 2.0 * np.pi * freqs
    beta = pluck_at / length
    a = pluck_amplitudes(n, strength=strength, beta=beta)
    weights = position_weights(n[None, :], position=positions[:, None], length=length) * aperture_weights(n[None, :], aperture=apertures[:, None], length=length)
    amp = -(a * (omega**2 + sigma**2) / omega)[None, :] * weights  # (P, N) m/s

    # Span: from the pluck until the note has fallen 120 dB or the phrase ends.
    sigma_rel = T60_FACTOR / inst.release
    hold = end - onset  # s from the pluck to the start of the damping
    life = _FLOOR / sigma
    if math.isfinite(hold):
        life = np.minimum(life, hold + _FLOOR / (sigma + sigma_rel))
    n_total = out.shape[1]
    i0 = int(math.ceil(onset * fs - 1e-9))
    if i0 >= n_total:
        return
    delta = i0 - onset * fs  # samples between the pluck and the first sample, 0 <= delta < 1
    span = min(n_total - i0, int(math.ceil(float(life.max()) * fs)) + 1)
    lives = np.minimum(np.ceil(life * fs).astype(int) + 1, span)

    buf = np.zeros((positions.size, span))
    if note.bend is None and note.vibrato is None:
        _sum_blocks(buf, amp, sigma, omega, lives, delta, fs)
    else:
        _sum_direct(buf, amp, sigma, omega, lives, delta, fs, note=note)
    if math.isfinite(hold):
        t = (np.arange(span) + delta) / fs
        buf *= np.exp(-sigma_rel * np.maximum(t - hold, 0.0))
    out[:, i0 : i0 + span] += buf


def _sum_blocks(buf, amp, sigma, omega, lives, delta, fs) -> None:
    """Constant-pitch modes: Im(sum_n A_n e^(s_n t)) as a matrix product per group of modes.

    With t = (k B + j + delta) / fs, e^(s t) = e^(s (k B + delta) / fs) e^(s j / fs):
    a (blocks x modes) matrix times a (modes x B) matrix gives every block.
    """
    p_count, span = buf.shape
    s = (-sigma + 1j * omega) / fs  # per sample
    j = np.arange(_BLOCK)
    order = np.argsort(-lives, kind="stable")
    for g in range(0, order.size, _MODE_GROUP):
        idx = order[g : g + _MODE_GROUP]
        n_samples = int(lives[idx].max())
        k_count = -(-n_samples // _BLOCK)
        base = np.exp(np.outer(s[idx], j))  # (Ng, B)
        # Im(C B) = Re(C) Im(B) + Im(C) Re(B): one real product, half the work of a complex one
        base_ri = np.vstack([base.imag, base.real])
        for k0 in range(0, k_count, _BLOCKS_PER_PASS):
            k1 = min(k0 + _BLOCKS_PER_PASS, k_count)
            expo = np.outer(np.arange(k0, k1) * _BLOCK + delta, s[idx])  # (K, Ng)
            step = np.where(expo.real > -40.0, np.exp(expo), 0.0)
            coeff = (amp[:, None, idx] * step[None, :, :]).reshape(p_count * (k1 - k0), idx.size)
            blocks = (np.hstack([coeff.real, coeff.imag]) @ base_ri).reshape(p_count, (k1 - k0) * _BLOCK)
            a, b = k0 * _BLOCK, min(k1 * _BLOCK, span)
            buf[:, a:b] += blocks[:, : b - a]


def _retuned_time(ratio: np.ndarray, delta: float, fs: float) -> np.ndarray:
    """tau(t) = integral from the pluck to t of the pitch ratio, s, by trapezoids (the ratio is ratio[0] before the first sample).

    ratio : the pitch ratio at the samples t = (k + delta) / fs, k = 0 … span − 1
    """
    tau = np.empty(ratio.size)
    tau[0] = ratio[0] * delta / fs
    if ratio.size > 1:
        tau[1:] = tau[0] + np.cumsum(0.5 * (ratio[1:] + ratio[:-1])) / fs
    return tau


def _sum_direct(buf, amp, sigma, omega, lives, delta, fs, *, note: Note) -> None:
    """Modes whose frequency moves: phase = omega_n * integral of the pitch ratio.

    The amplitude follows sqrt(ratio), the adiabatic invariant E / omega of a
    slowly retuned oscillator (Landau & Lifshitz, Mechanics, section 49; from memory).
    """
    span = buf.shape[1]
    t = (np.arange(span) + delta) / fs
    r = pitch_ratio(t, note=note)
    tau = _retuned_time(r, delta, fs)
    order = np.argsort(-lives, kind="stable")
    for g in range(0, order.size, _MODE_GROUP):
        idx = order[g : g + _MODE_GROUP]
        n_samples = int(lives[idx].max())
        for a in range(0, n_samples, _DIRECT_SPAN):
            sl = slice(a, min(a + _DIRECT_SPAN, n_samples))
            arg = -np.outer(sigma[idx], t[sl])
            mat = np.sin(np.outer(omega[idx], tau[sl])) * np.exp(np.maximum(arg, -700.0))
            buf[:, sl] += amp[:, idx] @ mat
    buf *= np.sqrt(r)[None, :]
