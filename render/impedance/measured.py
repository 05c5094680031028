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

How well the sweep fixes C (:meth:`MeasuredCoil.capacitance_doubt`). Below
the self-resonance the capacitance only raises |Z| by 1/|1 − ω²LC|, and the
ladder's falling inductance can trade against it; a sweep that stops too far
below the resonance returns a C that fits the noise, not the coil. Two
measures, both read from the data: C's share of the reactance at the top
frequency, x = ω_top²·L_dc·C (x = 1 at the self-resonance), and C's
relative standard error from the fit's covariance. C is reported as not
determined when x < :data:`REACH_SHARE` or the error exceeds
:data:`REACH_SD`; it can then be held at a given value instead
(``fit_measurement(..., capacitance=...)``).

How far the sweep reaches into the band (:meth:`MeasuredCoil.band_doubt`).
render's figures run to 20 kHz (:data:`render.impedance.ladder.REPORT_BAND_HZ`).
A sweep that ends below it fits the ladder's sections to the losses it shows;
above its end the core loss, and so |Z| and the phase, are the fitted model's
extrapolation (the shipped example cut at 2 kHz, with C held at its true value,
is off its own rows by up to 11 dB and 43° between 2 and 20 kHz, near the
self-resonance: tests/cli/test_coil_band_end.py).

How well the sweep fixes R_dc and the inductance at DC
(:meth:`MeasuredCoil.resistance_doubt`, :meth:`MeasuredCoil.inductance_doubt`).
Both are what the coil shows at the low end, below its corner R_dc/(2πL),
where the resistance carries at least as much of |Z| as the reactance, so
the phase is under 45°. A sweep that starts above the corner sees a real part
carried more and more by the core loss, which the ladder's sections can trade
against R_dc; the fit then extrapolates both, and the covariance does not see
it (a trade of model terms, not noise: on the closed-form coil of
tests/impedance/test_measured_determined.py, started at 2 kHz, R_dc came out
36 % off with a standard error of 2.4 %). So each is reported as not
determined when the phase at the lowest measured frequency exceeds
:data:`LOW_END_DEG`, or when its relative standard error from the covariance
exceeds :data:`REACH_SD` (a sweep too short or too noisy to show ωL: 8 points
from 20 to 34 Hz). R_dc can be held at an ohmmeter's reading instead
(``fit_measurement(..., resistance=...)``).

Pure: arrays in, a frozen result out. :mod:`render.io.measurement` reads the
files and :mod:`render.impedance.measurement_csv` parses them.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .ladder import REPORT_BAND_HZ, Ladder, fit_ladder

# C's share of the reactance at the sweep's top frequency, ω²·L_dc·C, below which the fitted C is not
# trusted: measured on the shipped synthetic example (1 % noise) cut short, where C came out more than
# 20 % off at x = 0.18 (5 kHz) and within 4 % from x = 0.38 (7 kHz) up (tests/impedance/test_measured_reach.py);
# about 0.55 of the self-resonance
REACH_SHARE = 0.3
REACH_SD = 0.1  # the fitted C's (and R_dc's, L's) relative standard error above which it is not trusted (common practice, no source)
# the phase at the sweep's lowest frequency above which R_dc and the inductance at DC are extrapolated: 45° is
# the coil's corner R_dc/(2πL), where R_dc carries as much of |Z| as ωL (circuit theory). On the closed-form coil
# of tests/impedance/test_measured_determined.py (1 % noise) R_dc came out within 1 % from every start below
# 500 Hz (phase 58° there), 1.7 % off from 1 kHz (69°) and 36 % off from 2 kHz: 45° keeps a margin
LOW_END_DEG = 45.0
BAND_TOP_HZ = REPORT_BAND_HZ[1]  # a sweep ending below this leaves the top of the band extrapolated
ROUNDING = 1e-3  # a frequency within this share of the sweep's end is inside it (a log-spaced sweep's rounding)


def outside_sweep(frequency_hz, band_hz: tuple[float, float] | None) -> np.ndarray:
    """Whether each frequency (Hz, shape (F,)) lies outside a measured sweep ``band_hz`` (Hz, its first and last
    frequency), where the fitted model is extrapolated; all False for ``band_hz`` None (a coil not measured)."""
    f = np.atleast_1d(np.asarray(frequency_hz, float))
    if band_hz is None:
        return np.zeros(f.shape, bool)
    lo, hi = band_hz
    return (f < lo * (1 - ROUNDING)) | (f > hi * (1 + ROUNDING))


