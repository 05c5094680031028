"""Shared pieces of the un-voicing tests: band levels, DIs, files.

The band levels here are computed independently of ``render.analysis.unvoice``:
third-octave bands per IEC 61260-1 (base-10 centres 1000·10^(k/10) Hz, band
edges centre·10^(±1/20)), power summed over the FFT bins inside each band
(Parseval), so a band level is the signal's energy in that band.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import soundfile as sf

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
GLASS = ROOT / "models" / "glasswing-bright.toml"
PHRASE = Path(__file__).resolve().parent / "round_trip.toml"
SAMPLE_RATE = 48000
OVERSAMPLE = 4  # the ngspice drive is synthesised at 4 × 48 kHz


def third_octave_centres(low_k: int, high_k: int) -> np.ndarray:
    """IEC 61260-1 base-10 third-octave centres 1000·10^(k/10) Hz, k = low_k … high_k."""
    return 1000.0 * 10.0 ** (np.arange(low_k, high_k + 1) / 10.0)


# 80 Hz … 5 kHz nominal: k = -11 (79.4 Hz) … 7 (5012 Hz), IEC 61260-1
BANDS_80_5K = third_octave_centres(-11, 7)


def band_energy(x, *, sample_rate, centres) -> np.ndarray:
    """Energy per band (sum of |X_k|² over bins with centre·10^(-1/20) <= f < centre·10^(1/20)), shape (B,)."""
    x = np.asarray(x, float)
    p = np.abs(np.fft.rfft(x)) ** 2
    f = np.fft.rfftfreq(x.size, 1.0 / sample_rate)
    return np.array([p[(f >= c * 10**-0.05) & (f < c * 10**0.05)].sum() for c in centres])


def band_levels_db(x, *, sample_rate, centres) -> np.ndarray:
    """10·log10 of :func:`band_energy` (dB re 1 unit² of the signal, times the FFT's scale)."""
    return 10.0 * np.log10(band_energy(x, sample_rate=sample_rate, centres=centres))


def weights(d):
    """EMF weights (V per m/s) of the two coils: signal_polarity · sensitivity."""
    return d.coil_a.signal_polarity * d.coil_a.sensitivity, d.coil_b.signal_polarity * d.coil_b.sensitivity


def spice_transient_di(d, velocity, *, sample_rate_hi: int, decimate: int) -> np.ndarray:
    """The passive reference's amp-input voltage, by an ngspice transient, driven by ``velocity`` (shape (n,), m/s at ``sample_rate_hi``).

    ngspice-39 refuses ``PWL file=...`` on a V source ("parameter value out of
    range"), so the drive is XSPICE's ``filesource`` (linear interpolation
    between the samples). The transient runs with a maximum step of one drive
    sample and writes every drive sample (``.options interp``); every
    ``decimate``-th output sample is returned.
    """
    from spice import passive_netlist, run_transient

    wa, wb = weights(d)
    step = 1.0 / sample_rate_hi
    t = np.arange(velocity.size) * step
    times, v = run_transient(passive_netlist(d, wa=wa, wb=wb), t, velocity, stop=(velocity.size - 1) * step, step=step, options=(".options interp",))
    data = np.column_stack([times, v])
    assert data.shape[0] == velocity.size and np.allclose(data[:, 0], t, atol=1e-9)
    return data[::decimate, 1]


def engine_di(d, velocity, *, sample_rate) -> np.ndarray:
    """The passive reference's output by the engine's response applied by FFT (zero-padded, linear): a fixture for CLI tests, not a reference."""
    from render.circuit.engine import design_responses

    n = velocity.size
    m = 1 << int(np.ceil(np.log2(2 * n)))
    f = np.fft.rfftfreq(m, 1.0 / sample_rate)
    h = design_responses([d]).passive_velocity()(f)[0]
    return np.fft.irfft(np.fft.rfft(velocity, m) * h, m)[:n]


def write_wav(path, x, *, sample_rate=SAMPLE_RATE) -> Path:
    sf.write(str(path), np.asarray(x, float), sample_rate, subtype="FLOAT")
    return Path(path)


def read_wav(path):
    x, rate = sf.read(str(path), dtype="float64")
    return x, rate
