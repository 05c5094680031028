"""The mains hum field and what it induces.

The room's field is uniform over the pickup (both coils see the same
flux density) and periodic at the mains frequency:

    B(t) = field · Σ_h harmonics[h−1] · sin(2π·h·mains·t + φ_h),

with every phase φ_h = 0 unless ``phases`` says otherwise (deterministic:
no random draw). Its time derivative is taken analytically,

    dB/dt = field · Σ_h harmonics[h−1] · 2π·h·mains · cos(2π·h·mains·t + φ_h),

so a field harmonic h appears h times stronger in the induced EMF
e = turns_area · dB/dt (Faraday's law).

:func:`steady_response` gives the output of any linear network driven by
dB/dt in its sinusoidal steady state, from the network's complex gain at
each harmonic: the field has been there long before the clip starts, so
the render begins in steady state rather than with a switch-on transient.

Time is the sample index ``start + arange(n)`` at ``sample_rate``; the
phase is reduced modulo one mains period before the sine is taken, so an
hour-long render loses no precision.
"""

from __future__ import annotations

import numpy as np


def check_phases(n_harmonics: int, phases) -> np.ndarray:
    """The harmonics' phases in radians, shape (H,): zeros for None, else validated."""
    if phases is None:
        return np.zeros(n_harmonics)
    p = np.asarray(phases, dtype=float)
    if p.shape != (n_harmonics,):
        raise ValueError(f"phases: expected {n_harmonics} values (one per harmonic), got shape {p.shape}")
    return p


def _cycles(n: int, *, start: int, sample_rate: float, mains_hz: float) -> np.ndarray:
    """Fractional position within the mains period of samples start .. start+n−1, in [0, 1)."""
    if float(mains_hz).is_integer() and float(sample_rate).is_integer():
        # whole-hertz rates (the usual case): exact integer arithmetic, any length of render
        m, fs = int(mains_hz), int(sample_rate)
        idx = np.arange(start, start + n, dtype=np.int64)
        return np.mod(idx * m, fs) / fs
    pos = np.arange(start, start + n, dtype=np.float64)
    return np.mod(pos * (mains_hz / sample_rate), 1.0)


def _harmonic_sum(n, amplitudes, phase_shifts, *, start, sample_rate, mains_hz):
    """Σ_h A_h · cos(h·θ + ψ_h), θ = 2π·mains·t; A, ψ shape (H,); returns shape (n,).

    cos(hθ) and sin(hθ) come from the recurrence c_{h+1} = 2·cos θ·c_h − c_{h−1}
    (and likewise for sin), so only one sine and one cosine are evaluated per sample.
    """
    theta = 2.0 * np.pi * _cycles(n, start=start, sample_rate=sample_rate, mains_hz=mains_hz)
    c1, s1 = np.cos(theta), np.sin(theta)
    out = np.zeros(n)
    c_prev, s_prev = np.ones(n), np.zeros(n)
    c_h, s_h = c1, s1
    two_c1 = 2.0 * c1
    for h, (amp, psi) in enumerate(zip(amplitudes, phase_shifts), start=1):
        if amp != 0.0:
            out += (amp * np.cos(psi)) * c_h - (amp * np.sin(psi)) * s_h
        if h < len(amplitudes):
            c_prev, c_h = c_h, two_c1 * c_h - c_prev
            s_prev, s_h = s_h, two_c1 * s_h - s_prev
    return out


def harmonic_frequencies(*, mains_hz: float, harmonics) -> np.ndarray:
    """Frequencies of the field's harmonics 1, 2, … (Hz), shape (H,)."""
    return mains_hz * np.arange(1, len(harmonics) + 1, dtype=float)


def field(n: int, *, sample_rate: float, mains_hz: float, field_t: float, harmonics, start: int = 0, phases=None) -> np.ndarray:
    """The flux density B at samples start … start+n−1.

    n : int ≥ 0, number of samples
    sample_rate : Hz
    mains_hz : Hz, the fundamental (50 or 60)
    field_t : T, the reference peak flux density: harmonic h peaks at field_t × harmonics[h−1]
    harmonics : sequence of H relative amplitudes for harmonics 1 … H
    phases : None (all 0) or H phases in radians, one per harmonic
    returns : np.ndarray, T, shape (n,)
    """
    amp = field_t * np.asarray(harmonics, dtype=float)
    ph = check_phases(amp.size, phases)
    # sin(x + φ) = cos(x + φ − π/2)
    return _harmonic_sum(n, amp, ph - np.pi / 2, start=start, sample_rate=sample_rate, mains_hz=mains_hz)


def field_rate(n: int, *, sample_rate: float, mains_hz: float, field_t: float, harmonics, start: int = 0, phases=None) -> np.ndarray:
    """dB/dt at samples start … start+n−1, differentiated analytically.

    Arguments as :func:`field`.
    returns : np.ndarray, T/s, shape (n,); harmonic h carries amplitude
        field_t · harmonics[h−1] · 2π·h·mains_hz
    """
    amp = field_t * np.asarray(harmonics, dtype=float) * 2.0 * np.pi * harmonic_frequencies(mains_hz=mains_hz, harmonics=harmonics)
    ph = check_phases(amp.size, phases)
    return _harmonic_sum(n, amp, ph, start=start, sample_rate=sample_rate, mains_hz=mains_hz)


def steady_response(gains, n: int, *, sample_rate: float, mains_hz: float, field_t: float, harmonics, start: int = 0, phases=None) -> np.ndarray:
    """Steady-state output of a linear network driven by dB/dt.

    gains : array_like complex, shape (H,), the network's response at
        harmonic_frequencies(...) in output units per (T/s), e.g. V per T/s
    Other arguments as :func:`field`.
    returns : np.ndarray, output units, shape (n,)
    """
    g = np.asarray(gains, dtype=complex)
    amp = field_t * np.asarray(harmonics, dtype=float) * 2.0 * np.pi * harmonic_frequencies(mains_hz=mains_hz, harmonics=harmonics)
    if g.shape != amp.shape:
        raise ValueError(f"gains: expected shape {amp.shape} (one per harmonic), got {g.shape}")
    ph = check_phases(amp.size, phases)
    return _harmonic_sum(n, amp * np.abs(g), ph + np.angle(g), start=start, sample_rate=sample_rate, mains_hz=mains_hz)
