"""Hum and noise on one scale, each figure against a first-principles computation.

Sources:
- IEC 61672-1:2013, Electroacoustics - Sound level meters - Part 1, Annex E:
  the analog A-weighting, A(f) = 20·log10(f4²f⁴ / ((f² + f1²)·√(f² + f2²)·√(f² + f3²)·(f² + f4²))) − A1000,
  with f1 = 20.598997 Hz, f2 = 107.65265 Hz, f3 = 737.86223 Hz, f4 = 12194.217 Hz
  and A1000 = −2.000 dB (equations E.1, E.6 and the constants beside them; from memory).
- IEC 61672-1:2013 Table 3, the A-weighting's nominal values (rounded to 0.1 dB; from memory).
- The rms of a sum of sines of distinct frequencies, peaks a_k: √(Σ a_k²/2)
  (orthogonality of sines over a common period; any signals text, e.g.
  Oppenheim & Willsky, Signals and Systems, 2nd ed., 1997, §3.3 Parseval's relation).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from render.analysis.noise import a_weighting, a_weighting_db, band_rms, integration_grid
from render.analysis.one_scale import OneScale, design_one_scale, harmonics_rms, one_scale
from render.design import load_design

# IEC 61672-1:2013 Annex E constants (from memory; the code under test uses the standard's rounded 20.6, 107.7, 737.9, 12194 Hz)
F1, F2, F3, F4, A1000 = 20.598997, 107.65265, 737.86223, 12194.217, -2.000


def iec_a_db(f):
    """IEC 61672-1:2013 eq. E.6 with its exact constants, written out by hand."""
    f2 = f * f
    ra = F4**2 * f2**2 / ((f2 + F1**2) * math.sqrt(f2 + F2**2) * math.sqrt(f2 + F3**2) * (f2 + F4**2))
    return 20 * math.log10(ra) - A1000


# IEC 61672-1:2013 Table 3, A-weighting (from memory), every one-third-octave band 20 Hz .. 20 kHz by nominal frequency
TABLE_3 = [
    (20, -50.5),
    (25, -44.7),
    (31.5, -39.4),
    (40, -34.6),
    (50, -30.2),
    (63, -26.2),
    (80, -22.5),
    (100, -19.1),
    (125, -16.1),
    (160, -13.4),
    (200, -10.9),
    (250, -8.6),
    (315, -6.6),
    (400, -4.8),
    (500, -3.2),
    (630, -1.9),
    (800, -0.8),
    (1000, 0.0),
    (1250, 0.6),
    (1600, 1.0),
    (2000, 1.2),
    (2500, 1.3),
    (3150, 1.2),
    (4000, 1.0),
    (5000, 0.5),
    (6300, -0.1),
    (8000, -1.1),
    (10000, -2.5),
    (12500, -4.3),
    (16000, -6.6),
    (20000, -9.3),
]


@pytest.mark.parametrize("band, nominal_hz, table_db", [(n - 17, f, a) for n, (f, a) in enumerate(TABLE_3)])
def test_a_weighting_at_the_tabulated_bands(band, nominal_hz, table_db):
    # the table's values are at the exact base-ten frequencies 1 kHz · 10^(n/10) (19.95 Hz, …, 19.95 kHz),
    # of which the nominal ones are the rounded names (IEC 61672-1:2013 Table 3 and its note; IEC 61260-1:2014 eq. 1)
    f_exact = 1000.0 * 10 ** (band / 10)
    assert f_exact == pytest.approx(nominal_hz, rel=0.03)
    # the table rounds to 0.1 dB; the band's ends (20 Hz, 20 kHz) are where the noise and hum figures stop
    assert float(a_weighting_db(f_exact)) == pytest.approx(table_db, abs=0.05 + 1e-9)


@pytest.mark.parametrize("f_hz", [31.5, 50.0, 100.0, 1000.0, 3150.0, 8000.0, 16000.0])
def test_a_weighting_matches_the_formula_by_hand(f_hz):
    # the code's rounded pole frequencies stay within 0.01 dB of the exact constants (IEC 61672-1 Annex E)
    assert float(a_weighting_db(f_hz)) == pytest.approx(iec_a_db(f_hz), abs=0.01)


def test_a_weighted_rms_of_a_line_spectrum_by_hand():
    # three sines: 1 V peak at 100 Hz, 0.5 V at 1 kHz, 0.2 V at 8 kHz
    f = np.array([100.0, 1000.0, 8000.0])
    a = np.array([1.0, 0.5, 0.2])
    by_hand = math.sqrt(sum((10 ** (iec_a_db(fi) / 20) * ai) ** 2 / 2 for fi, ai in zip(f, a)))
    assert harmonics_rms(f, a, weighted=True) == pytest.approx(by_hand, rel=2e-3)  # 0.01 dB
    assert harmonics_rms(f, a) == pytest.approx(math.sqrt((1.0 + 0.25 + 0.04) / 2), rel=1e-12)


def test_hum_rms_against_a_time_domain_sum():
    # √(Σ a_k²/2) against the rms of the sampled waveform over one period of the fundamental (50 Hz)
    rng = np.random.default_rng(1)
    a = rng.uniform(0, 1, 9)
    phase = rng.uniform(0, 2 * np.pi, 9)
    f = 50.0 * np.arange(1, 10)
    t = np.arange(48000) / 48000.0  # exactly 50 periods
    x = sum(ak * np.sin(2 * np.pi * fk * t + pk) for ak, fk, pk in zip(a, f, phase))
    assert harmonics_rms(f, a * np.exp(1j * phase)) == pytest.approx(float(np.sqrt(np.mean(x**2))), rel=1e-9)


def test_harmonics_outside_the_band_do_not_count():
    # the same 20 Hz–20 kHz band as the noise (IEC 61672-1's A-weighting is defined over it for our use)
    assert harmonics_rms([50.0, 25000.0], [1.0, 1.0]) == pytest.approx(math.sqrt(0.5), rel=1e-12)


def test_a_weighted_white_noise_by_quadrature():
    # √(S·∫ A(f)² df) over 20 Hz–20 kHz, the integral by scipy's adaptive quadrature of the hand-written formula
    s = 1e-16
    f = integration_grid()
    got = band_rms(np.full_like(f, s) * a_weighting(f) ** 2, f)
    edges = [20.0, 100.0, 1000.0, 5000.0, 20000.0]
    integral = sum(quad(lambda x: 10 ** (iec_a_db(x) / 10), lo, hi, limit=200)[0] for lo, hi in zip(edges, edges[1:]))
    assert float(got) == pytest.approx(math.sqrt(s * integral), rel=2e-3)


def test_dominance_and_ratios():
    # hum 2 µV rms against noise 1 µV rms: hum dominates by 20·log10(2) = 6.02 dB
    s = OneScale("x", signal_v=1e-2, hum_v=2e-6, hum_a_v=0.5e-6, noise_v=1e-6, noise_a_v=1e-6)
    assert s.hum_over_noise_db == pytest.approx(20 * math.log10(2), rel=1e-12)
    assert s.hum_over_noise_a_db == pytest.approx(20 * math.log10(0.5), rel=1e-12)
    rec = s.as_dict()
    assert rec["signal_to_hum_db"] == pytest.approx(20 * math.log10(1e-2 / 2e-6), rel=1e-12)
    assert rec["signal_to_noise_a_db"] == pytest.approx(80.0, rel=1e-12)


def test_no_hum_is_a_reason_not_a_number():
    rec = OneScale("x", signal_v=1e-2, hum_v=0.0, hum_a_v=0.0, noise_v=1e-6, noise_a_v=1e-6).as_dict()
    assert rec["hum_over_noise_db"] is None and "cancels" in rec["hum_over_noise_db_reason"]
    assert rec["signal_to_hum_db"] is None and isinstance(rec["signal_to_hum_db_reason"], str)


def test_a_design_on_one_scale_agrees_with_its_hum_and_noise_reports():
    # the figures are the hum table's per-harmonic peaks and the noise report's totals, combined as above
    from render.analysis.hum import hum_table
    from render.analysis.noise import noise_reports

    d = load_design("models/odd-pair.toml")
    active, passive = design_one_scale(d)
    t = hum_table(d)
    peaks = np.array([r["output_v"] for r in t["harmonics"]])
    assert active.hum_v == pytest.approx(math.sqrt(np.sum(peaks**2) / 2), rel=1e-12)
    assert active.hum_v == pytest.approx(t["total_v_rms"], rel=1e-12)
    assert passive.hum_v == pytest.approx(t["passive"]["total_v_rms"], rel=1e-12)
    (nr,) = noise_reports([d])
    assert active.noise_v == nr.active.total_v and active.noise_a_v == nr.active.a_weighted_v
    assert active.signal_v == nr.active.signal_v  # 1 kHz, 0.1 m/s rms: the noise report's reference signal
    f = np.array([r["frequency_hz"] for r in t["harmonics"]])
    assert active.hum_a_v == pytest.approx(math.sqrt(sum((10 ** (iec_a_db(fi) / 20) * p) ** 2 / 2 for fi, p in zip(f, peaks))), rel=2e-3)


def test_one_scale_builder():
    s = one_scale("c", hum_frequency_hz=[50.0], hum_peak_v=[math.sqrt(2)], noise_v=1.0, noise_a_v=1.0, signal_v=1.0)
    assert s.hum_v == pytest.approx(1.0, rel=1e-12)  # a sine of peak √2 has rms 1
    assert s.hum_over_noise_db == pytest.approx(0.0, abs=1e-12)
