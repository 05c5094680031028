"""An RL ladder realising a coil's frequency-dependent inductance in the time domain.

Foster form (Foster, Bell Syst. Tech. J. 3(2), 1924, "A reactance theorem",
whose partial-fraction realisation holds for RL one-ports too): an
inductance L0 in series with K sections, each an inductance L_k in parallel
with a resistance R_k,

    Z(s) = s·L0 + Σ_k s·L_k·R_k / (R_k + s·L_k)
         = s·[L0 + Σ_k L_k / (1 + s·τ_k)],   τ_k = L_k/R_k.               (1)

Every element is positive, so the ladder is passive; its resistors are the
core loss's thermal-noise sources, and by Nyquist's theorem their noise at
the terminals is 4kT·Re{Z}.

This form is exact for a conducting cylinder or slab: Z_core/s is a sum of
simple poles on the negative real axis (the Mittag-Leffler expansion
2J1(x)/(xJ0(x)) = Σ 4/(j²_0,n − x²), with j_0,n the zeros of J0; Watson,
*Bessel Functions*, 1944, §15.41), one section per pole. A few sections with
fitted τ_k reproduce it over the audio band.

The fit
-------
For fixed τ_k the weights L0, L_k ≥ 0 follow from a bounded linear least-
squares problem on the relative complex error of Z/s, λ_fit/λ − 1 (its real
part is the error of |Z| in nepers, its imaginary part that of the phase in
radians); the τ_k themselves are moved by a nonlinear least-squares search
(variable projection).

The phase error alone does not hold the core loss Re{Z} = −ω·Im λ: at low
frequency the loss is a small angle of λ (Re{Z}/Im{Z} → ω·Στ_kL_k/L_dc, the
x²/3 term of tanh x/x = 1 − x²/3 + …; Lammeraner & Štafl, *Eddy Currents*,
1966), so a loss 10 % off moves the phase by a few hundredths of a degree.
Each imaginary row is therefore weighted by |λ|/|Im λ|, which makes it the
relative error of the loss itself. Where the target's loss never turns the
phase by more than the phase tolerance over the report band, a lossless
ladder is within that tolerance: the loss is then left unweighted and not
counted ("below the fit tolerance").

Sections are added one at a time until the error over the report band is
within the asked tolerances: of |Z| (dB), of the phase (°), and of the loss
(a fraction of Re{Z}).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError

REPORT_BAND_HZ = (20.0, 20e3)
FIT_BAND_HZ = (10.0, 100e3)
TOL_DB, TOL_DEG, TOL_LOSS = 0.05, 0.5, 0.05  # fit_ladder's default tolerances: dB, degrees, a fraction of the loss


@dataclass(frozen=True)
class Ladder:
    """Eq. (1): L0 in series with R_k ∥ L_k sections.

    Attributes
    ----------
    series_inductance : float, H ≥ 0
        L0.
    inductances : tuple of float, H > 0
        L_k.
    resistances : tuple of float, Ω > 0
        R_k.
    """

    series_inductance: float
    inductances: tuple[float, ...] = ()
    resistances: tuple[float, ...] = ()

    def __post_init__(self):
        if len(self.inductances) != len(self.resistances):
            raise InputError(f"ladder: {len(self.inductances)} inductances but {len(self.resistances)} resistances; give one of each per section")
        if self.series_inductance < 0 or any(not v > 0 for v in self.inductances) or any(not v > 0 for v in self.resistances):
            raise InputError("ladder: every inductance and resistance must be > 0 (the series inductance ≥ 0), or the ladder is not passive")

    @property
    def time_constants(self) -> np.ndarray:
        """τ_k = L_k/R_k in s."""
        return np.asarray(self.inductances, float) / np.asarray(self.resistances, float)

    @property
    def dc_inductance(self) -> float:
        """L0 + Σ L_k, H."""
        return float(self.series_inductance + sum(self.inductances))

    def impedance(self, frequency_hz) -> np.ndarray:
        """Z(j2πf) in Ω, eq. (1), shape (F,)."""
        s = 2j * np.pi * np.atleast_1d(np.asarray(frequency_hz, float))
        lk, tk = np.asarray(self.inductances, float), self.time_constants
        return s * (self.series_inductance + np.sum(lk[:, None] / (1 + s[None, :] * tk[:, None]), axis=0))


@dataclass(frozen=True)
class LadderFit:
    """A fitted ladder and its error over the report band.

    Attributes
    ----------
    ladder : Ladder
    error_db : float
        Largest |20·log10|Z_fit/Z|| over the report band, dB.
    error_deg : float
        Largest |∠Z_fit − ∠Z| over the report band, degrees.
    band_hz : tuple of float
        The report band.
    error_loss : float or None
        Largest |Re{Z_fit}/Re{Z} − 1| over the report band (a fraction); None when
        the loss is below the fit tolerance (not fitted: see ``loss_angle_deg``).
    loss_angle_deg : float, degrees
        The target's largest loss angle atan(Re{Z}/Im{Z}) over the report band.
    """

    ladder: Ladder
    error_db: float
    error_deg: float
    band_hz: tuple[float, float]
    error_loss: float | None = None
    loss_angle_deg: float = 0.0

    def loss_reason(self, tol_deg: float | None = None) -> str | None:
        """Why ``error_loss`` is None, in words ("loss below the fit tolerance (…)", or "no core loss …" when the target has none); None when it is given.

        ``tol_deg``: the fit's phase tolerance (default :data:`TOL_DEG`, :func:`fit_ladder`'s).
        """
        if self.error_loss is not None:
            return None
        if not self.loss_angle_deg > 0:
            return "no core loss (an air core, or parts that do not conduct)"
        tol = TOL_DEG if tol_deg is None else tol_deg
        return f"loss below the fit tolerance (it turns the phase by {self.loss_angle_deg:.2f}° at most, under {tol:g}°)"


def ladder_error(z_fit, z_ref) -> tuple[float, float]:
    """(largest dB error, largest phase error in degrees) of ``z_fit`` against ``z_ref``."""
    ratio = np.asarray(z_fit) / np.asarray(z_ref)
    return float(np.max(np.abs(20 * np.log10(np.abs(ratio))))), float(np.max(np.abs(np.degrees(np.angle(ratio)))))


def loss_error(z_fit, z_ref) -> float:
    """Largest |Re{z_fit}/Re{z_ref} − 1| where Re{z_ref} > 0: the relative error of the resistive part (the core loss); 0 where none has loss."""
    ref, fit = np.real(np.asarray(z_ref)), np.real(np.asarray(z_fit))
    has = ref > 0
    return float(np.max(np.abs(fit[has] / ref[has] - 1))) if np.any(has) else 0.0


LOSS_WEIGHT_MAX = 1e6  # the imaginary rows' weight |λ|/|Im λ| is capped here (a loss angle under 1 µrad)


def _weights(s, lam, tau, im_weight=1.0):
    """Bounded linear least squares for L0, L_k ≥ 0 given τ; returns (weights, residual).

    ``im_weight`` (scalar or shape (F,)) scales the imaginary rows: 1 for the
    relative error of λ, |λ|/|Im λ| for the relative error of the loss.
    """
    from scipy.optimize import lsq_linear

    basis = np.concatenate([np.ones((1, s.size)), 1.0 / (1.0 + s[None, :] * tau[:, None])], axis=0) / lam[None, :]
    a = np.concatenate([basis.real, basis.imag * im_weight], axis=1).T
    b = np.concatenate([np.ones(s.size), np.zeros(s.size)])
    res = lsq_linear(a, b, bounds=(0.0, np.inf), method="bvls", tol=1e-12)
    return res.x, a @ res.x - b


def fit_ladder(
    frequency_hz,
    impedance,
    *,
    max_sections: int = 8,
    tol_db: float = TOL_DB,
    tol_deg: float = TOL_DEG,
    tol_loss: float | None = TOL_LOSS,
    band_hz: tuple[float, float] = REPORT_BAND_HZ,
) -> LadderFit:
    """Fit eq. (1) to an inductive impedance (no DC resistance, no capacitance).

    Parameters
    ----------
    frequency_hz : np.ndarray [shape=(F,)], Hz > 0, increasing
        Where the target is known; should reach beyond ``band_hz`` on both
        sides (a decade below and five times above is usual).
    impedance : np.ndarray [shape=(F,)], complex, Ω
        The target Z(j2πf), e.g. jω·L_air + :func:`render.impedance.eddy.core_impedance`.
    max_sections : int
        At most this many R ∥ L sections.
    tol_db, tol_deg : float
        Stop adding sections once the error over ``band_hz`` is within both
        (and within ``tol_loss``).
    tol_loss : float or None
        The loss's tolerance, a fraction of Re{Z} over ``band_hz``; the loss is
        weighted (module docstring) only where the target's loss angle exceeds
        ``tol_deg`` somewhere in the band. None: the loss is neither weighted
        nor counted (the relative error of Z/s alone).
    band_hz : (float, float)
        The band the error is reported over.

    Returns
    -------
    LadderFit
    """
    from scipy.optimize import least_squares

    f = np.asarray(frequency_hz, float)
    z = np.asarray(impedance, complex)
    if f.ndim != 1 or f.shape != z.shape or f.size < 4 or np.any(f <= 0) or np.any(np.diff(f) <= 0):
        raise InputError("fit_ladder: need at least 4 increasing frequencies > 0 and one impedance per frequency")
    s = 2j * np.pi * f
    lam = z / s  # the complex inductance, H
    in_band = (f >= band_hz[0] * (1 - 1e-9)) & (f <= band_hz[1] * (1 + 1e-9))
    if not np.any(in_band):
        raise InputError(f"fit_ladder: no frequency inside the report band {band_hz} Hz")
    angle = float(np.degrees(np.max(np.arctan2(np.abs(z[in_band].real), np.abs(z[in_band].imag)))))
    hold_loss = tol_loss is not None and angle > tol_deg
    im_weight = np.minimum(np.abs(lam) / np.maximum(np.abs(lam.imag), 1e-300), LOSS_WEIGHT_MAX) if hold_loss else 1.0
    tols = (tol_db, tol_deg, tol_loss if hold_loss and tol_loss is not None else np.inf)
    lo, hi = 1.0 / (2 * np.pi * f[-1]), 1.0 / (2 * np.pi * f[0])
    band = (float(band_hz[0]), float(band_hz[1]))
    best, best_score = None, np.inf
    for k in range(0, max_sections + 1):
        if k == 0:
            tau = np.zeros(0)
        else:
            # start from log-spaced time constants over the data's range, then move them
            start = np.log(np.geomspace(lo, hi, k + 2)[1:-1])
            fit = least_squares(lambda lt: _weights(s, lam, np.exp(lt), im_weight)[1], start, bounds=(np.log(lo / 100), np.log(hi * 100)), x_scale=1.0, xtol=1e-12, ftol=1e-12)
            tau = np.exp(fit.x)
        w, _ = _weights(s, lam, tau, im_weight)
        keep = w[1:] > 1e-12 * max(w.sum(), 1e-300)
        ladder = Ladder(float(w[0]), tuple(float(v) for v in w[1:][keep]), tuple(float(v) for v in (w[1:] / tau)[keep]))
        z_fit = ladder.impedance(f[in_band])
        err = (*ladder_error(z_fit, z[in_band]), loss_error(z_fit, z[in_band]) if hold_loss else 0.0)
        score = max(e / t for e, t in zip(err, tols))
        if score < best_score:
            best, best_score = LadderFit(ladder, err[0], err[1], band, err[2] if hold_loss else None, angle), score
        if score <= 1.0:
            break
    assert best is not None  # the loop runs at least once
    return best
