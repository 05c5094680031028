"""Hum and noise on one scale: both rms at the amp input, unweighted and A-weighted, against one reference signal.

- Hum: the mains harmonics at the amp input, each a sine of peak amplitude
  a_k at f_k (:func:`render.analysis.hum.hum_table`); their rms is
  √(Σ a_k²/2) (sines of distinct frequencies are orthogonal over a common
  period), and A-weighted √(Σ (A(f_k)·a_k)²/2), A the analog A-weighting of
  IEC 61672-1:2013 (:func:`render.analysis.noise.a_weighting`). Only
  harmonics inside the noise band (20 Hz–20 kHz) count, so both figures
  cover the same band.
- Noise: √∫ S df over 20 Hz–20 kHz, unweighted and A-weighted
  (:mod:`render.analysis.noise`).
- The reference signal, for both: a 1 kHz sine of string velocity 0.1 m/s
  rms at both sensing points (:data:`render.analysis.noise.REFERENCE_VELOCITY`),
  at the amp input. A-weighting is 0 dB at 1 kHz, so the reference is the
  same weighted and unweighted. Our own choice (about a moderate pluck;
  common practice, no source).
- ``hum_over_noise_db`` = 20·log10(hum/noise): positive when the hum
  dominates. None (with a reason) when there is no hum: the coils cancel it
  exactly, or no source links either coil.

Pure: results in, a frozen result out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import undefined as U
from .noise import BAND_HZ, REFERENCE_HZ, REFERENCE_VELOCITY, a_weighting

NO_HUM_AT_ALL = "no hum: it cancels exactly, or the field is zero"
NO_SIGNAL_COILS_CANCEL = "no signal: the coils cancel the string signal exactly"


def harmonics_rms(frequency_hz, peak_v, *, weighted: bool = False, band=BAND_HZ) -> float:
    """rms of a sum of sines of distinct frequencies: √(Σ w_k² a_k² / 2).

    frequency_hz : np.ndarray [shape=(K,)], Hz; peak_v : np.ndarray [shape=(K,)], V peak
    (magnitudes of complex amplitudes are taken); weighted : w_k = A(f_k) of
    IEC 61672-1, else 1. Harmonics outside ``band`` (Hz) are left out.
    Returns V rms.
    """
    f = np.asarray(frequency_hz, float)
    a = np.abs(np.asarray(peak_v))
    keep = (f >= band[0]) & (f <= band[1])
    w = a_weighting(f[keep]) if weighted else 1.0
    return float(np.sqrt(np.sum((w * a[keep]) ** 2) / 2.0))


@dataclass(frozen=True)
class OneScale:
    """One circuit's hum and noise on one scale (V rms at the amp input).

    Attributes
    ----------
    circuit : str
        What was measured ("active", "passive reference", or a comparison pickup's name).
    signal_v : float, V rms
        The reference signal (1 kHz, ``reference_velocity`` m/s rms) at the amp input; 0 when the coils cancel it.
    hum_v, hum_a_v : float, V rms
        The hum, unweighted and A-weighted.
    noise_v, noise_a_v : float, V rms
        The noise, 20 Hz–20 kHz, unweighted and A-weighted.
    reference_velocity : float, m/s rms
    reference_hz : float, Hz
    no_hum_reason : str
        Why there is no hum, in words, when ``hum_v`` is 0 (the coils cancel
        it exactly, or no source links either coil).
    no_signal_reason : str
        Why there is no signal, in words, when ``signal_v`` is 0: this circuit's own (the coils cancel it,
        or the volume is at 0; for the passive reference, its own coils).
    """

    circuit: str
    signal_v: float
    hum_v: float
    hum_a_v: float
    noise_v: float
    noise_a_v: float
    reference_velocity: float = REFERENCE_VELOCITY
    reference_hz: float = REFERENCE_HZ
    no_hum_reason: str = NO_HUM_AT_ALL
    no_signal_reason: str = NO_SIGNAL_COILS_CANCEL

    @property
    def no_signal_cell(self) -> str:
        """Where there is no signal, its reason's short form for a table cell ("no passive signal"); else ""."""
        return U.cell({"why": None, "why_reason": self.no_signal_reason}, "why", "") if self.signal_v <= 0 else ""

    @staticmethod
    def _db(x: float, y: float) -> float | None:
        return 20.0 * math.log10(x / y) if x > 0 and y > 0 else None

    @property
    def hum_over_noise_db(self) -> float | None:
        """20·log10(hum_v/noise_v): > 0 when the hum dominates; None when there is no hum."""
        return self._db(self.hum_v, self.noise_v)

    @property
    def hum_over_noise_a_db(self) -> float | None:
        """The same, A-weighted."""
        return self._db(self.hum_a_v, self.noise_a_v)

    def as_dict(self) -> dict:
        rec: dict = {
            "circuit": self.circuit,
            "reference_signal": {"frequency_hz": self.reference_hz, "velocity_m_per_s_rms": self.reference_velocity},
            **({"signal_v_rms": self.signal_v} if self.signal_v > 0 else U.mark({}, "signal_v_rms", self.no_signal_reason)),
            "hum_v_rms": self.hum_v,
            "hum_a_weighted_v_rms": self.hum_a_v,
            "noise_v_rms": self.noise_v,
            "noise_a_weighted_v_rms": self.noise_a_v,
        }
        no_signal = self.no_signal_reason
        no_hum = self.no_hum_reason
        for key, num, den, why in (
            ("signal_to_hum_db", self.signal_v, self.hum_v, no_hum if self.hum_v <= 0 else no_signal),
            ("signal_to_hum_a_db", self.signal_v, self.hum_a_v, no_hum if self.hum_a_v <= 0 else no_signal),
            ("signal_to_noise_db", self.signal_v, self.noise_v, no_signal),
            ("signal_to_noise_a_db", self.signal_v, self.noise_a_v, no_signal),
            ("hum_over_noise_db", self.hum_v, self.noise_v, no_hum),
            ("hum_over_noise_a_db", self.hum_a_v, self.noise_a_v, no_hum),
        ):
            U.put(rec, key, self._db(num, den), why)
        return rec


