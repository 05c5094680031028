"""Hum sources in the room and the EMF each coil sees from them.

Two kinds of source, each periodic at the mains frequency f:

- a point **dipole** of moment m (A·m², the reference peak) at a place,
  along a unit axis: a small transformer, a wall adapter, a motor seen from
  a distance of a few times its size; its field (Jackson, *Classical
  Electrodynamics*, 3rd ed., eq. 5.56) falls as 1/r³;
- a **uniform** field B (T, the reference peak) along a unit axis: a
  distant source, or today's one-number room.

A source's strength s (m or B) follows its harmonic profile a_h and phase φ
(degrees of the fundamental; harmonic h is shifted by h·φ, i.e. the whole
waveform is advanced by φ/360 of a mains period: a positive φ leads):

    s(t) = s · Σ_h a_h · sin(2π·h·f·t + h·φ).

The fields are quasi-static (a room is far smaller than a wavelength at
mains frequencies), so each coil's flux linkage along +z is the strength
times a fixed coupling k (:mod:`.coil`): k = axis·B₁(r) per A·m² for a
dipole (reciprocity), k = turns_area·axis_z per T for a uniform field. Each
coil's hum EMF, as it drives its input, is Faraday's

    e = hum_polarity · dΦ/dt = hum_polarity · Σ_sources k · ds/dt,

the sign convention of the single uniform field (``turns_area · dB/dt``
along z, :mod:`render.chain.hum`): a uniform +z source of the room's
``field`` and profile gives exactly the same samples.

Phasors use the cosine reference of :func:`render.chain.hum.steady_response`:
a quantity Σ_h Re{P_h · e^{j·h·2π f t}}. ds/dt of harmonic h is therefore
s·a_h·2π·h·f·e^{j·h·φ}.
"""

from __future__ import annotations

from dataclasses import InitVar, dataclass
from typing import ClassVar

import numpy as np

from ..errors import InputError
from ..units import shown

COIL_NAMES = ("coil_a", "coil_b")


def _vector(where: str, name: str, value, *, unit: bool) -> tuple:
    try:
        v = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{where} {name}={shown(value)}: expected three numbers [x, y, z]") from None
    if v.shape != (3,) or not np.all(np.isfinite(v)):
        raise InputError(f"{where} {name}={shown(value)}: expected three finite numbers [x, y, z]")
    if unit:
        n = float(np.sqrt(v @ v))
        if n == 0.0:
            raise InputError(f"{where} {name}={shown(value)}: an axis needs a direction (not all zero)")
        v = v / n
    return tuple(float(x) for x in v)