def with_winding_capacitance(z_series, s, capacitance):
    """Eq. (1)'s shunt: the winding's series impedance ``z_series`` (R_dc + Z_L, Ω) with its capacitance
    across the terminals, 1 / (1/z_series + s·C), at ``s`` = j2πf (rad/s); arrays broadcast."""
    return 1.0 / (1.0 / z_series + s * capacitance)


SEARCH_HZ = (10.0, 1e7, 4000)  # where a self-resonance is looked for: from, to, log-spaced points


def self_resonance_hz(impedance_fn) -> float | None:
    """Hz: where ∠Z of ``impedance_fn`` (Hz -> Ω) first crosses zero from inductive to capacitive, log-interpolated
    between the :data:`SEARCH_HZ` points (None: not within 10 Hz–10 MHz)."""
    f = np.geomspace(*SEARCH_HZ)
    ph = np.angle(impedance_fn(f))
    idx = np.flatnonzero((ph[:-1] > 0) & (ph[1:] <= 0))
    if idx.size == 0:
        return None
    i = int(idx[0])
    return float(np.exp(np.interp(0.0, [ph[i + 1], ph[i]], [np.log(f[i + 1]), np.log(f[i])])))


def terminal_impedance(frequency_hz, *, resistance: float, ladder: Ladder, capacitance: float) -> np.ndarray:
    """Eq. (1): the coil's impedance at its terminals in Ω, shape (F,)."""
    f = np.atleast_1d(np.asarray(frequency_hz, float))
    return with_winding_capacitance(resistance + ladder.impedance(f), 2j * np.pi * f, capacitance)


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
    capacitance_rel_sd : float, ≥ 0
        The fitted capacitance's relative standard error, the standard
        deviation of ln C from the fit's covariance (0 when C was given).
    capacitance_given : bool
        C was held at a given value, not fitted.
    resistance_rel_sd, inductance_rel_sd : float, ≥ 0
        The relative standard errors of R_dc (0 when given) and of the inductance at DC, from the fit's covariance.
    resistance_given : bool
        R_dc was held at a given value (an ohmmeter's reading), not fitted.
    lowest_phase_deg : float, degrees
        The measured phase at the lowest frequency (:data:`LOW_END_DEG`).
    """

    resistance: float
    capacitance: float
    ladder: Ladder
    frequency_hz: np.ndarray
    residual_db: np.ndarray
    residual_deg: np.ndarray
    capacitance_rel_sd: float = 0.0
    capacitance_given: bool = False
    resistance_rel_sd: float = 0.0
    inductance_rel_sd: float = 0.0
    resistance_given: bool = False
    lowest_phase_deg: float = 0.0

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)  # a fit is cached and shared (render.design.coil_impedance): nobody may write into it

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

    @property
    def top_share(self) -> float:
        """ω_top²·L_dc·C at the top measured frequency: C's share of the reactance there (1 at the resonance)."""
        w = 2 * np.pi * float(self.frequency_hz[-1])
        return float(w * w * self.inductance * self.capacitance)

    def capacitance_doubt(self) -> str | None:
        """Why the sweep does not determine C (one clause), or None when it does or C was given.

        Says where the sweep ends, C's share of the reactance there against
        :data:`REACH_SHARE`, the fit's spread of C against :data:`REACH_SD`,
        and the fitted resonance; the fix is the caller's to add.
        """
        from ..units import format_si

        x, sd = self.top_share, self.capacitance_rel_sd
        if self.capacitance_given or (x >= REACH_SHARE and sd <= REACH_SD):
            return None
        spread = f"±{sd:.0%}" if sd < 10 else "unbounded"
        srf = self.self_resonance_hz()
        guess = f"the fitted {format_si(self.capacitance, 'F', 3)} (spread {spread}) and its self-resonance {format_si(srf, 'Hz', 3) if np.isfinite(srf) else 'above 10 MHz'} are guesses"
        if x < REACH_SHARE:
            return f"C is not determined: the sweep ends at {format_si(float(self.frequency_hz[-1]), 'Hz', 3)}, where C carries ω²LC = {x:.2g} of the reactance (under {REACH_SHARE:g}); {guess}"
        return f"C is not determined: the fit's spread of C is over {REACH_SD:.0%}; {guess}"

    def band_doubt(self) -> str | None:
        """Why the top of the band is extrapolated (one clause, the fix the caller's to add), or None when the sweep reaches
        :data:`BAND_TOP_HZ` (within :data:`ROUNDING`)."""
        from ..units import format_si

        top = float(self.frequency_hz[-1])
        if top >= BAND_TOP_HZ * (1 - ROUNDING):
            return None
        return (
            f"the sweep ends at {format_si(top, 'Hz', 3)}, below {format_si(BAND_TOP_HZ, 'Hz')}: the core loss (the ladder's R∥L sections) and |Z| above"
            f" {format_si(top, 'Hz', 3)} are the fit's extrapolation, not the coil's"
        )

    def self_resonance_doubt(self, floor: float) -> str | None:
        """Why no self-resonance is given, in words, when the sweep does not determine C (the model's phase
        crossing is then a guess or noise); None when it does or C was given. ``floor`` (F): the least
        capacitance taken as seen (below it the sweep shows none)."""
        if self.capacitance_given:
            return None
        if self.capacitance < floor:
            return "none within the sweep (no winding capacitance seen)"
        if self.capacitance_doubt() is not None:
            return "not determined (C is not: see the warning)"
        return None

    def _low_end(self) -> str | None:
        """Why the sweep's low end does not show R_dc and L at DC (one clause), or None."""
        from ..units import format_si

        ph = self.lowest_phase_deg
        if abs(ph) <= LOW_END_DEG:
            return None
        corner = self.resistance / (2 * np.pi * self.inductance) if self.inductance > 0 else float("nan")
        below = f" (below the corner R/(2πL), about {format_si(corner, 'Hz', 3)} with the fitted values)" if np.isfinite(corner) else ""
        return f"the sweep starts at {format_si(float(self.frequency_hz[0]), 'Hz', 3)}, where the phase is {ph:.0f}° (over {LOW_END_DEG:g}°): start it where the phase is under {LOW_END_DEG:g}°{below}"

    def resistance_doubt(self) -> str | None:
        """Why the sweep does not determine R_dc (one line, its fix included), or None when it does or R_dc was given."""
        from ..units import format_si

        if self.resistance_given:
            return None
        guess = f"the fitted {format_si(self.resistance, 'Ω', 4)} is a guess"
        if (low := self._low_end()) is not None:
            return f"R_dc not determined: {low}, or hold R_dc at an ohmmeter's reading with --resistance; {guess}"
        if self.resistance_rel_sd > REACH_SD:
            return f"R_dc not determined: the fit's spread of R_dc is over {REACH_SD:.0%} (±{self.resistance_rel_sd:.0%}); hold it at an ohmmeter's reading with --resistance; {guess}"
        return None

    def inductance_doubt(self) -> str | None:
        """Why the sweep does not determine the inductance at DC (one line, its fix included), or None when it does."""
        from ..units import format_si

        guess = f"the fitted {format_si(self.inductance, 'H', 4)} is a guess"
        if (low := self._low_end()) is not None:
            return f"L not determined: {low}; {guess}"
        if self.inductance_rel_sd > REACH_SD:
            spread = f"±{self.inductance_rel_sd:.0%}" if self.inductance_rel_sd < 10 else "unbounded"
            return (
                f"L not determined: the fit's spread of the inductance at DC is over {REACH_SD:.0%} ({spread}): the sweep {format_si(float(self.frequency_hz[0]), 'Hz', 3)}"
                f" to {format_si(float(self.frequency_hz[-1]), 'Hz', 3)} shows too little of ωL; sweep on to well above the corner R/(2πL), where the phase passes {LOW_END_DEG:g}°; {guess}"
            )
        return None

    def dc_doubt(self) -> str | None:
        """Why the sweep does not determine R_dc or the inductance at DC, as one line for a design whose coil is
        ``measured`` (its fix in the design file's terms), or None when both are determined (or R_dc given).

        The judgement is :meth:`resistance_doubt`'s and :meth:`inductance_doubt`'s; this is their wording for
        ``render check`` and ``render clips``, where ``--resistance`` is ``resistance = "…"`` beside ``measured``.
        """
        from ..units import format_si

        r_doubt, l_doubt = self.resistance_doubt(), self.inductance_doubt()
        if r_doubt is None and l_doubt is None:
            return None
        hold = 'add resistance = "…" beside measured to hold R_dc at an ohmmeter\'s reading'
        what = " and ".join(n for n, d in (("R_dc", r_doubt), ("L", l_doubt)) if d is not None)
        values = " and ".join(format_si(v, u, 4) for v, u, d in ((self.resistance, "Ω", r_doubt), (self.inductance, "H", l_doubt)) if d is not None)
        guess = f"the fitted {values} {'are guesses' if ' and ' in values else 'is a guess'}"
        if (low := self._low_end()) is not None:  # the low end shows neither: measure lower, or hold R_dc
            return f"{what} not determined: {low}{'' if self.resistance_given else ', or ' + hold}; {guess}"
        why = []
        if r_doubt is not None:
            why.append(f"the fit's spread of R_dc is over {REACH_SD:.0%} (±{self.resistance_rel_sd:.0%}): {hold}")
        if l_doubt is not None:
            why.append(f"the fit's spread of the inductance at DC is over {REACH_SD:.0%}: sweep on to well above the corner R/(2πL), where the phase passes {LOW_END_DEG:g}°")
        return f"{what} not determined: {'; '.join(why)}; {guess}"

    def self_resonance_hz(self) -> float:
        """Hz: where the fitted model's phase crosses zero from inductive to capacitive (:func:`self_resonance_hz`; NaN: none)."""
        srf = self_resonance_hz(self.impedance)
        return float("nan") if srf is None else srf

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
    return with_winding_capacitance(r + zl, s, c)


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


def _covariance(jac: np.ndarray, residual: np.ndarray) -> np.ndarray:
    """The parameters' covariance s²·(JᵀJ)⁻¹ at a least-squares optimum, s² = |r|²/(m − n).

    The linearised estimate (Press et al., *Numerical Recipes*, 3rd ed., 2007,
    §15.4.2 and §15.5, eq. 15.5.15); singular directions, along which the
    data do not fix the parameters, get a variance 1e24 times that of the
    best-fixed one instead of an infinity.
    """
    m, n = jac.shape
    s2 = float(residual @ residual) / max(m - n, 1)
    _, sv, vt = np.linalg.svd(jac, full_matrices=False)
    sv = np.maximum(sv, sv[0] * 1e-12) if sv.size and sv[0] > 0 else np.full(n, 1e-300)
    return s2 * (vt.T / sv**2) @ vt


def fit_measurement(frequency_hz, impedance, *, max_sections: int = 4, capacitance: float | None = None, resistance: float | None = None) -> MeasuredCoil:
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
    capacitance : float or None, F > 0
        The winding capacitance, held at this value instead of fitted (for a
        sweep that stops too far below the self-resonance to show it).
    resistance : float or None, Ω > 0
        R_dc, held at this value (an ohmmeter's reading) instead of fitted
        (for a sweep that starts above the coil's corner R_dc/(2πL)).

    Returns
    -------
    MeasuredCoil
        With ``capacitance_rel_sd``, the fitted C's relative standard error
        (:func:`_covariance`), or 0 when C was given; likewise R_dc's and
        the inductance at DC's.
    """
    from scipy.optimize import least_squares

    f = np.asarray(frequency_hz, float)
    z = np.asarray(impedance, complex)
    if f.ndim != 1 or f.shape != z.shape or f.size < 8:
        raise InputError(f"measured coil: need at least 8 frequencies with one impedance each, got {f.size}")
    if np.any(~np.isfinite(f)) or np.any(~np.isfinite(z)) or np.any(f <= 0) or np.any(np.diff(f) <= 0) or np.any(np.abs(z) <= 0):
        raise InputError("measured coil: frequencies must be finite, > 0 and increasing, and every |Z| finite and > 0")
    for name, v, unit in (("capacitance", capacitance, "F"), ("resistance", resistance, "Ω")):
        if v is not None and not (np.isfinite(v) and v > 0):
            raise InputError(f"measured coil: the given {name} {v!r} {unit} must be finite and > 0")
    s = 2j * np.pi * f
    log_z = np.log(z)
    r0, l0, c0 = _start(f, z)
    if capacitance is not None:
        c0 = float(capacitance)
    if resistance is not None:
        r0 = float(resistance)
    held = {i: float(np.log(v)) for i, v in ((0, resistance), (1, capacitance)) if v is not None}  # θ's index -> its held value

    def full(x):  # θ with R and C put back where held
        for i in sorted(held):
            x = np.insert(x, i, held[i])
        return x

    def free(theta):
        return np.delete(theta, sorted(held))

    def index(i):  # θ's index i among the free parameters
        return i - sum(1 for j in held if j < i)

    best, best_rms = None, np.inf
    for k in range(0, max_sections + 1):
        if k == 0:
            theta0 = np.log([r0, c0, l0])
        else:
            # the ladder fitted to what is left once C and R_dc are taken away, then everything together
            r_prev, c_prev = (best.resistance, best.capacitance) if best is not None else (r0, c0)
            zl = 1.0 / (1.0 / z - s * c_prev) - r_prev
            lad = fit_ladder(f, np.where(np.imag(zl) > 0, zl, 1j * np.abs(zl)), max_sections=k, tol_db=1e-9, tol_deg=1e-9, tol_loss=None, band_hz=(f[0], f[-1])).ladder  # a start: the loss unweighted
            m = len(lad.inductances)
            if m < k:
                lk = np.concatenate([lad.inductances, np.full(k - m, 1e-3 * lad.dc_inductance)])
                tau = np.concatenate([lad.time_constants, np.geomspace(1 / (2 * np.pi * f[-1]), 1 / (2 * np.pi * f[0]), k - m)])
            else:
                lk, tau = np.asarray(lad.inductances), lad.time_constants
            theta0 = np.log(np.concatenate([[r_prev, c_prev, max(lad.series_inductance, 1e-6 * lad.dc_inductance)], lk, tau]))
        lo, hi = _bounds(f, z, k)
        for i, v in held.items():
            lo[i], hi[i] = min(lo[i], v), max(hi[i], v)
        margin = 1e-6 * (hi - lo)
        theta0 = np.clip(theta0, lo + margin, hi - margin)
        sol = least_squares(
            lambda x, k=k: _residual(full(x), k, s, log_z),
            free(theta0),
            bounds=(free(lo), free(hi)),
            method="trf",
            x_scale=1.0,
            xtol=1e-12,
            ftol=1e-12,
            max_nfev=4000,
        )
        theta = full(sol.x)
        r, c, l_series, lk, tau = _unpack(theta, k)
        ladder = Ladder(float(l_series), tuple(float(v) for v in lk), tuple(float(v) for v in lk / tau)) if k else Ladder(float(l_series))
        e = np.log(_model(theta, k, s)) - log_z
        cov = _covariance(sol.jac, sol.fun)
        c_sd = 0.0 if capacitance is not None else float(np.sqrt(max(cov[index(1), index(1)], 0.0)))
        r_sd = 0.0 if resistance is not None else float(np.sqrt(max(cov[0, 0], 0.0)))
        grad = np.zeros(sol.x.size)  # d ln(L0 + Σ L_k) / dθ over the free parameters
        grad[index(2)] = l_series
        grad[index(3) : index(3) + k] = lk
        grad /= l_series + np.sum(lk)
        l_sd = float(np.sqrt(max(float(grad @ cov @ grad), 0.0)))
        res = MeasuredCoil(
            float(r) if resistance is None else float(resistance),
            float(c) if capacitance is None else float(capacitance),
            ladder,
            f.copy(),
            20 / np.log(10) * e.real,
            np.degrees(np.angle(np.exp(1j * e.imag))),
            c_sd,
            capacitance is not None,
            r_sd,
            l_sd,
            resistance is not None,
            float(np.degrees(np.angle(z[0]))),
        )
        rms = np.sqrt(np.mean(sol.fun**2))
        if best is not None and rms > 0.9 * best_rms:
            break
        best, best_rms = res, rms
    assert best is not None  # the loop runs at least once
    return best