def one_scale(
    circuit: str,
    *,
    hum_frequency_hz,
    hum_peak_v,
    noise_v: float,
    noise_a_v: float,
    signal_v: float,
    reference_velocity: float = REFERENCE_VELOCITY,
    no_hum_reason: str | None = None,
    no_signal_reason: str | None = None,
) -> OneScale:
    """Hum (per-harmonic peaks) and noise (band totals) of one circuit on one scale.

    hum_frequency_hz, hum_peak_v : np.ndarray [shape=(K,)], Hz and V peak
    noise_v, noise_a_v : float, V rms (20 Hz–20 kHz)
    signal_v : float, V rms, the reference signal at the amp input
    no_hum_reason : str or None
        Why the hum is zero, when it is (:mod:`render.analysis.undefined`'s wording); None: :data:`NO_HUM_AT_ALL`.
    no_signal_reason : str or None
        Why the signal is zero, when it is (the volume at 0, or the circuit's noise floor's ``silent_reason``); None: :data:`NO_SIGNAL_COILS_CANCEL`.
    """
    return OneScale(
        circuit=circuit,
        signal_v=float(signal_v),
        hum_v=harmonics_rms(hum_frequency_hz, hum_peak_v),
        hum_a_v=harmonics_rms(hum_frequency_hz, hum_peak_v, weighted=True),
        noise_v=float(noise_v),
        noise_a_v=float(noise_a_v),
        reference_velocity=float(reference_velocity),
        no_hum_reason=no_hum_reason or NO_HUM_AT_ALL,
        no_signal_reason=no_signal_reason or NO_SIGNAL_COILS_CANCEL,
    )


def passive_hum_peaks(design, resp=None) -> tuple[np.ndarray, np.ndarray]:
    """(frequency_hz (K,), complex peak V (K,)) of the passive reference's hum at the amp input, per mains harmonic."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from .hum import field_derivative
    from .undefined import net_hum

    resp = resp or responses(from_designs([design]))
    f, dbdt = field_derivative(design.hum)
    if design.hum.sources:
        from .hum_sources import source_voltages

        return f, np.asarray(source_voltages(design, resp).passive)
    zero = np.zeros(1)
    pa, pb = (x(f)[0] * dbdt for x in (resp.passive_mix(resp.hum_a, zero), resp.passive_mix(zero, resp.hum_b)))
    return f, net_hum(pa, pb)


def design_one_scale(design, *, temperature: float = 300.0, reference_velocity: float = REFERENCE_VELOCITY) -> tuple[OneScale, OneScale]:
    """(active, passive reference) of a validated design (rig applied), on one scale."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from .hum import hum_table
    from .noise import noise_reports

    resp = responses(from_designs([design]))
    table = hum_table(design, resp)
    (nr,) = noise_reports([design], temperature=temperature, reference_velocity=reference_velocity)
    f = np.array([row["frequency_hz"] for row in table["harmonics"]])
    peaks = np.array([row["output_v"] for row in table["harmonics"]])
    fp, pp = passive_hum_peaks(design, resp)
    active = one_scale(
        "active",
        hum_frequency_hz=f,
        hum_peak_v=peaks,
        noise_v=nr.active.total_v,
        noise_a_v=nr.active.a_weighted_v,
        signal_v=0.0 if nr.active.silent_reason else nr.active.signal_v,
        reference_velocity=reference_velocity,
        no_hum_reason=table.get("note_to_hum_db_reason") if table["total_v_rms"] <= 0 else None,
        no_signal_reason=nr.active.silent_reason,
    )
    passive = one_scale(
        "passive reference",
        hum_frequency_hz=fp,
        hum_peak_v=pp,
        noise_v=nr.passive.total_v,
        noise_a_v=nr.passive.a_weighted_v,
        signal_v=0.0 if nr.passive.silent_reason else nr.passive.signal_v,
        reference_velocity=reference_velocity,
        no_hum_reason=table["passive"].get("note_to_hum_db_reason") if table["passive"]["total_v_rms"] <= 0 else None,
        no_signal_reason=nr.passive.silent_reason,
    )
    return active, passive
