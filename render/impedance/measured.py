"""A measured coil: the coil model fitted to |Z| and phase from an LCR meter or impedance analyser.

The model at the coil's terminals is the winding capacitance C across the
series branch R_dc + Z_L, with Z_L the Foster RL ladder of
:mod:`render.impedance.ladder` (an inductance L0 and R_k ∥ L_k sections):

    Z(jω) = 1 / (1/(R_dc + Z_L(jω)) + jωC).                               (1)

The fit minimises, over all measured frequencies, the error of ln|Z| (nepers)
and of the phase (radians) with equal weight (nonlinear least squares on the
logarithms of the parameters, so each stays positive). It starts from the
low-frequency resistance and inductance and the self-resonance, fits the
ladder to what remains after C and R_dc are removed, and then refines all
parameters together; sections are added while each lowers the rms error by
at least 10 %.

Each parameter is held within bounds set by the data (:func:`_bounds`): so
far beyond what the sweep can show that a value on a bound means "not seen"
(a sweep with no capacitance ends with C on its lower bound, where ωC·|Z|
stays below 1e-9 at the top frequency), and close enough that the
exponentials of the log-parameters never overflow.

Pure: arrays in, a frozen result out. :mod:`render.io.measurement` reads the
files and :mod:`render.impedance.measurement_csv` parses them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .ladder import Ladder, fit_ladder


def terminal_impedance(frequency_hz, *, resistance: float, ladder: Ladder, capacitance: float) -> np.ndarray:
    """Eq. (1): the coil's impedance at its terminals in Ω, shape (F,)."""
    f = np.atleast_1d(np.asarray(frequency_hz, float))
    z_series = resistance + ladder.impedance(f)
    return 1.0 / (1.0 / z_series + 2j * np.pi * f * capacitance)


@dataclass(frozen=True)
class MeasuredCoil:
    """The coil model fitted to a measurement, and how well it fits.

    Attributes
    ----------
    resistance : float, Ω
        DC resistance of the winding.
    capacitance : float, F
        Winding capacitance across the terminals.
    ladder : Ladder
        The inductance with its core loss (L0 and R_k ∥ L_k sections).
    frequency_hz : np.ndarray [shape=(F,)]
        The measured frequencies.
    residual_db : np.ndarray [shape=(F,)]
        20·log10(|Z_model| / |Z_measured|), dB.
    residual_deg : np.ndarray [shape=(F,)]
        ∠Z_model − ∠Z_measured, degrees.
    """

    resistance: float
    capacitance: float
    ladder: Ladder
    frequency_hz: np.ndarray
    residual_db: np.ndarray
    residual_deg: np.ndarray

    @property
    def inductance(self) -> float:
        """H: the inductance at DC, L0 + Σ L_k."""
        return self.ladder.dc_inductance

    @property
    def max_residual_db(self) -> float:
        return float(np.max(np.abs(self.residual_db)))

    @property
    def max_residual_deg(self) -> float:
        return float(np.max(np.abs(self.residual_deg)))

    @property
    def rms_residual_db(self) -> float:
        return float(np.sqrt(np.mean(self.residual_db**2)))

    @property
    def rms_residual_deg(self) -> float:
        return float(np.sqrt(np.mean(self.residual_deg**2)))

    def self_resonance_hz(self) -> float:
        """Hz: where the fitted model's phase crosses zero from inductive to capacitive (searched 10 Hz–10 MHz)."""
        f = np.geomspace(10.0, 1e7, 4000)
        ph = np.angle(self.impedance(f))
        idx = np.flatnonzero((ph[:-1] > 0) & (ph[1:] <= 0))
        if idx.size == 0:
            return float("nan")
        i = idx[0]
        return float(np.exp(np.interp(0.0, [ph[i + 1], ph[i]], [np.log(f[i + 1]), np.log(f[i])])))

    def impedance(self, frequency_hz) -> np.ndarray:
        """The fitted model's terminal impedance, eq. (1)."""
        return terminal_impedance(frequency_hz, resistance=self.resistance, ladder=self.ladder, capacitance=self.capacitance)


def _unpack(theta, k):
    r, c, l0 = np.exp(theta[:3])
    lk = np.exp(theta[3 : 3 + k])
    tau = np.exp(theta[3 + k :])
    return r, c, l0, lk, tau


def _model(theta, k, s):
    r, c, l0, lk, tau = _unpack(theta, k)
    zl = s * (l0 + np.sum(lk[:, None] / (1 + s[None, :] * tau[:, None]), axis=0)) if k else s * l0
    return 1.0 / (1.0 / (r + zl) + s * c)


def _residual(theta, k, s, log_z):
    e = np.log(_model(theta, k, s)) - log_z
    # keep the phase error wrapped to (−π, π]
    return np.concatenate([e.real, np.angle(np.exp(1j * e.imag))])


