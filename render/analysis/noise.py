"""The noise floor at the amp input: densities, totals, A-weighting, SNR, a waveform.

Built on :mod:`render.circuit.noise` (one exact transfer function and one
density per source). The figures, for the active circuit and beside them
the passive reference:

- ``density_v_per_rthz``: √(Σ_k |H_k|²·S_k), V/√Hz, on a log grid 20 Hz–20 kHz.
- ``total_v``: √∫ S_out df over 20 Hz–20 kHz (V rms, unweighted).
- ``a_weighted_v``: √∫ S_out·|A(f)|² df over the same band, A(f) the
  A-weighting of IEC 61672-1 (0 dB at 1 kHz).
- ``snr_db`` (and ``snr_a_db``): 20·log10 of the reference signal's rms at
  the amp input over ``total_v`` (``a_weighted_v``). The reference signal
  is our own choice: a 1 kHz sine of string velocity 0.1 m/s rms at both
  sensing points (about a moderate pluck; common practice, no source).
  A-weighting is 0 dB at 1 kHz, so the signal is the same for both ratios.
- contributors: every source's share of the total noise power in the band,
  largest first.

Temperature: 300 K unless given; it scales the resistances' thermal noise
(4kT·R), not the op-amp's (its datasheet densities are taken as given).
The integrals use Simpson's rule in log frequency on 4001 points
(0.17 % steps), far finer than any resonance of the circuit.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..circuit.noise import K_BOLTZMANN, NoiseModel, design_noise_model, noise_model
from ..errors import InputError
from ..units import shown

BAND_HZ = (20.0, 20000.0)
T_DEFAULT = 300.0  # K
T_RANGE = (200.0, 400.0)  # K: plausible for an instrument (−73 °C .. 127 °C)
REFERENCE_HZ = 1000.0
REFERENCE_VELOCITY = 0.1  # m/s rms string velocity of the reference signal
REFERENCE_VELOCITY_RANGE = (1e-4, 10.0)  # m/s rms accepted as the reference (render noise --reference-velocity too)
INTEGRATION_POINTS = 4001
OUTPUT_PER_DECADE = 100  # points of the reported density (301 from 20 Hz to 20 kHz)
WAVEFORM_CHUNK = 1 << 16  # frequencies evaluated at a time by NoiseStream

# A-weighting, IEC 61672-1:2013 (its analytic form): pole frequencies in Hz
# and the normalisation constant that makes A(1 kHz) = 0 dB.
_A_F1, _A_F2, _A_F3, _A_F4 = 20.6, 107.7, 737.9, 12194.0
_A_NORM_DB = 2.00


def thermal_density(resistance, temperature=T_DEFAULT) -> np.ndarray:
    """Johnson–Nyquist open-circuit voltage density √(4kT·R).

    resistance : float or array, Ω ≥ 0; temperature : K > 0. Returns V/√Hz,
    the broadcast shape of the two.
    """
    return np.sqrt(4.0 * K_BOLTZMANN * np.asarray(temperature, float) * np.asarray(resistance, float))


def a_weighting(frequency_hz) -> np.ndarray:
    """A-weighting amplitude gain (linear, 1 at 1 kHz) at ``frequency_hz`` (Hz ≥ 0), same shape."""
    f2 = np.asarray(frequency_hz, float) ** 2
    ra = _A_F4**2 * f2**2 / ((f2 + _A_F1**2) * np.sqrt((f2 + _A_F2**2) * (f2 + _A_F3**2)) * (f2 + _A_F4**2))
    return ra * 10.0 ** (_A_NORM_DB / 20.0)


def a_weighting_db(frequency_hz) -> np.ndarray:
    """A-weighting in dB (0 dB at 1 kHz, IEC 61672-1) at ``frequency_hz`` (Hz > 0), same shape."""
    return 20.0 * np.log10(a_weighting(frequency_hz))


def integration_grid(points: int = INTEGRATION_POINTS, band=BAND_HZ) -> np.ndarray:
    """Log-spaced frequencies (Hz), shape (points,), over ``band``; ``points`` odd for Simpson."""
    return np.geomspace(band[0], band[1], points)


def output_grid(band=BAND_HZ, per_decade: int = OUTPUT_PER_DECADE) -> np.ndarray:
    """Log-spaced frequencies (Hz) of the reported density, ``per_decade`` points per decade."""
    n = int(round(per_decade * math.log10(band[1] / band[0]))) + 1
    return np.geomspace(band[0], band[1], n)


def band_rms(psd, frequency_hz) -> np.ndarray:
    """√∫ psd df over a log grid (Simpson's rule in ln f).

    psd : array (..., F), V²/Hz on ``frequency_hz`` (F,) from :func:`integration_grid`.
    Returns V rms, shape (...).
    """
    from scipy.integrate import simpson

    f = np.asarray(frequency_hz, float)
    return np.sqrt(np.maximum(simpson(np.asarray(psd) * f, x=np.log(f), axis=-1), 0.0))


def check_temperature(temperature: float, name: str = "temperature") -> float:
    """A plausible absolute temperature (K) or InputError naming it."""
    t = float(temperature)
    lo, hi = T_RANGE
    if not math.isfinite(t) or not lo <= t <= hi:
        hint = f" (kelvin, not °C: {t:g} °C is {t + 273.15:g} K)" if math.isfinite(t) and -60 <= t <= 130 else ""
        raise InputError(f"{name}={t:g} K: expected an absolute temperature from {lo:g} K to {hi:g} K{hint}")
    return t


# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class Contributor:
    """One source's part of the noise at the amp input, 20 Hz–20 kHz.

    Attributes
    ----------
    key : str
        The source's key in :attr:`NoiseFloor.contributor_density` and the JSON (e.g. ``"opamp.voltage"``, ``"input_a.series_r"``).
    label : str
        The source in words, as the tables print it.
    total_v : float, V rms
        Unweighted, 20 Hz–20 kHz.
    a_weighted_v : float, V rms
        A-weighted (IEC 61672-1), 20 Hz–20 kHz.
    share : float, 0..1
        Its part of the total noise power.
    density_1k_v_per_rthz : float, V/√Hz
        Its density at 1 kHz.
    """

    key: str
    label: str
    total_v: float  # V rms, unweighted
    a_weighted_v: float  # V rms, A-weighted
    share: float  # of the total noise power, 0..1
    density_1k_v_per_rthz: float

    def as_dict(self) -> dict:
        return {
            "source": self.key,
            "label": self.label,
            "noise_v_rms": self.total_v,
            "noise_a_weighted_v_rms": self.a_weighted_v,
            "share": self.share,
            "density_1k_v_per_rthz": self.density_1k_v_per_rthz,
        }


@dataclass(frozen=True)
class NoiseFloor:
    """The noise floor of one circuit (a design, or its passive reference) at the amp input.

    Attributes
    ----------
    frequency_hz : np.ndarray [shape=(F,)], Hz
        The reported grid, log-spaced from 20 Hz to 20 kHz (F = 301).
    density_v_per_rthz : np.ndarray [shape=(F,)], V/√Hz
        The total density on that grid.
    density_1k_v_per_rthz : float, V/√Hz
        The total density at 1 kHz.
    total_v : float, V rms
        Unweighted, 20 Hz–20 kHz.
    a_weighted_v : float, V rms
        A-weighted (IEC 61672-1), 20 Hz–20 kHz.
    signal_v : float, V rms
        The 1 kHz reference sine (:attr:`NoiseReport.reference_velocity` at both sensing points) at the amp input.
    contributors : tuple of Contributor
        Each source's part, largest first; parts the circuit does not have are left out.
    contributor_density : dict of str -> np.ndarray [shape=(F,)], V/√Hz
        Each source's density on ``frequency_hz``, by :attr:`Contributor.key`.
    silent_reason : str or None
        Why there is no signal (the coils cancel the string signal exactly); then the SNRs are None.
    snr_db, snr_a_db : float or None, dB
        The signal over the unweighted and the A-weighted noise (properties).
    """

    frequency_hz: np.ndarray
    density_v_per_rthz: np.ndarray
    density_1k_v_per_rthz: float
    total_v: float
    a_weighted_v: float
    signal_v: float  # rms of the reference signal at the amp input
    contributors: tuple[Contributor, ...]  # largest first; absent parts left out
    contributor_density: dict = field(repr=False)
    silent_reason: str | None = None  # set when the coils cancel the string signal exactly: no signal, no SNR

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    @property
    def snr_db(self) -> float | None:
        """20·log10(signal_v / total_v); None when there is no signal (see ``silent_reason``)."""
        return None if self.silent_reason or self.signal_v <= 0 else 20.0 * math.log10(self.signal_v / self.total_v)

    @property
    def snr_a_db(self) -> float | None:
        """20·log10(signal_v / a_weighted_v); None when there is no signal."""
        return None if self.silent_reason or self.signal_v <= 0 else 20.0 * math.log10(self.signal_v / self.a_weighted_v)

    def as_dict(self) -> dict:
        return {
            "frequency_hz": self.frequency_hz.tolist(),
            "density_v_per_rthz": self.density_v_per_rthz.tolist(),
            "density_1k_v_per_rthz": self.density_1k_v_per_rthz,
            "noise_v_rms": self.total_v,  # the name hum_and_noise gives the same figure
            "noise_dbv": 20.0 * math.log10(self.total_v),
            "noise_a_weighted_v_rms": self.a_weighted_v,
            "noise_a_weighted_dbv": 20.0 * math.log10(self.a_weighted_v),
            **signal_record("signal_v_rms", self.signal_v, self.silent_reason),
            **self._snr_record(),
            "contributors": [c.as_dict() for c in self.contributors],
        }

    def _snr_record(self) -> dict:
        from . import undefined as U

        rec: dict = {}
        reason = self.silent_reason or U.NO_SIGNAL
        U.put(rec, "snr_db", self.snr_db, reason)
        U.put(rec, "snr_a_db", self.snr_a_db, reason)
        return rec


@dataclass(frozen=True)
class NoiseReport:
    """A design's noise floor and its passive reference's, with what they are relative to (what :func:`noise` returns).

    Attributes
    ----------
    design : str
        The design's name.
    source : str
        The design file it came from, as given.
    temperature_k : float, K
        The temperature of every resistance.
    reference_velocity : float, m/s rms
        String velocity of the 1 kHz reference sine the SNRs are relative to.
    noise_voltage : float, V/√Hz
        The op-amp's input voltage noise density.
    noise_current : float, A/√Hz
        The op-amp's input current noise density.
    active : NoiseFloor
        The design's floor.
    passive : NoiseFloor
        Its passive reference's floor.
    opamp_peak_v : float, V
        The reference sine's peak at the op-amp output (0 when the coils cancel it; at volume 0 it still swings, the
        volume pot following the op-amp).
    onset_v : float, V
        From the op-amp output's bias to the soft limit's onset, the nearer side; above it
        ``reference_clips`` is True and ``warnings()`` says the SNRs are for the signal unclipped.
    """

    design: str
    source: str
    temperature_k: float
    reference_velocity: float  # m/s rms
    noise_voltage: float  # V/√Hz, the op-amp's
    noise_current: float  # A/√Hz
    active: NoiseFloor
    passive: NoiseFloor
    opamp_peak_v: float = 0.0  # V: the reference sine's peak at the op-amp output
    onset_v: float = math.inf  # V: from the bias to the soft limit's onset, the nearer side

    @property
    def reference_clips(self) -> bool:
        """The reference sine's peak at the op-amp output passes the soft limit's onset: the SNRs are for a signal the design would not pass unclipped."""
        return self.opamp_peak_v > self.onset_v

    def warnings(self) -> list[str]:
        """One line per reason to doubt the SNR (a reference signal that would clip)."""
        if not self.reference_clips:
            return []
        return [
            f"the reference signal would clip: {self.reference_velocity:g} m/s rms swings the op-amp output {self.opamp_peak_v:.3g} V peak from its bias,"
            f" past the limit's onset {self.onset_v:.3g} V away; the SNRs are for the signal unclipped; it stays unclipped"
            f" below {self.reference_velocity * self.onset_v / self.opamp_peak_v:.3g} m/s rms"
        ]

    @property
    def opamp_silent_reason(self) -> str | None:
        """Why the op-amp output has no reference signal (its coils cancel it), or None: the volume pot follows the op-amp,
        so at volume 0 the op-amp output still swings."""
        from . import undefined as U

        why = self.active.silent_reason
        return None if why == U.VOLUME_ZERO else why

    def reference_signal(self) -> dict:
        return {
            "kind": "sine",
            "frequency_hz": REFERENCE_HZ,
            "string_velocity_m_per_s_rms": self.reference_velocity,
            "at": "both sensing points",
            **signal_record("output_v_rms", self.active.signal_v, self.active.silent_reason),
            **signal_record("passive_output_v_rms", self.passive.signal_v, self.passive.silent_reason),
            **signal_record("opamp_output_peak_v", self.opamp_peak_v, self.opamp_silent_reason),
            "onset_v": self.onset_v,
            "clips": self.reference_clips,
        }


def signal_record(key: str, value: float, reason: str | None) -> dict:
    """``{key: value}``, or where there is no signal (``reason``: the volume at 0, coils that cancel it) ``None`` with the
    reason beside it (:mod:`render.analysis.undefined`): an absent signal is words, not a 0 the setting decided."""
    from . import undefined as U

    return U.mark({}, key, reason) if reason else {key: value}


def _floor(sources, f_int, f_out, signal_v, silent_reason=None) -> NoiseFloor:
    weight = a_weighting(f_int) ** 2
    psd_int = np.stack([s.output_psd(f_int)[0] for s in sources])  # (K, F_int)
    psd_out = np.stack([s.output_psd(f_out)[0] for s in sources])
    psd_1k = np.array([s.output_psd([REFERENCE_HZ])[0, 0] for s in sources])
    each = band_rms(psd_int, f_int)
    each_a = band_rms(psd_int * weight, f_int)
    total = float(band_rms(psd_int.sum(axis=0), f_int))
    total_a = float(band_rms((psd_int * weight).sum(axis=0), f_int))
    order = np.argsort(-each, kind="stable")
    contributors = tuple(Contributor(sources[k].key, sources[k].label, float(each[k]), float(each_a[k]), float(each[k] ** 2 / total**2), float(np.sqrt(psd_1k[k]))) for k in order if each[k] > 0.0)
    return NoiseFloor(
        frequency_hz=f_out,
        density_v_per_rthz=np.sqrt(psd_out.sum(axis=0)),
        density_1k_v_per_rthz=float(np.sqrt(psd_1k.sum())),
        total_v=total,
        a_weighted_v=total_a,
        signal_v=float(signal_v),
        contributors=contributors,
        contributor_density={sources[k].key: np.sqrt(psd_out[k]) for k in order if each[k] > 0.0},
        silent_reason=silent_reason,
    )


def check_reference_velocity(value: object) -> float:
    """The reference sine's string velocity, m/s rms, within :data:`REFERENCE_VELOCITY_RANGE`, as a float;
    :class:`~render.errors.ArgumentError` otherwise, worded as ``--reference-velocity`` refuses it."""
    import numbers

    from ..errors import ArgumentError
    from ..option_checks import number_range

    lo, hi = REFERENCE_VELOCITY_RANGE
    span = number_range(lo, hi, unit="m/s rms")
    x = float(value) if isinstance(value, numbers.Real) and not isinstance(value, bool) else None
    if x is None:
        why = f"not a number; give one {span}"
    elif not math.isfinite(x):
        why = f"not a finite number; give one {span}"
    elif not lo <= x <= hi:
        why = f"out of range; give a number {span}"
    else:
        return x
    raise ArgumentError("reference_velocity", shown(value), why, option="--reference-velocity")


def noise_reports(designs, *, temperature=T_DEFAULT, reference_velocity=REFERENCE_VELOCITY, frequency_hz=None) -> list[NoiseReport]:
    """Noise floors of validated designs (rigs applied), active and passive.

    temperature : K (200..400); reference_velocity : m/s rms (:data:`REFERENCE_VELOCITY_RANGE`) of the
    1 kHz reference signal; frequency_hz : (F,) grid of the reported
    density (default :func:`output_grid`). Totals always integrate
    20 Hz–20 kHz on :func:`integration_grid`.
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    ds = list(designs)
    t = check_temperature(temperature)
    reference_velocity = check_reference_velocity(reference_velocity)
    p = from_designs(ds)
    resp = responses(p)
    model: NoiseModel = noise_model(
        p,
        noise_voltage=np.array([d.supply.noise_voltage for d in ds]),
        noise_current=np.array([d.supply.noise_current for d in ds]),
        temperature=t,
        resp=resp,
    )
    from .figures import silence

    why_silent, why_passive_silent = silence(ds, resp, [REFERENCE_HZ])
    silent, passive_silent = np.array([w is not None for w in why_silent]), np.array([w is not None for w in why_passive_silent])
    sig = np.where(silent, 0.0, np.abs(resp.velocity()([REFERENCE_HZ])[:, 0]) * reference_velocity)
    sig_p = np.where(passive_silent, 0.0, np.abs(resp.passive_velocity()([REFERENCE_HZ])[:, 0]) * reference_velocity)
    from . import undefined as U

    # the volume pot follows the op-amp: at volume 0 its output still swings (and may clip); coils that cancel leave it still
    still = np.array([w is not None and w != U.VOLUME_ZERO for w in why_silent])
    peak = np.where(still, 0.0, np.abs(resp.velocity_to_amp_output()([REFERENCE_HZ])[:, 0]) * reference_velocity * math.sqrt(2.0))
    f_int = integration_grid()
    f_out = output_grid() if frequency_hz is None else np.asarray(frequency_hz, float)
    out = []
    for i, d in enumerate(ds):
        act = tuple(_row(s, i) for s in model.active)
        pas = tuple(_row(s, i) for s in model.passive)
        out.append(
            NoiseReport(
                design=d.name,
                source=d.source,
                temperature_k=t,
                reference_velocity=float(reference_velocity),
                noise_voltage=d.supply.noise_voltage,
                noise_current=d.supply.noise_current,
                active=_floor(act, f_int, f_out, sig[i], why_silent[i]),
                passive=_floor(pas, f_int, f_out, sig_p[i], why_passive_silent[i]),
                opamp_peak_v=float(peak[i]),
                onset_v=onset_distance(d),
            )
        )
    return out


