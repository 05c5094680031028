"""Analog transfer functions (zeros, poles, gain in rad/s) to digital filters.

Two methods live here.

:func:`bilinear_sections` is the textbook bilinear transform
s = 2·fs·(1 − z⁻¹)/(1 + z⁻¹) (optionally prewarped at one frequency), as
second-order sections. It is kept for reference and checks: it compresses
the frequency axis, f_d = (fs/π)·atan(π·f_a/fs), so a response that falls
steeply at 16 kHz comes out wrong by the slope times the warp. On the
shipped reference design it misses the analog response by 0.47 dB at
16 kHz when run at 192 kHz and still by 0.12 dB at 384 kHz, which is why the
renderer does not use it.

:func:`discretize` is what the renderer uses, at the output sample rate:

1. every analog pole and zero whose frequency is below Nyquist is mapped
   to z = exp(r/fs), so each mode of the circuit keeps its exact frequency
   and damping (no warping of resonances); roots above Nyquist (complex,
   or real in the right half-plane) are left out, and so are mapped roots
   with |z| < 1e-3: their in-band effect is a smooth tilt;
2. what remains between that pole–zero skeleton and the analog response —
   a smooth, nearly flat correction, plus the left-out roots — is fitted by
   a short FIR filter C(z) in the weighted least-squares sense, with
   relative complex error over 0 … ``band_hz`` (weight 1) and a light pull
   towards the analog response above the band (weight 0.03) so that nothing
   grows between the band edge and Nyquist;
3. the filter is causal with a fixed bulk delay of ``delay`` samples (the
   FIR needs a little look-ahead to undo the half-sample shifts of the
   mapped roots); the renderer removes the delay at the end.

The FIR length is the shortest of a few candidates that meets
``TOLERANCE_DB``; the errors actually reached are recorded on the result.

Filtering is the FIR (on a block with the previous inputs prepended) then
the pole–zero skeleton as second-order sections (scipy.signal.sosfilt with
carried state), so a block-by-block run equals a one-shot run.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.signal as ss

BAND_HZ = 20000.0  # the top of the accuracy band at 48 kHz and above
INNER_HZ = 16000.0  # the tighter inner band
BAND_FRACTION = 5.0 / 12.0  # band edge as a fraction of the sample rate when that is below 20 kHz (20 k / 48 k)
DEFAULT_DELAY = 8  # samples of bulk delay allowed to the fitted FIR
FIR_ORDERS = (8, 12, 16, 20, 24, 32, 40)  # candidate FIR orders, shortest first
TOLERANCE_DB = (0.01, 0.03)  # accept the shortest FIR within these |dB| errors (inner band, whole band)
TOLERANCE_DEG = 0.1  # ... and this phase error (degrees) over the whole band
CONTRACT_DB = (0.1, 0.5)  # the renderer's promise: warn when a fit misses it
OUT_OF_BAND_WEIGHT = 0.03
NEGLIGIBLE_ROOT = 1e-3  # mapped roots smaller than this are left to the FIR
NEAR_UNSTABLE = 1.0 - 1e-9  # pole radius above which a warning is raised


def band_edges(sample_rate: float) -> tuple[float, float]:
    """(inner, band) edges in Hz of the accuracy bands at ``sample_rate``: (16 k, 20 k) at 48 kHz."""
    band = min(BAND_HZ, BAND_FRACTION * sample_rate)
    return min(INNER_HZ, 0.8 * band), band


def pole_warnings(poles_z, *, what: str = "filter", sample_rate: float | None = None) -> tuple[str, ...]:
    """Warnings for digital poles (complex, any shape) with radius above 1 − 1e-9.

    The radius r is given as 1 − r (r itself prints as 1.000…), and with
    ``sample_rate`` as the mode's time constant −1/(fs·ln r).
    """
    r = np.abs(np.asarray(poles_z, dtype=complex))
    if r.size and r.max() > NEAR_UNSTABLE:
        top = float(r.max())
        tau = f", a time constant of {-1.0 / (sample_rate * np.log(top)):.3g} s" if sample_rate and top < 1 else ""
        return (f"{what}: a digital pole has radius 1 − {1 - top:.2g} (above 1 − 1e-9: close to instability, a very slow mode{tau}); check the parts that set the slowest corner",)
    return ()


def sos_pole_warnings(sos, *, what: str = "filter") -> tuple[str, ...]:
    """Warnings for a second-order-section array (K, 6) with any pole radius above 1 − 1e-9."""
    sos = np.atleast_2d(np.asarray(sos, dtype=float))
    if sos.size == 0:
        return ()
    _, p, _ = ss.sos2zpk(sos)
    return pole_warnings(p, what=what)


def bilinear_sections(zeros, poles, gain, *, sample_rate: float, prewarp_hz: float | None = None):
    """Bilinear transform of an analog zpk to second-order sections.

    zeros, poles : array_like complex, rad/s (analog s-plane)
    gain : float, H(s) = gain · Π(s − z) / Π(s − p)
    sample_rate : Hz
    prewarp_hz : None, or a frequency (Hz, below Nyquist) at which the digital
        response is made to equal the analog one exactly
    returns : (sos, warnings); sos np.ndarray shape (K, 6), warnings tuple of str
    """
    fs = float(sample_rate)
    if prewarp_hz is not None:
        w = np.pi * float(prewarp_hz) / fs
        fs = np.pi * float(prewarp_hz) / np.tan(w)  # s = 2·fs'·(z − 1)/(z + 1) maps prewarp_hz onto itself
    zd, pd, kd = ss.bilinear_zpk(np.asarray(zeros, complex), np.asarray(poles, complex), float(gain), fs)
    sos = ss.zpk2sos(zd, pd, kd)
    return sos, pole_warnings(pd, what="bilinear sections", sample_rate=sample_rate)


def analog_response(zeros, poles, gain, frequency_hz) -> np.ndarray:
    """H(j2πf) of an analog zpk (rad/s), evaluated as products; shape (F,) complex."""
    s = 2j * np.pi * np.asarray(frequency_hz, dtype=float)
    h = np.full(s.shape, complex(gain))
    for z in np.asarray(zeros, complex):
        h = h * (s - z)
    for p in np.asarray(poles, complex):
        h = h / (s - p)
    return h


@dataclass(frozen=True)
class Discrete:
    """A digital filter standing for one analog transfer function.

    fir : np.ndarray, shape (M+1,), the fitted FIR correction C(z)
    sos : np.ndarray, shape (K, 6), the mapped pole–zero skeleton (K may be 0)
    delay : int, samples; the filter approximates H_analog(f)·exp(−j2πf·delay/sample_rate)
    sample_rate : Hz
    band_hz : (inner, band) edges of the accuracy bands, Hz
    error_db : (inner, band), the largest |20·log10|H_d/H_a|| reached in each band, dB
    phase_error_deg : largest |phase(H_d/H_a)| over the band once the delay is removed, degrees
    warnings : tuple of str
    """

    fir: np.ndarray
    sos: np.ndarray
    delay: int
    sample_rate: float
    band_hz: tuple[float, float]
    error_db: tuple[float, float]
    phase_error_deg: float
    warnings: tuple[str, ...] = field(default=())

    @property
    def history(self) -> int:
        """Number of past input samples the FIR keeps (M)."""
        return self.fir.size - 1


def _skeleton(roots, sample_rate):
    """Map analog roots (rad/s) to exp(r/fs): those below Nyquist in frequency and not far
    into the right half-plane (fast right-half-plane zeros, e.g. an op-amp's feedthrough,
    would map to huge factors); mapped roots below NEGLIGIBLE_ROOT are dropped too."""
    r = np.asarray(roots, dtype=complex)
    keep = (np.abs(r.imag) < np.pi * sample_rate) & (r.real < np.pi * sample_rate)
    z = np.exp(r[keep] / sample_rate)
    real = np.abs(r[keep].imag) <= 1e-9 * np.abs(r[keep])
    z[real] = z[real].real
    return z[np.abs(z) >= NEGLIGIBLE_ROOT]


def _skeleton_response(zd, pd, w):
    """Π(1 − ζ e^{−jw}) / Π(1 − π e^{−jw}) at digital radian frequencies w."""
    e = np.exp(-1j * w)
    h = np.ones(w.shape, dtype=complex)
    for z in zd:
        h = h * (1.0 - z * e)
    for p in pd:
        h = h / (1.0 - p * e)
    return h


def _grid(band, nyquist):
    lo = np.geomspace(1.0, min(200.0, band / 4), 30)
    mid = np.linspace(lo[-1], band, 400)[1:]
    hi = np.linspace(band, 0.995 * nyquist, 41)[1:] if band < 0.995 * nyquist else np.zeros(0)
    return np.concatenate([lo, mid]), hi


def discretize(zeros, poles, gain, *, sample_rate: float, delay: int = DEFAULT_DELAY, orders=FIR_ORDERS, what: str = "filter") -> Discrete:
    """Digital filter matching an analog zpk over the audio band (see the module text).

    zeros, poles : array_like complex, rad/s; every pole strictly in the left half-plane
    gain : float, H(s) = gain · Π(s − z) / Π(s − p)
    sample_rate : Hz, the rate the filter runs at
    delay : int ≥ 0, samples of bulk delay allowed to the FIR
    orders : candidate FIR orders, tried shortest first
    what : a name for warnings
    returns : :class:`Discrete`
    """
    fs = float(sample_rate)
    zeros = np.asarray(zeros, dtype=complex)
    poles = np.asarray(poles, dtype=complex)
    if poles.size and np.max(poles.real) >= 0:
        raise ValueError(f"{what}: analog pole at {poles[np.argmax(poles.real)] / (2 * np.pi):.6g} Hz is not in the left half-plane")
    inner, band = band_edges(fs)
    zd, pd = _skeleton(zeros, fs), _skeleton(poles, fs)
    sos = ss.zpk2sos(zd, pd, 1.0) if (zd.size or pd.size) else np.zeros((0, 6))

    f_in, f_out = _grid(band, fs / 2)
    f = np.concatenate([f_in, f_out])
    wts = np.concatenate([np.ones(f_in.size), np.full(f_out.size, OUT_OF_BAND_WEIGHT)])
    w = 2 * np.pi * f / fs
    ha = analog_response(zeros, poles, gain, f)
    target = ha * np.exp(-1j * w * delay) / _skeleton_response(zd, pd, w)
    ok = np.isfinite(target) & (np.abs(target) > 0)
    f, w, wts, target = f[ok], w[ok], wts[ok], target[ok]

    f_chk = np.concatenate([np.geomspace(1.0, 200.0, 60), np.linspace(200.0, band, 1500)[1:]])
    w_chk = 2 * np.pi * f_chk / fs
    ha_chk = analog_response(zeros, poles, gain, f_chk)
    skel_chk = _skeleton_response(zd, pd, w_chk) * np.exp(1j * w_chk * delay)
    good = np.isfinite(ha_chk) & (np.abs(ha_chk) > 0)
    f_chk, w_chk, ha_chk, skel_chk = f_chk[good], w_chk[good], ha_chk[good], skel_chk[good]
    in_inner = f_chk <= inner

    top = max(orders)
    fit_basis = np.exp(-1j * np.outer(w, np.arange(top + 1))) * (wts / target)[:, None]
    fit_basis = np.concatenate([fit_basis.real, fit_basis.imag])
    chk_basis = np.exp(-1j * np.outer(w_chk, np.arange(top + 1)))
    rhs = np.concatenate([wts, np.zeros_like(wts)])
    best = None
    for m in orders:
        c = np.linalg.lstsq(fit_basis[:, : m + 1], rhs, rcond=None)[0]
        ratio = chk_basis[:, : m + 1] @ c * skel_chk / ha_chk
        mag = np.abs(20 * np.log10(np.abs(ratio)))
        err = (float(mag[in_inner].max(initial=0.0)), float(mag.max(initial=0.0)))
        ph = float(np.abs(np.degrees(np.angle(ratio))).max(initial=0.0))
        cand = (err, ph, c)
        if best is None or err[1] < best[0][1]:
            best = cand
        if err[0] <= TOLERANCE_DB[0] and err[1] <= TOLERANCE_DB[1] and ph <= TOLERANCE_DEG:
            best = cand
            break
    assert best is not None  # at least one order is tried
    err, ph, c = best
    warns = list(pole_warnings(pd, what=what, sample_rate=sample_rate))
    if err[0] > CONTRACT_DB[0] or err[1] > CONTRACT_DB[1]:
        warns.append(f"{what}: digital response misses the analog one by {err[0]:.3f} dB to {inner / 1e3:g} kHz and {err[1]:.3f} dB to {band / 1e3:g} kHz at {fs:g} Hz")
    return Discrete(
        fir=np.ascontiguousarray(c),
        sos=np.ascontiguousarray(sos),
        delay=int(delay),
        sample_rate=fs,
        band_hz=(inner, band),
        error_db=err,
        phase_error_deg=ph,
        warnings=tuple(warns),
    )


def discretize_rational(rational, index: int = 0, *, sample_rate: float, delay: int = DEFAULT_DELAY, what: str = "filter") -> Discrete:
    """:func:`discretize` of design ``index`` of an engine :class:`~render.circuit.poly.Rational`."""
    z, p, k = rational.zpk(index)
    return discretize(z, p, k, sample_rate=sample_rate, delay=delay, what=what)


def digital_response(filt: Discrete, frequency_hz, *, aligned: bool = True) -> np.ndarray:
    """Frequency response of a :class:`Discrete` filter, shape (F,) complex.

    frequency_hz : array_like, Hz, shape (F,)
    aligned : remove the bulk delay (compare directly with the analog response)
    """
    f = np.atleast_1d(np.asarray(frequency_hz, dtype=float))
    w = 2 * np.pi * f / filt.sample_rate
    h = np.exp(-1j * np.outer(w, np.arange(filt.fir.size))) @ filt.fir
    if filt.sos.shape[0]:
        _, hs = ss.sosfreqz(filt.sos, worN=w)
        h = h * hs
    if aligned:
        h = h * np.exp(1j * w * filt.delay)
    return h


# --- streaming ---------------------------------------------------------------


def initial_state(filt: Discrete):
    """Rest state of a :class:`Discrete` filter: (FIR history shape (M,), sos state shape (K, 2))."""
    return (np.zeros(filt.history), np.zeros((filt.sos.shape[0], 2)))


def apply(filt: Discrete, x, state):
    """Filter one block.

    x : array_like, shape (n,), at filt.sample_rate
    state : from :func:`initial_state` or the previous call
    returns : (y shape (n,), new state)
    """
    x = np.asarray(x, dtype=float)
    hist, zi = state
    ext = np.concatenate([hist, x])
    y = np.convolve(ext, filt.fir, mode="valid") if x.size else np.zeros(0)
    new_hist = ext[ext.size - filt.history :] if filt.history else hist
    if filt.sos.shape[0] and x.size:
        y, zi = ss.sosfilt(filt.sos, y, zi=zi)
    return y, (new_hist, zi)
