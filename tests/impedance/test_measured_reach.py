"""How far a measured sweep must reach to fix the winding capacitance, and C held when it does not.

References: the terminal impedance of R_dc + sL0 + Σ sL_k·R_k/(R_k + sL_k) with C
across it, in closed form with numpy (series and parallel impedances, any
circuit-theory text; the ladder is Foster's, Bell Syst. Tech. J. 3(2), 1924),
and the shipped synthetic example, computed from the slab diffusion solution
(Lammeraner & Štafl, *Eddy Currents*, 1966) with C = 95 pF (its header; regenerated
in tests/impedance/test_measured.py). Both are given 1 % noise on |Z| and 0.01 rad on
the phase, and cut at several top frequencies.
"""

from pathlib import Path

import numpy as np
import pytest

from render.impedance.measured import REACH_SHARE, fit_measurement
from render.io.measurement import read_measurement

ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
C_EXAMPLE = 95e-12  # F, the example's true winding capacitance (its header)

# a known coil: R_dc, L0, two R∥L sections, C (invented demo values)
R, L0, LK, RK, C = 4100.0, 1.4, (0.6, 0.24), (70e3, 2.6e3), 95e-12


def ladder_coil(f):
    """Closed form: 1/(1/(R + sL0 + Σ sL_k R_k/(R_k + sL_k)) + sC)."""
    s = 2j * np.pi * f
    z_l = s * L0 + sum(s * lk * rk / (rk + s * lk) for lk, rk in zip(LK, RK))
    return 1.0 / (1.0 / (R + z_l) + s * C)


def first_phase_zero(z_of) -> float:
    """Hz: the first downward zero crossing of ∠Z on a dense grid (the self-resonance)."""
    f = np.geomspace(2e3, 50e3, 20000)
    return float(f[np.flatnonzero(np.diff(np.sign(np.angle(z_of(f)))) < 0)[0]])


def noisy_sweep(seed=7):
    f = np.geomspace(20.0, 50e3, 103)
    z = ladder_coil(f)
    rng = np.random.default_rng(seed)
    return f, np.abs(z) * (1 + 0.01 * rng.standard_normal(f.size)) * np.exp(1j * (np.angle(z) + 0.01 * rng.standard_normal(f.size)))


def cut(f, z, top_hz):
    k = f <= top_hz * (1 + 1e-6)
    return f[k], z[k]


@pytest.mark.parametrize("top_hz", [1e3, 2e3, 5e3])
def test_a_sweep_stopping_short_of_the_resonance_says_c_is_not_determined(top_hz):
    # the known ladder coil self-resonates near 11.8 kHz (closed form); cut at 1, 2 and 5 kHz
    # (ω²LC = 0.007, 0.028, 0.18 with the true values, all under REACH_SHARE) the fit says why
    # its C is a guess, naming where the sweep ends
    f, z = cut(*noisy_sweep(), top_hz)
    w = 2 * np.pi * f[-1]
    assert w * w * (L0 + sum(LK)) * C < REACH_SHARE
    fit = fit_measurement(f, z)
    doubt = fit.capacitance_doubt()
    assert doubt is not None and doubt.startswith("C is not determined: the sweep ends at") and "\n" not in doubt


@pytest.mark.parametrize("top_hz", [10e3, 20e3, 50e3])
def test_a_sweep_reaching_the_resonance_fixes_c(top_hz):
    # cut at 10 kHz (0.85 of the resonance) and beyond: no doubt, and C within 2 % of the closed form's
    f, z = cut(*noisy_sweep(), top_hz)
    fit = fit_measurement(f, z)
    assert fit.capacitance_doubt() is None
    assert fit.capacitance == pytest.approx(C, rel=0.02)


def test_the_shipped_example_cut_short_is_off_and_said_to_be():
    # the shipped example cut at 1, 2 and 5 kHz fits C 50 % or more above or 20 % or more below the
    # true 95 pF (356, 147 and 71 pF as measured here): each fit says C is not determined. Cut at
    # 7 kHz and beyond (ω²LC ≥ 0.38 with the true values) C is within 4 % and nothing is said.
    m = read_measurement(EXAMPLE)
    for top in (1e3, 2e3, 5e3):
        fit = fit_measurement(*cut(m.frequency_hz, m.impedance, top))
        assert abs(fit.capacitance / C_EXAMPLE - 1) > 0.2 and fit.capacitance_doubt() is not None, top
    for top in (7e3, 10e3, 20e3):
        fit = fit_measurement(*cut(m.frequency_hz, m.impedance, top))
        assert fit.capacitance == pytest.approx(C_EXAMPLE, rel=0.04) and fit.capacitance_doubt() is None, top


@pytest.mark.parametrize("source", ["ladder", "example"])
def test_held_capacitance_gives_the_resonance_back_from_a_1_khz_sweep(source):
    # a sweep to 1 kHz with C held at its true value: R_dc within 1 %, the DC inductance within 2 %
    # and the self-resonance within 6 % of the closed form's (the ladder above 1 kHz is extrapolated);
    # fitted freely, the resonance comes out more than 20 % off (the example: 5.96 kHz for the true 11.9 kHz)
    if source == "ladder":
        f, z = cut(*noisy_sweep(), 1e3)
        r_true, l_true, srf = R, L0 + sum(LK), first_phase_zero(ladder_coil)
    else:
        from tests.impedance.test_measured import L_DC, R_DC, _true_impedance

        m = read_measurement(EXAMPLE)
        f, z = cut(m.frequency_hz, m.impedance, 1e3)
        r_true, l_true, srf = R_DC, L_DC, first_phase_zero(lambda x: _true_impedance(x)[0])
    fit = fit_measurement(f, z, capacitance=C)
    assert fit.capacitance == C and fit.capacitance_given and fit.capacitance_doubt() is None
    assert fit.resistance == pytest.approx(r_true, rel=0.01)
    assert fit.inductance == pytest.approx(l_true, rel=0.02)
    assert fit.self_resonance_hz() == pytest.approx(srf, rel=0.06)
    free = fit_measurement(f, z)
    assert abs(free.self_resonance_hz() / srf - 1) > 0.2


def test_the_standard_error_of_c_shrinks_as_the_sweep_reaches_the_resonance():
    # the linearised covariance (Press et al., Numerical Recipes, 3rd ed., 2007, §15.5): C's relative
    # error from a sweep past the resonance is under 1 %, from one cut at 1 kHz over 10 %
    f, z = noisy_sweep()
    assert fit_measurement(f, z).capacitance_rel_sd < 0.01
    assert fit_measurement(*cut(f, z, 1e3)).capacitance_rel_sd > 0.1
