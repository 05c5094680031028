"""Every peak of a response, and a peak frequency that does not jump (render.analysis.peaks).

References:
- a second-order band-pass resonance H(s) = (ω0/Q)s / (s² + (ω0/Q)s + ω0²) is
  0 dB at f0 and its half-power (-3 dB) bandwidth is exactly f0/Q
  (Horowitz & Hill, The Art of Electronics, 3rd ed., 2015, §1.7.14);
- a second-order low-pass ω0² / (s² + (ω0/Q)s + ω0²) with damping ratio
  ζ = 1/(2Q) < 1/√2 peaks at ω_r = ω0·√(1 − 2ζ²) with |H| = 1/(2ζ√(1 − ζ²))
  (Ogata, Modern Control Engineering, 5th ed., 2010, §7-2, "resonant peak
  magnitude and resonant peak frequency").
The responses are computed with scipy.signal.freqs, independently of the engine.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy.signal import freqs

from render.analysis.figures import db, figures, grid, response_figures
from render.analysis.peaks import PROMINENCE_DB, response_peaks

F = grid()
W = 2 * np.pi * F


def level(b, a):
    return db(freqs(b, a, worN=W)[1])


def bandpass(f0, q, gain=1.0):
    w0 = 2 * np.pi * f0
    return [gain * w0 / q, 0.0], [1.0, w0 / q, w0**2]


def lowpass(f0, q):
    w0 = 2 * np.pi * f0
    return [w0**2], [1.0, w0 / q, w0**2]


def level_at_1k(b, a):
    return float(db(freqs(b, a, worN=[2 * np.pi * 1000.0])[1])[0])


@pytest.mark.parametrize("f0,q", [(5000.0, 4.0), (3200.0, 2.5), (8000.0, 10.0)])
def test_bandpass_peak_frequency_height_and_q_match_the_closed_form(f0, q):
    b, a = bandpass(f0, q)
    lvl = level_at_1k(b, a)
    peaks, peak_hz, peak_db = response_peaks(level(b, a), F, level_1k_db=lvl)
    assert len(peaks) == 1
    p = peaks[0]
    assert p["frequency_hz"] == pytest.approx(f0, rel=2e-4)  # the grid's parabola, 0.4 % steps
    assert p["height_db"] == pytest.approx(0.0 - lvl, abs=2e-3)  # 0 dB at f0
    assert p["q"] == pytest.approx(q, rel=5e-3)  # half-power bandwidth f0/Q; -3 dB points interpolated between 0.4 % grid steps
    assert peak_hz == p["frequency_hz"] and peak_db == p["height_db"]  # a peak alone is its own peak_hz


@pytest.mark.parametrize("q", [1.5, 3.0, 6.0])
def test_lowpass_resonant_peak_matches_the_closed_form(q):
    f0 = 4000.0
    b, a = lowpass(f0, q)
    zeta = 1 / (2 * q)
    lvl = level_at_1k(b, a)
    peaks, peak_hz, peak_db = response_peaks(level(b, a), F, level_1k_db=lvl)
    assert len(peaks) == 1
    assert peak_hz == pytest.approx(f0 * np.sqrt(1 - 2 * zeta**2), rel=2e-3)
    assert peak_db + lvl == pytest.approx(20 * np.log10(1 / (2 * zeta * np.sqrt(1 - zeta**2))), abs=2e-3)


def test_no_peak_is_none_in_words_never_a_placeholder():
    # a first-order low-pass at 3 kHz has no peak at all
    b, a = [2 * np.pi * 3000.0], [1.0, 2 * np.pi * 3000.0]
    peaks, peak_hz, peak_db = response_peaks(level(b, a), F, level_1k_db=level_at_1k(b, a))
    assert peaks == [] and np.isnan(peak_hz) and np.isnan(peak_db)


def test_two_separate_peaks_both_listed_highest_first():
    b1, a1 = bandpass(2000.0, 8.0, gain=0.5)
    b2, a2 = bandpass(9000.0, 8.0)
    h = freqs(b1, a1, worN=W)[1] + freqs(b2, a2, worN=W)[1]
    lvl = float(np.interp(np.log(1000.0), np.log(F), db(h)))
    peaks, peak_hz, _ = response_peaks(db(h), F, level_1k_db=lvl)
    assert [round(p["frequency_hz"], -2) for p in peaks] == [9000.0, 2000.0]
    assert all(p["prominence_db"] >= PROMINENCE_DB for p in peaks)
    assert peak_hz == peaks[0]["frequency_hz"]  # 6 dB apart: no blending


def test_peak_hz_moves_continuously_when_two_humps_trade_places():
    """Two resonances at 4.7 and 5.3 kHz whose gains cross: the highest peak jumps from one to
    the other, peak_hz passes between them, its steps shrinking with the parameter's step."""

    def sweep(n):
        out_top, out_hz = [], []
        for g in np.linspace(0.94, 1.06, n):
            b1, a1 = bandpass(4700.0, 12.0)
            b2, a2 = bandpass(5300.0, 12.0, gain=g)
            h = db(freqs(b1, a1, worN=W)[1] + freqs(b2, a2, worN=W)[1])
            peaks, peak_hz, _ = response_peaks(h, F, level_1k_db=float(np.interp(0.0, np.log(F / 1000.0), h)))
            out_top.append(peaks[0]["frequency_hz"])
            out_hz.append(peak_hz)
        return np.abs(np.diff(np.log(out_top))).max(), np.abs(np.diff(np.log(out_hz))).max()

    top_coarse, hz_coarse = sweep(25)
    top_fine, hz_fine = sweep(97)
    assert top_coarse > 0.1 and top_fine > 0.1  # the highest peak jumps about 12 % however fine the step
    assert hz_fine < 0.4 * hz_coarse  # peak_hz's steps shrink with the step: it is continuous
    assert hz_coarse < 0.05