def onset_distance(design) -> float:
    """V: from the op-amp output's bias to the soft limit's onset on the nearer side (:func:`render.chain.limit.design_window`'s linear ends)."""
    from ..chain.limit import design_window

    w = design_window(design)
    return float(min(w.linear_high - design.bias_v, design.bias_v - w.linear_low))


def _row(s, i):
    """Source ``s`` restricted to design ``i`` (a batch of one)."""
    from dataclasses import replace

    return replace(s, transfer=s.transfer[i], psd=s.psd[i : i + 1], psd_re=None if s.psd_re is None else s.psd_re[i])


# ----------------------------------------------------------------------------


NOISE_TAPS = 1 << 16  # taps of the noise floor's shaping filter (1.37 s at 48 kHz; 0.73 Hz bins)


class NoiseStream:
    """The seeded noise floor at the amp input of ``design`` (rig applied), in volts, drawn block by block.

    One Gaussian process with the circuit's total output density
    S_out(f) = Σ_k |H_k|²·S_k (every source is Gaussian and independent, so
    their sum is one Gaussian process with the summed density): white
    Gaussian noise (``numpy.random.default_rng(seed)``, drawn in sequence;
    the passive reference's from the seed's sequence 1, so the two are
    independent; ``sequence`` names another, as the comparison pickup's 2)
    through a linear-phase FIR filter of :data:`NOISE_TAPS` taps whose
    response is √(S_out(f)·sample_rate/2) at every bin k·sample_rate/taps
    (zero at DC). The filter is primed with taps−1 draws before the first
    sample, and the draws run on from block to block, so :meth:`take` of n1
    then n2 samples gives the same samples as one :meth:`take` of n1 + n2
    (to float rounding of the convolution), and the floor never repeats.
    Its one-sided density is S_out, its mean zero. It is the small-signal
    floor: add it to a render at the amp input.

    Parameters
    ----------
    design : Design
    sample_rate : Hz > 0; seed : int ≥ 0; temperature : K (200..400);
    passive : the passive reference's noise instead;
    sequence : int ≥ 0 or None, which of the seed's independent sequences is
    drawn: 0 is ``default_rng(seed)`` itself, k ≥ 1 is
    ``SeedSequence(seed, spawn_key=(k,))``; None: 0 for the design's floor,
    1 for its passive reference's.
    """

    def __init__(self, design, *, sample_rate: float, seed: int, temperature: float = T_DEFAULT, passive: bool = False, sequence: int | None = None):
        if not (isinstance(sample_rate, (int, float, np.number)) and math.isfinite(sample_rate) and sample_rate > 0):
            raise InputError(f"sample_rate={shown(sample_rate)}: expected a positive sampling rate in Hz")
        if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
            raise InputError(f"seed={shown(seed)}: expected a whole number, 0 or more")
        t = check_temperature(temperature)
        model = design_noise_model([design], temperature=t)
        fs, taps = float(sample_rate), NOISE_TAPS
        bins = taps // 2 + 1
        gain = np.zeros(bins)
        for start in range(1, bins, WAVEFORM_CHUNK):
            k = np.arange(start, min(bins, start + WAVEFORM_CHUNK))
            psd = model.output_psd(k * (fs / taps), passive=passive)[0]
            gain[k] = np.sqrt(np.maximum(psd, 0.0) * (fs / 2.0))
        # zero phase, made causal by half its length: Σ h² = Σ_k S_out(f_k)·fs/taps (Parseval)
        self.taps = np.roll(np.fft.irfft(gain, taps), taps // 2)
        # the passive reference draws its own sequence (spawn key 1 of the same seed): the two floors are
        # independent, as two circuits' noise is; the active floor's draws are default_rng(seed)'s
        if sequence is not None and (isinstance(sequence, bool) or not isinstance(sequence, (int, np.integer)) or sequence < 0):
            raise InputError(f"sequence={shown(sequence)}: expected a whole number, 0 or more")
        which = (1 if passive else 0) if sequence is None else int(sequence)
        key = (which,) if which else ()  # sequence 0 is default_rng(seed)'s own draws
        self._rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=key))
        self._history = self._rng.standard_normal(taps - 1)

    def take(self, n: int) -> np.ndarray:
        """The next ``n`` samples (V), shape (n,)."""
        n = int(n)
        if n <= 0:
            return np.zeros(0)
        from scipy.signal import oaconvolve

        x = np.concatenate([self._history, self._rng.standard_normal(n)])
        self._history = x[-(self.taps.size - 1) :]
        return oaconvolve(x, self.taps, mode="valid")


