"""A peak's Q beside another peak, checked on two second-order band-pass sections summed in closed form.

The standard second-order band-pass section H(s) = (s/(Q·ω0)) / ((s/ω0)² + s/(Q·ω0) + 1)
(Horowitz & Hill, *The Art of Electronics*, 3rd ed., 2015, §1.7; any filter handbook) has
|H(jω)|² = 1 / (1 + Q²·x²), x = ω/ω0 − ω0/ω, so it peaks at 1 at ω0 and is 3 dB down where
Q·x = ±1: ω2 − ω1 = ω0/Q exactly, and f0 over the −3 dB width is Q.

Apart (2 kHz and 16 kHz, Q 4): each section's Q, to a tolerance derived below from how much
the other section can move the level near it. Merged (a lower hump on the flank of a higher
one): the lower hump's −3 dB width would take in the higher peak, so it has no Q, in words.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from render.analysis.figures import F_HI, F_LO, GRID_POINTS
from render.analysis.peaks import Q_HIGHER, describe_peaks, response_peaks

F = np.geomspace(F_LO, F_HI, GRID_POINTS)  # the grid render.analysis.figures uses


def _section(f, f0: float, q: float):
    s = 1j * np.asarray(f, float) / f0
    return (s / q) / (s * s + s / q + 1)


def _peaks(parts):
    h = sum(a * _section(F, f0, q) for a, f0, q in parts)
    db = 20 * np.log10(np.abs(h))
    return response_peaks(db, F, level_1k_db=float(np.interp(math.log(1000.0), np.log(F), db)))[0]


def _tolerance(q: float, f0: float, other: tuple[float, float, float]) -> float:
    """A bound on the relative error of Q when ``other`` (amplitude re this section's, f0, Q) is added to a unit section at f0.

    Far from its own centre the other section is nearly ±j·β (a band-pass is ±90° off resonance), β its size
    relative to this one's peak, changing across this one's band only as ω^±1: β·(1 + γ·u/(2Q)), u = Q·x,
    γ = ±1. Then |H + other|² ≈ (1 − 2βu − βγu²/Q)/(1 + u²) to first order, whose peak is 1 + O(β²) and whose
    −3 dB points solve u²(1 + 2βγ/Q) + 4βu − 1 = 0: a width in u of 2·√(1 + 4β² + 2βγ/Q)/(1 + 2βγ/Q), relative
    change at most β/Q + 2β². Plus 0.5 % for the grid's 0.4 % steps.
    """
    a, f_other, q_other = other
    band = f0 * np.exp(np.linspace(-1.0, 1.0, 9) / q)  # this section's band, twice its −3 dB width
    beta = float(np.max(a * np.abs(_section(band, f_other, q_other))))
    return beta / q + 2 * beta**2 + 0.005


def test_humps_apart_each_have_their_sections_q():
    low, high = (1.0, 2000.0, 4.0), (0.5, 16000.0, 4.0)
    peaks = sorted(_peaks([low, high]), key=lambda p: p["frequency_hz"])
    assert len(peaks) == 2
    for p, (me, other) in zip(peaks, ((low, high), (high, low))):
        a, f0, q = me
        tol = _tolerance(q, f0, (other[0] / a, other[1], other[2]))
        assert tol < 0.05  # the derivation leaves the check meaningful (here about 1.1 % and 3.9 %)
        assert p["frequency_hz"] == pytest.approx(f0, rel=0.01)
        assert p["q"] == pytest.approx(q, rel=tol)


def test_a_hump_on_the_flank_of_a_higher_one_has_no_q():
    # 3 kHz, Q 3 at 0.7 and 4.2 kHz, Q 4 at 1: two listed peaks, the lower one's −3 dB width reaches past the higher peak
    peaks = _peaks([(0.7, 3000.0, 3.0), (1.0, 4200.0, 4.0)])
    assert [round(p["frequency_hz"], -2) for p in peaks] == [4300.0, 2900.0]
    top, shoulder = peaks
    assert top["q"] is not None and top["q"] > 0
    assert shoulder["q"] is None and shoulder["q_reason"] == Q_HIGHER
    assert "no Q (not defined: the response rises above this peak" in describe_peaks({"peaks": peaks})


def test_a_single_section_gives_its_q():
    (p,) = _peaks([(1.0, 5000.0, 2.5)])
    assert p["q"] == pytest.approx(2.5, rel=0.005)  # the grid's 0.4 % steps


def test_a_low_peak_prints_its_prominence_as_scipy_measures_it(tmp_path):
    # A peak near 1 kHz reads about +0.00 dB re 1 kHz, which looks like a placeholder; its prominence
    # (scipy.signal.peak_prominences, the topographic definition) says it is a real hump. The README's
    # example: measured-blade with load_c = "5n6" (both inputs), a loaded resonance near 1 kHz.
    import re
    import shutil
    from pathlib import Path

    from click.testing import CliRunner
    from scipy.signal import find_peaks, peak_prominences

    import render
    from render.cli import main

    root = Path(__file__).resolve().parents[2]
    shutil.copytree(root / "models" / "coils", tmp_path / "coils")
    text = re.sub(r'load_c = "[^"]*"', 'load_c = "5n6"', (root / "models" / "measured-blade.toml").read_text(encoding="utf-8"))
    path = tmp_path / "measured-blade.toml"
    path.write_text(text, encoding="utf-8")
    res = CliRunner().invoke(main, ["check", str(path)])
    assert res.exit_code == 0, res.output
    line = next(x for x in res.output.splitlines() if "loaded resonance" in x)
    m = re.search(r"peak (\d+) Hz, \+0\.00 dB \(prominence ([\d.]+) dB\), no Q", line)
    assert m, line
    assert "peak 1006 Hz, +0.00 dB (prominence 4.80 dB), no Q" in " ".join((root / "README.md").read_text(encoding="utf-8").split())
    db = 20 * np.log10(np.abs(render.response(render.load_design(path), F).velocity))
    k = find_peaks(db)[0]
    k = k[np.argmin(np.abs(F[k] - float(m.group(1))))]
    assert float(m.group(2)) == pytest.approx(float(peak_prominences(db, [k])[0][0]), abs=0.006)