def _profile(where: str, harmonics):
    if harmonics is None:
        return None
    try:
        a = np.asarray(harmonics, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{where} harmonics={shown(harmonics)}: expected a list of numbers") from None
    if a.ndim != 1 or a.size == 0 or not np.all(np.isfinite(a)) or np.any(a < 0):
        raise InputError(f"{where} harmonics={shown(harmonics)}: expected a list of non-negative numbers, one per harmonic")
    return tuple(float(x) for x in a)


def _strength(where: str, name: str, value, example: str) -> float:
    """A source's strength: a finite number above 0 (a source of none makes no hum, and its rejection has no meaning)."""
    v = _number(where, name, value, lo=0.0)
    if v == 0.0:
        raise InputError(f"{where} {name}=0: a source of no strength makes no hum; give its {name} (e.g. {name}={example}), or leave the source out")
    return v


def _number(where: str, name: str, value, *, lo: float | None = None) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{where} {name}={shown(value)}: expected a number") from None
    if not np.isfinite(v) or (lo is not None and v < lo):
        raise InputError(f"{where} {name}={shown(value)}: must be a finite number" + ("" if lo is None else f" ≥ {lo:g}"))
    return v


@dataclass(frozen=True)
class DipoleSource:
    """A point dipole hum source (a transformer, a power supply) in the pickup's frame.

    Attributes
    ----------
    moment : float, A·m²
        The reference peak: harmonic h peaks at moment × harmonics[h−1]
        (the fundamental's peak when the profile starts with 1).
    at : tuple of 3 float, m
        Its place: x along the strings towards the neck, y across, z up.
    axis : tuple of 3 float
        The moment's direction (normalised).
    harmonics : tuple of float or None
        Relative amplitudes of harmonics 1, 2, …, or None for the room's profile.
    phase : float, degrees
        Of the fundamental (harmonic h shifted by h·phase).
    where : str
        (init only) where the values came from, for error messages (a rig file's table; the class's name from Python).
    """

    moment: float
    at: tuple
    axis: tuple = (0.0, 0.0, 1.0)
    harmonics: tuple | None = None
    phase: float = 0.0
    where: InitVar[str] = "DipoleSource"
    kind: ClassVar[str] = "dipole"

    def __post_init__(self, where):
        object.__setattr__(self, "moment", _strength(where, "moment", self.moment, "0.05, in A·m²"))
        object.__setattr__(self, "at", _vector(where, "at", self.at, unit=False))
        object.__setattr__(self, "axis", _vector(where, "axis", self.axis, unit=True))
        object.__setattr__(self, "harmonics", _profile(where, self.harmonics))
        object.__setattr__(self, "phase", _number(where, "phase", self.phase))

    @property
    def strength(self) -> float:
        return self.moment


@dataclass(frozen=True)
class UniformSource:
    """A uniform hum field over the pickup.

    Attributes
    ----------
    field : float, T
        The reference peak: harmonic h peaks at field × harmonics[h−1]
        (the fundamental's peak when the profile starts with 1).
    axis : tuple of 3 float
        Its direction (normalised).
    harmonics : tuple of float or None
        As :class:`DipoleSource`.
    phase : float, degrees
        As :class:`DipoleSource`.
    where : str
        (init only) as :class:`DipoleSource`.
    """

    field: float
    axis: tuple = (0.0, 0.0, 1.0)
    harmonics: tuple | None = None
    phase: float = 0.0
    where: InitVar[str] = "UniformSource"
    kind: ClassVar[str] = "uniform"

    def __post_init__(self, where):
        object.__setattr__(self, "field", _strength(where, "field", self.field, "1e-7, in T"))
        object.__setattr__(self, "axis", _vector(where, "axis", self.axis, unit=True))
        object.__setattr__(self, "harmonics", _profile(where, self.harmonics))
        object.__setattr__(self, "phase", _number(where, "phase", self.phase))

    @property
    def strength(self) -> float:
        return self.field


def _frequencies(mains_hz: float, n: int) -> np.ndarray:
    """Harmonics 1 … n of the mains (Hz), as :func:`render.chain.hum.harmonic_frequencies` gives them."""
    return mains_hz * np.arange(1, n + 1, dtype=float)


def room_source(hum) -> UniformSource:
    """The room's one-number field (a :class:`render.design.Hum`) as a uniform source along +z."""
    return UniformSource(field=hum.field, axis=(0.0, 0.0, 1.0))


def coupling(coils, sources) -> np.ndarray:
    """Each coil's flux linkage per unit strength of each source, shape (C, S).

    Wb per A·m² for a dipole, Wb per T for a uniform field. A dipole inside
    a coil's outline is refused (the filaments do not model it there).
    """
    out = np.zeros((len(coils), len(sources)))
    for j, s in enumerate(sources):
        for i, c in enumerate(coils):
            if s.kind == "dipole":
                if c.inside(np.asarray(s.at)):
                    name = COIL_NAMES[i] if i < 2 else f"coil {i + 1}"
                    raise InputError(f"hum source {j + 1} (dipole) at={list(s.at)} m lies within {name}'s winding: a dipole source must sit outside the pickup")
                out[i, j] = c.dipole_linkage(np.asarray(s.at), np.asarray(s.axis))
            else:
                out[i, j] = c.uniform_linkage(np.asarray(s.axis))
    return out


def profiles(sources, *, harmonics) -> np.ndarray:
    """Each source's relative harmonic amplitudes, shape (S, H); the room's ``harmonics`` by default."""
    base = np.asarray(harmonics, dtype=float)
    rows = []
    for j, s in enumerate(sources):
        if s.harmonics is None:
            rows.append(base)
        elif len(s.harmonics) != base.size:
            raise InputError(f"hum source {j + 1} harmonics: {len(s.harmonics)} values, but the [hum] profile has {base.size}: give one per harmonic")
        else:
            rows.append(np.asarray(s.harmonics, dtype=float))
    return np.array(rows).reshape(len(sources), base.size)


def phases(sources, *, n_harmonics: int) -> np.ndarray:
    """Each source's harmonic phases h·φ in radians, shape (S, H)."""
    h = np.arange(1, n_harmonics + 1, dtype=float)
    return np.array([np.deg2rad(s.phase) * h for s in sources]).reshape(len(sources), n_harmonics)


def rate_phasors(sources, *, mains_hz: float, harmonics) -> np.ndarray:
    """ds/dt of each source per harmonic: s·a_h·2π·h·f·e^{j·h·φ}, shape (S, H), strength units per s."""
    a = profiles(sources, harmonics=harmonics)
    f = _frequencies(mains_hz, a.shape[1])
    s = np.array([src.strength for src in sources]).reshape(-1, 1)
    return s * a * (2.0 * np.pi * f) * np.exp(1j * phases(sources, n_harmonics=a.shape[1]))


@dataclass(frozen=True, eq=False)
class HumEmf:
    """Each coil's hum EMF per source and harmonic, as it drives its input.

    frequency_hz : np.ndarray [shape=(H,)], Hz
    per_source : np.ndarray complex [shape=(2, S, H)], V peak (cosine reference)
    linkage_wb : np.ndarray [shape=(2, S)], Wb, each coil's flux linkage
        from each source at its stated (reference) strength; harmonic h's
        peak linkage is this times the source's harmonics[h−1]
    sources : the sources, in order
    """

    frequency_hz: np.ndarray
    per_source: np.ndarray
    linkage_wb: np.ndarray
    sources: tuple

    @property
    def total(self) -> np.ndarray:
        """Both coils' EMFs, all sources together: shape (2, H), V peak (complex)."""
        return self.per_source.sum(axis=1)


def hum_emf(coils, sources, *, mains_hz: float, harmonics, hum_polarity=(1, 1)) -> HumEmf:
    """Each coil's hum EMF phasors from ``sources`` (see the module docstring).

    coils : two :class:`~render.magnetics.coil.PlacedCoil` (coil_a, coil_b)
    sources : sequence of :class:`DipoleSource` / :class:`UniformSource`
    mains_hz : Hz; harmonics : the room's relative profile, length H
    hum_polarity : each coil's ±1
    """
    sources = tuple(sources)
    k = coupling(coils, sources)  # (2, S)
    rates = rate_phasors(sources, mains_hz=mains_hz, harmonics=harmonics)  # (S, H)
    hp = np.asarray(hum_polarity, dtype=float).reshape(-1, 1)
    per = (hp * k)[:, :, None] * rates[None, :, :]
    strength = np.array([s.strength for s in sources]).reshape(1, -1)
    f = _frequencies(mains_hz, len(harmonics))
    return HumEmf(frequency_hz=f, per_source=per.reshape(len(coils), len(sources), f.size), linkage_wb=k * strength, sources=sources)


def emf_samples(coils, sources, n: int, *, sample_rate: float, mains_hz: float, harmonics, hum_polarity=(1, 1), start: int = 0) -> np.ndarray:
    """Each coil's hum EMF at samples start … start+n−1, shape (2, n), V.

    e_c = Σ_s (hum_polarity_c · k_cs) · ds/dt, with ds/dt from
    :func:`render.chain.hum.field_rate` (analytic derivative, phase reduced
    per mains period). For one uniform +z source of the room's field and
    profile this is, sample for sample, hum_polarity · turns_area · dB/dt.
    """
    from ..chain import hum as hm  # the package's import pulls in the renderer: only when samples are asked for

    sources = tuple(sources)
    k = coupling(coils, sources)
    a = profiles(sources, harmonics=harmonics)
    ph = phases(sources, n_harmonics=a.shape[1])
    out = np.zeros((len(coils), int(n)))
    for j, s in enumerate(sources):
        rate = hm.field_rate(int(n), sample_rate=sample_rate, mains_hz=mains_hz, field_t=s.strength, harmonics=a[j], start=start, phases=ph[j])
        for i in range(len(coils)):
            out[i] += (hum_polarity[i] * k[i, j]) * rate
    return out


def steady_samples(phasors, n: int, *, sample_rate: float, mains_hz: float, start: int = 0) -> np.ndarray:
    """Σ_h Re{P_h·e^{j·h·2π·mains·t}} at samples start … start+n−1, shape (n,).

    phasors : array_like complex [shape=(H,)], harmonic h = 1 … H; e.g. a
        network's complex gain times an EMF phasor, summed over the coils
    """
    from ..chain import hum as hm

    p = np.asarray(phasors, dtype=complex)
    return hm._harmonic_sum(int(n), np.abs(p), np.angle(p), start=start, sample_rate=sample_rate, mains_hz=mains_hz)