def noise_waveform(design, *, n: int, sample_rate: float, seed: int, temperature: float = T_DEFAULT, passive: bool = False, sequence: int | None = None) -> np.ndarray:
    """The first ``n`` samples of :class:`NoiseStream` (V at the amp input of ``design``, rig applied): the same samples a
    streamed render draws block by block.

    Parameters
    ----------
    n : int ≥ 1, samples; sample_rate : Hz > 0; seed : int ≥ 0;
    temperature : K (200..400); passive : the passive reference's noise instead;
    sequence : which of the seed's independent sequences (:class:`NoiseStream`).

    Returns
    -------
    np.ndarray, shape (n,), float64, volts.
    """
    if isinstance(n, bool) or not isinstance(n, (int, np.integer)) or n < 1:
        raise InputError(f"n={shown(n)}: expected a whole number of samples, at least 1")
    return NoiseStream(design, sample_rate=sample_rate, seed=seed, temperature=temperature, passive=passive, sequence=sequence).take(int(n))


def noise_record(r: NoiseReport, design, rig_file) -> dict:
    """The --json record of one report (the keys scripts rely on first)."""
    from .. import __version__
    from ..design.provenance import design_provenance

    act = r.active.as_dict()
    pas = r.passive.as_dict()
    pas.pop("frequency_hz")
    return {
        "design": r.design,
        "file": r.source,
        "sha256": design.sha256,
        **design_provenance(design),
        "rig": {"file": rig_file.source, "sha256": rig_file.sha256} if rig_file else None,
        "software_version": __version__,
        "temperature_k": r.temperature_k,
        "band_hz": list(BAND_HZ),
        "frequency_hz": act.pop("frequency_hz"),
        "density_v_per_rthz": act.pop("density_v_per_rthz"),
        "noise_v_rms": act.pop("noise_v_rms"),
        "noise_a_weighted_v_rms": act.pop("noise_a_weighted_v_rms"),
        **{k: act.pop(k) for k in ("snr_db", "snr_db_reason", "snr_a_db", "snr_a_db_reason") if k in act},
        "reference_signal": r.reference_signal(),
        "warnings": r.warnings(),
        "opamp": {"noise_voltage_v_per_rthz": r.noise_voltage, "noise_current_a_per_rthz": r.noise_current},
        **act,
        "passive": pas,
    }


def noise(design, *, rig=None, temperature_k: float = T_DEFAULT, reference_velocity: float = REFERENCE_VELOCITY) -> NoiseReport:
    """The noise floor of ``design`` at the amp input, with its passive reference's.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
        Play into this rig instead of the design's own.
    temperature_k : float, K, 200..400
        Temperature of every resistance.
    reference_velocity : float, m/s rms, 0.0001..10
        String velocity of the 1 kHz reference sine the SNR is relative to.

    Returns
    -------
    NoiseReport
    """
    from ..arguments import number
    from ..design import apply_rig

    number("temperature_k", temperature_k, unit="K")  # a number at all first, then its range
    check_temperature(temperature_k, "temperature_k")
    (report,) = noise_reports([apply_rig(design, rig)], temperature=temperature_k, reference_velocity=reference_velocity)
    return report