def test_a_designs_peak_does_not_jump_across_a_small_turns_change():
    """high-rail-18v with coil_b's turns 0.5 % to 0.25 % short: its two coils' humps trade places
    (the highest peak jumps from about 4.3 kHz to 4.0 kHz); peak_hz, the figure fit aims at, moves smoothly."""
    from render.analysis.turns import scale_turns
    from render.design import load_designs

    d = load_designs(["models/high-rail-18v.toml"])[0][0]

    def steps(n):
        figs = figures([scale_turns(d, "coil_b", 1 + p / 100) for p in np.linspace(-0.5, -0.25, n)])
        top = np.array([f["peaks"][0]["frequency_hz"] for f in figs])
        hz = np.array([f["peak_hz"] for f in figs])
        return np.abs(np.diff(np.log(top))).max(), np.abs(np.diff(np.log(hz))).max()

    top_coarse, hz_coarse = steps(11)
    top_fine, hz_fine = steps(41)
    assert top_coarse > 0.05 and top_fine > 0.05
    assert hz_fine < 0.5 * hz_coarse
    assert hz_fine < 0.015


def test_engine_figures_report_no_peak_in_words():
    from render.design import load_designs

    d = load_designs(["models/studio-reference.toml"])[0][0]
    damped = replace(d, input_a=replace(d.input_a, load_r=5e3), input_b=replace(d.input_b, load_r=5e3))
    fig = figures([damped])[0]
    assert fig["peaks"] == [] and fig["peak_hz"] is None and fig["peak_db"] is None
    assert fig["peak_hz_reason"].startswith("no peak from 1 kHz to 20 kHz")
    assert fig["q"] is None and fig["q_reason"].startswith("no peak from 1 kHz")


def test_response_figures_keep_the_single_peak_of_a_vectorised_batch():
    b, a = lowpass(4000.0, 3.0)
    h = np.vstack([level(b, a), level(*lowpass(6000.0, 3.0))])
    out = response_figures(h, F)
    assert out["peak_hz"][1] / out["peak_hz"][0] == pytest.approx(1.5, rel=2e-3)  # the same shape scaled in frequency
    assert [len(p) for p in out["peaks"]] == [1, 1]


def test_check_prints_no_peak_in_words(tmp_path):
    from click.testing import CliRunner

    from render.cli import main

    text = (Path(__file__).resolve().parents[2] / "models" / "studio-reference.toml").read_text()
    damped = tmp_path / "damped.toml"
    damped.write_text(
        text.replace('load_c = "3n9"   # with the coil\'s 350 mH, a resonance near 4 kHz', 'load_c = "3n9"\nload_r = "5k"', 1).replace(
            'load_c = "3n9"\nseries_c = "1u"\nseries_r = "22k"\nbias_top', 'load_c = "3n9"\nload_r = "5k"\nseries_c = "1u"\nseries_r = "22k"\nbias_top', 1
        )
    )
    res = CliRunner().invoke(main, ["check", str(damped)])
    assert res.exit_code == 0, res.output
    line = next(x for x in res.output.splitlines() if "loaded resonance" in x)
    assert "no peak from 1 kHz to 20 kHz" in line and "1000 Hz" not in line