def _bounds(f, z, k):
    """Lower and upper bounds of θ = ln(R, C, L0, L_1…L_k, τ_1…τ_k), from the sweep's span.

    Each bound lies nine decades beyond the least the data can show (R, ωL or
    1/(ωC) a 1e-9 part of |Z|) or three beyond the most, and a time constant
    three decades beyond the measured band's corners.
    """
    w_lo, w_hi = 2 * np.pi * f[0], 2 * np.pi * f[-1]
    z_lo, z_hi = float(np.min(np.abs(z))), float(np.max(np.abs(z)))
    r = (1e-9 * z_lo, 1e3 * z_hi)
    c = (1e-9 / (w_hi * z_hi), 1e3 / (w_lo * z_lo))
    ind = (1e-9 * z_lo / w_hi, 1e3 * z_hi / w_lo)
    tau = (1e-3 / w_hi, 1e3 / w_lo)
    lo = np.log([r[0], c[0], ind[0], *[ind[0]] * k, *[tau[0]] * k])
    hi = np.log([r[1], c[1], ind[1], *[ind[1]] * k, *[tau[1]] * k])
    return lo, hi


def _start(f, z):
    """R_dc, L and C from the lowest frequencies and the |Z| peak."""
    s = 2j * np.pi * f
    r0 = max(float(np.real(z[0])), 1e-3)
    l0 = max(float(np.imag(z[0]) / np.imag(s[0])), 1e-9)
    i_peak = int(np.argmax(np.abs(z)))
    if 0 < i_peak < f.size - 1:
        c0 = 1.0 / ((2 * np.pi * f[i_peak]) ** 2 * l0)
    else:
        # no resonance inside the data: C from where the reactance bends away from ωL, or a small default
        x = np.imag(1.0 / z + 0j)  # −1/(ωL) + ωC for a lossless coil
        c_est = np.median((x[-5:] + 1.0 / (np.imag(s[-5:]) * l0)) / np.imag(s[-5:]))
        c0 = float(c_est) if c_est > 0 else 1e-12
    return r0, l0, c0


def fit_measurement(frequency_hz, impedance, *, max_sections: int = 4) -> MeasuredCoil:
    """Fit eq. (1), ladder included, to a measured impedance.

    Parameters
    ----------
    frequency_hz : np.ndarray [shape=(F,)], Hz > 0, increasing
        At least 8 points; reach from well below the core-loss corner (tens of
        Hz) to above the self-resonance, so that R_dc and C are both seen.
    impedance : np.ndarray [shape=(F,)], complex, Ω
        |Z|·e^(j·phase) as measured.
    max_sections : int
        At most this many R ∥ L sections in the ladder.

    Returns
    -------
    MeasuredCoil
    """
    from scipy.optimize import least_squares

    f = np.asarray(frequency_hz, float)
    z = np.asarray(impedance, complex)
    if f.ndim != 1 or f.shape != z.shape or f.size < 8:
        raise InputError(f"measured coil: need at least 8 frequencies with one impedance each, got {f.size}")
    if np.any(~np.isfinite(f)) or np.any(~np.isfinite(z)) or np.any(f <= 0) or np.any(np.diff(f) <= 0) or np.any(np.abs(z) <= 0):
        raise InputError("measured coil: frequencies must be finite, > 0 and increasing, and every |Z| finite and > 0")
    s = 2j * np.pi * f
    log_z = np.log(z)
    r0, l0, c0 = _start(f, z)

    best, best_rms = None, np.inf
    for k in range(0, max_sections + 1):
        if k == 0:
            theta0 = np.log([r0, c0, l0])
        else:
            # the ladder fitted to what is left once C and R_dc are taken away, then everything together
            r_prev, c_prev = (best.resistance, best.capacitance) if best is not None else (r0, c0)
            zl = 1.0 / (1.0 / z - s * c_prev) - r_prev
            lad = fit_ladder(f, np.where(np.imag(zl) > 0, zl, 1j * np.abs(zl)), max_sections=k, tol_db=1e-9, tol_deg=1e-9, band_hz=(f[0], f[-1])).ladder
            m = len(lad.inductances)
            if m < k:
                lk = np.concatenate([lad.inductances, np.full(k - m, 1e-3 * lad.dc_inductance)])
                tau = np.concatenate([lad.time_constants, np.geomspace(1 / (2 * np.pi * f[-1]), 1 / (2 * np.pi * f[0]), k - m)])
            else:
                lk, tau = np.asarray(lad.inductances), lad.time_constants
            theta0 = np.log(np.concatenate([[r_prev, c_prev, max(lad.series_inductance, 1e-6 * lad.dc_inductance)], lk, tau]))
        lo, hi = _bounds(f, z, k)
        margin = 1e-6 * (hi - lo)
        theta0 = np.clip(theta0, lo + margin, hi - margin)
        sol = least_squares(_residual, theta0, args=(k, s, log_z), bounds=(lo, hi), method="trf", x_scale=1.0, xtol=1e-12, ftol=1e-12, max_nfev=4000)
        r, c, l_series, lk, tau = _unpack(sol.x, k)
        ladder = Ladder(float(l_series), tuple(float(v) for v in lk), tuple(float(v) for v in lk / tau)) if k else Ladder(float(l_series))
        e = np.log(_model(sol.x, k, s)) - log_z
        res = MeasuredCoil(float(r), float(c), ladder, f.copy(), 20 / np.log(10) * e.real, np.degrees(np.angle(np.exp(1j * e.imag))))
        rms = np.sqrt(np.mean(sol.fun**2))
        if best is not None and rms > 0.9 * best_rms:
            break
        best, best_rms = res, rms
    assert best is not None  # the loop runs at least once
    return best
