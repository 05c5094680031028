"""The engine's building blocks and whole-stage responses against closed forms.

Each check names its source beside it. Check values quoted to a few digits
are checked to that many digits; exact formulas to float
rounding (1e-9 relative, or the size of a stated physical side effect).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.optimize import brentq, minimize_scalar

from render.circuit.coil import coil_impedance, impedance_at
from render.circuit.engine import design_responses
from render.circuit.params import CoilParams, from_designs
from render.circuit.poly import W_NORM, Rational, cascade, const, lin, series, shunt
from render.design import parse_design

TWO_PI = 2 * np.pi
ONE = const(1.0)


def _arr(x):
    return np.atleast_1d(np.asarray(x, float))


def coil_params(L, R, Cw, *, Rp=None, k2=0.0, f_e=None):
    """One coil as engine parameters (no validation: test values may be ideal)."""
    return CoilParams(
        L=_arr(L),
        R=_arr(R),
        Cw=_arr(Cw),
        Gp=_arr(1 / Rp if Rp else 0.0),
        k2=_arr(k2),
        we=_arr(TWO_PI * f_e if f_e else 1.0),
        sec=_arr(1.0 if f_e else 0.0),
        sig=_arr(1.0),
        hum=_arr(1.0),
    )


def voltage_ratio(chain) -> Rational:
    """V_out / V_in of a chain matrix with its output port open: scale / a."""
    return Rational(chain.scale, chain.a)


def corner_hz(h: Rational) -> float:
    """The one real pole of a first-order section, in Hz."""
    _, p, _ = h.zpk(0)
    assert p.size == 1 and abs(p[0].imag) < 1e-12 * abs(p[0])
    return float(abs(p[0]) / TWO_PI)


# ----------------------------------------------------------------------------
# First-order corner 1/(2πRC)


@pytest.mark.parametrize(
    "R, C, f_quoted",
    [
        (1e6, 22e-9, 7.234),  # f_c = 1/(2πRC): 1 MΩ / 22 nF -> 7.234 Hz (textbook RC corner)
        (100e3, 100e-9, 15.915),  # 100 kΩ / 100 nF -> 15.915 Hz (textbook RC corner)
    ],
)
def test_first_order_corner_from_chain_blocks(R, C, f_quoted):
    low = voltage_ratio(cascade(series(const(R), ONE), shunt(lin(0.0, C * W_NORM), ONE)))  # series R, shunt C
    high = voltage_ratio(cascade(series(ONE, lin(0.0, C * W_NORM)), shunt(const(1.0 / R), ONE)))  # series C, shunt R
    fc = 1 / (TWO_PI * R * C)  # textbook: f_c = 1/(2πRC)
    assert fc == pytest.approx(f_quoted, abs=5e-4)  # the quoted value, to its last digit
    for h in (low, high):
        assert corner_hz(h) == pytest.approx(fc, rel=1e-12)
        assert abs(h(fc)[0, 0]) == pytest.approx(2**-0.5, rel=1e-12)  # −3.01 dB at the corner
    # first-order sections: H = 1/(1 + jf/fc) and (jf/fc)/(1 + jf/fc) (textbook)
    f = np.geomspace(0.1, 1e5, 41)
    x = 1j * f / fc
    assert np.allclose(low(f)[0], 1 / (1 + x), rtol=1e-12)
    assert np.allclose(high(f)[0], x / (1 + x), rtol=1e-12)


def test_input_network_bass_corner_through_the_whole_engine():
    # series_c = 100 nF into series_r = 100 kΩ at the inverting input (a virtual
    # ground): the bass corner of the inverting gain -R2/(R1 + 1/(sC)) is
    # 1/(2πR1C) = 15.915 Hz (textbook RC corner). The negligible coil adds 1 Ω
    # to R1 (1e-5 relative), hence the tolerance.
    d = diff_amp_design(100e3, 100e3, 100e3, 100e3, series_c=100e-9)
    h = design_responses([d]).amp.from_a()
    g = abs(h(10e3)[0, 0])
    f3 = brentq(lambda f: abs(h(f)[0, 0]) / g - 2**-0.5, 1.0, 1e3, xtol=1e-9)
    assert f3 == pytest.approx(15.915, abs=2e-3)


# ----------------------------------------------------------------------------
# The loaded pickup: coil (L, R_s) with C and R_L across its terminals


L_P, RS_P, C_P = 2.5, 6e3, 400e-12


def loaded_pickup(RL):
    """EMF -> terminals of a coil (render.circuit.coil) loaded by C and R_L in shunt."""
    c = coil_params(L_P, RS_P, C_P)
    n, d = coil_impedance(c)
    return voltage_ratio(cascade(series(n, d), shunt(lin(1.0 / RL, C_P * W_NORM), ONE)))


def loaded_closed_form(RL, f):
    # Circuit theory (second-order low-pass of the loaded coil):
    # H = [R_L/(R_L+R_s)] / [1 + s(L + R_s R_L C)/(R_L+R_s) + s² L R_L C/(R_L+R_s)]
    s = 1j * TWO_PI * np.asarray(f)
    k = RL + RS_P
    return (RL / k) / (1 + s * (L_P + RS_P * RL * C_P) / k + s**2 * L_P * RL * C_P / k)


@pytest.mark.parametrize(
    "RL, f0_quoted, q_quoted, peak_hz_quoted, peak_db_quoted",
    [
        # circuit theory; values recomputed numerically (L = 2.5 H, R_s = 6 kΩ, C = 400 pF)
        (1e6, 5048, 6.47, 5018, 16.2),
        (200e3, 5108, 2.15, 4825, 6.90),
    ],
)
def test_loaded_pickup_resonance_and_q(RL, f0_quoted, q_quoted, peak_hz_quoted, peak_db_quoted):
    h = loaded_pickup(RL)
    f = np.geomspace(10, 100e3, 301)
    assert np.allclose(h(f)[0], loaded_closed_form(RL, f), rtol=1e-9)

    # from the poles: ω0 = |p|, Q = |p| / (2|Re p|)
    z, p, _ = h.zpk(0)
    assert z.size == 0 and p.size == 2
    w0 = float(abs(p[0]))
    q = w0 / (2 * abs(p[0].real))
    # closed forms: ω0 = √((R_L+R_s)/(L R_L C)), Q = √(L R_L C (R_L+R_s)) / (L + R_s R_L C)
    assert w0 == pytest.approx(np.sqrt((RL + RS_P) / (L_P * RL * C_P)), rel=1e-9)
    assert q == pytest.approx(np.sqrt(L_P * RL * C_P * (RL + RS_P)) / (L_P + RS_P * RL * C_P), rel=1e-9)
    assert w0 / TWO_PI == pytest.approx(f0_quoted, abs=0.5)
    assert q == pytest.approx(q_quoted, abs=0.005)

    # the peak, found on the response itself: at ω0√(1 − 1/2Q²), height Q/√(1 − 1/4Q²) re DC
    r = minimize_scalar(lambda x: -abs(h(x)[0, 0]), bounds=(1e3, 9e3), method="bounded", options={"xatol": 1e-6})
    peak_db = 20 * np.log10(abs(h(r.x)[0, 0]) / abs(h(1e-3)[0, 0]))
    assert r.x == pytest.approx(w0 / TWO_PI * np.sqrt(1 - 1 / (2 * q * q)), rel=1e-6)
    assert peak_db == pytest.approx(20 * np.log10(q / np.sqrt(1 - 1 / (4 * q * q))), abs=1e-6)
    assert r.x == pytest.approx(peak_hz_quoted, abs=0.5)
    # quoted to 0.1 and 0.01 dB; the formula gives 16.248 and 6.905 dB (quoted as 6.90, hence 0.01)
    assert peak_db == pytest.approx(peak_db_quoted, abs=0.05 if peak_db_quoted > 10 else 0.01)


def test_heavily_loaded_pickup_has_no_peak():
    # circuit theory: R_L = 50 kΩ gives Q = 0.64 < 1/√2, so |H| falls monotonically from DC
    h = loaded_pickup(50e3)
    _, p, _ = h.zpk(0)
    q = abs(p[0]) / (2 * abs(p[0].real)) if abs(p[0].imag) > 0 else 0.5 * np.sqrt(p[0] / p[1]).real
    assert q == pytest.approx(0.64, abs=0.005)
    mag = np.abs(h(np.geomspace(1, 50e3, 400))[0])
    assert np.all(np.diff(mag) < 0)


# ----------------------------------------------------------------------------
# Core loss


def test_shorted_secondary_eddy_model():
    # Reflected impedance of a shorted secondary (transformer theory, from memory; the model
    # is Modelica FluxTubes.EddyCurrent's "short-circuited secondary"):
    # Z = jωL1 + ω²M²/(R2 + jωL2), M² = k²L1L2, ω_e = R2/L2.
    # Check values recomputed numerically: L1 = 2.5 H, k² = 0.5, f_e = 3 kHz:
    # L_eff = 2.500 H at 10 Hz, 1.875 H at 3 kHz, 1.250 H as f -> ∞; R_eff(3 kHz) = 11.78 kΩ.
    L1, k2, fe = 2.5, 0.5, 3e3
    c = coil_params(L1, 0.0, 0.0, k2=k2, f_e=fe)
    z = lambda f: impedance_at(c, f)[0]  # noqa: E731
    l_eff = lambda f: z(f).imag / (TWO_PI * f)  # noqa: E731
    assert l_eff(10.0)[0] == pytest.approx(2.500, abs=5e-4)
    assert l_eff(3e3)[0] == pytest.approx(1.875, abs=5e-4)
    assert l_eff(1e8)[0] == pytest.approx(1.250, abs=5e-4)
    assert z(3e3)[0].real == pytest.approx(11.78e3, abs=5.0)
    # the reflection formula itself, for an arbitrary secondary inductance
    f = np.geomspace(1, 1e6, 121)
    w = TWO_PI * f
    L2 = 0.37
    R2 = TWO_PI * fe * L2
    zr = 1j * w * L1 + w**2 * k2 * L1 * L2 / (R2 + 1j * w * L2)
    assert np.allclose(z(f), zr, rtol=1e-9)


def test_parallel_loss_resistance_and_both_models_together():
    # Lumped coil with R_p across the inductance (Paiva, Pakarinen & Välimäki,
    # JAES 60(10), 2012): Z = R_dc + (Z_L ∥ R_p), Z_L = jωL or the shorted-secondary form above.
    f = np.geomspace(1, 1e6, 121)
    w = TWO_PI * f
    L, R, Rp, k2, fe = 1.2, 1.8e3, 470e3, 0.3, 5e3
    zl = 1j * w * L
    assert np.allclose(impedance_at(coil_params(L, R, 0.0, Rp=Rp), f)[0], R + zl * Rp / (zl + Rp), rtol=1e-9)
    L2 = 1.0
    zs = 1j * w * L + w**2 * k2 * L * L2 / (TWO_PI * fe * L2 + 1j * w * L2)
    assert np.allclose(impedance_at(coil_params(L, R, 0.0, Rp=Rp, k2=k2, f_e=fe), f)[0], R + zs * Rp / (zs + Rp), rtol=1e-9)


# ----------------------------------------------------------------------------
# The difference amplifier


TINY_L, TINY_R, TINY_C = 1e-5, 1.0, 1e-13  # the smallest coil the loader accepts


def diff_amp_design(R1, R2, R3, R4, *, gbw=None, open_loop_gain=None, series_c=0.1, battery=9.0, bias=None):
    """A design whose coils and coupling capacitors are negligible, so the stage is the
    textbook difference amplifier: R1 = input_a.series_r, R2 = feedback.r,
    R3 = input_b.series_r, R4 = bias_top ∥ bias_bottom (equal halves, at mid-supply,
    unless ``bias`` = (top, bottom) is given). The op-amp is ideal (infinite open-loop
    gain, as the textbook formulas assume) unless ``open_loop_gain`` is given."""
    top, bottom = bias or (2 * R4, 2 * R4)

    def coil(pol):
        return {"inductance": TINY_L, "resistance": TINY_R, "capacitance": TINY_C, "sensitivity": 1.0, "turns_area": 1.0, "position": 0.05, "signal_polarity": pol}

    d = {
        "coil_a": coil(1),
        "coil_b": coil(-1),
        "input_a": {"series_c": series_c, "series_r": R1},
        "input_b": {"series_c": series_c, "series_r": R3, "bias_top": top, "bias_bottom": bottom},
        "feedback": {"r": R2},
        "output": {"coupling_c": 10e-6, "series_r": 100.0},
        "supply": {"battery": battery},
    }
    if gbw:
        d["supply"]["gbw"] = gbw
    if open_loop_gain is not None:
        d["supply"]["open_loop_gain"] = open_loop_gain
        return parse_design(d, source="diff-amp")
    design = parse_design(d, source="diff-amp")
    return dataclasses.replace(design, supply=dataclasses.replace(design.supply, open_loop_gain=math.inf))


def textbook_gains(R1, R2, R3, R4):
    # Sedra & Smith, Microelectronic Circuits, difference amplifier (Ex. 2.15 / Prob. 2.67);
    # Pallás-Areny & Webster, IEEE Trans. Instrum. Meas. 40(4), 1991:
    # A_cm = (R1R4 − R2R3) / (R1(R3+R4)),  A_d = [R4(R1+R2) + R2(R3+R4)] / (2R1(R3+R4)).
    # (R may be complex: the same algebra holds for impedances.)
    a_cm = (R1 * R4 - R2 * R3) / (R1 * (R3 + R4))
    a_d = (R4 * (R1 + R2) + R2 * (R3 + R4)) / (2 * R1 * (R3 + R4))
    return a_d, a_cm


def engine_gains(d, f=1e3):
    """A_d and A_cm at ``f`` from the engine: V1 = e_a (inverting), V2 = e_b."""
    amp = design_responses([d]).amp
    ga, gb = amp.from_a()(f)[0, 0], amp.from_b()(f)[0, 0]
    return (gb - ga) / 2, ga + gb


def _source(f, series_c=0.1):
    """The negligible coil and its coupling capacitor as a Thevenin source (textbook):
    EMF gain 1/(1 + Z_s·sC_w) and impedance Z_s ∥ (1/sC_w) + 1/(s·series_c), Z_s = R + sL."""
    s = 1j * TWO_PI * f
    zs = TINY_R + s * TINY_L
    g = 1 / (1 + zs * s * TINY_C)
    return g, zs * g + 1 / (s * series_c)


T = 0.01
CMRR_CASES = [
    # (R1, R2, R3, R4), expected CMRR dB or None for a matched set, source
    ((2e3, 200e3, 2e3, 200e3), None),  # Sedra & Smith Ex. 2.15: matched, A_d = R2/R1 = 100, A_cm = 0
    # worst case of all four at ±1 %: CMRR ≈ (1+K)/(4t) = 68.04 dB (Sedra & Smith: "68 dB";
    # Pallás-Areny & Webster 1991 for the approximation); exact value from the formula: 68.044 dB
    ((2e3 * (1 + T), 200e3 * (1 - T), 2e3 * (1 - T), 200e3 * (1 + T)), 68.044),
    # K = 1, all four at ±1 %: (1+K)/(4t) = 50 -> 33.98 dB (Pallás-Areny & Webster 1991)
    ((10e3 * (1 + T), 10e3 * (1 - T), 10e3 * (1 - T), 10e3 * (1 + T)), 33.979),
    # K = 1, one resistor 1 % off: ≈ (1+K)/δ; exact 46.09 dB (Pallás-Areny & Webster 1991; recomputed numerically)
    ((10e3, 10e3, 10e3, 10e3 * (1 + T)), 46.086),
]


@pytest.mark.parametrize("rs, cmrr_db", CMRR_CASES)
def test_difference_amplifier_gains(rs, cmrr_db):
    R1, R2, R3, R4 = rs
    d = diff_amp_design(R1, R2, R3, R4)
    ad_e, acm_e = engine_gains(d)
    ad, acm = textbook_gains(R1, R2, R3, R4)
    # Nominal resistors: the 1 Ω coil (+ j0.06 Ω and −j0.002 Ω of coil L and series_c at
    # 1 kHz) adds to R1 and R3, so agreement is to about 1 Ω / R1 (5e-4 for 2 kΩ).
    rel = 2 * TINY_R / min(R1, R3)
    assert abs(ad_e - ad) <= rel * abs(ad)
    assert abs(acm_e - acm) <= rel * abs(acm) + 1e-12 * abs(ad)
    # The same formula with the coils and coupling capacitors folded into R1 and R3 as
    # complex Thevenin impedances (and the EMFs scaled by the winding-C divider): exact.
    g, zs = _source(1e3)
    ad_x, acm_x = textbook_gains(R1 + zs, R2, R3 + zs, R4)
    assert abs(ad_e - g * ad_x) <= 1e-9 * abs(ad_x)
    assert abs(acm_e - g * acm_x) <= 1e-9 * abs(ad_x)
    if cmrr_db is None:
        assert ad_e.real == pytest.approx(R2 / R1, rel=1e-3)
        assert abs(acm_e) < 1e-12 * abs(ad_e)
    else:
        cmrr = 20 * np.log10(abs(ad_e / acm_e))
        assert 20 * np.log10(abs(ad / acm)) == pytest.approx(cmrr_db, abs=1e-3)
        assert cmrr == pytest.approx(cmrr_db, abs=0.01)  # the coils' 1 Ω moves it by < 0.01 dB


def test_difference_amplifier_textbook_68_db():
    # Sedra & Smith, Microelectronic Circuits, Ex. 2.15: R1 = R3 = 2 kΩ, R2 = R4 = 200 kΩ,
    # 1 % resistors, worst case: A_cm ≈ 0.04 and CMRR ≈ 68 dB.
    R1, R2, R3, R4 = 2e3 * (1 + T), 200e3 * (1 - T), 2e3 * (1 - T), 200e3 * (1 + T)
    ad, acm = engine_gains(diff_amp_design(R1, R2, R3, R4))
    assert abs(acm) == pytest.approx(0.04, abs=0.0015)
    assert 20 * np.log10(abs(ad / acm)) == pytest.approx(68.0, abs=0.1)


# ----------------------------------------------------------------------------
# Bias divider


def test_bias_divider_9v_1m_over_820k():
    # Voltage divider (textbook): V_bias = V_B·R_bot/(R_top+R_bot) = 4.055 V for 9 V,
    # 1 MΩ top, 820 kΩ bottom; AC input resistance R_top ∥ R_bot = 450.5 kΩ.
    d = diff_amp_design(10e3, 100e3, 10e3, None, bias=(1e6, 820e3))
    assert d.bias_v == pytest.approx(9 * 820 / 1820, rel=1e-12)
    assert d.bias_v == pytest.approx(4.055, abs=5e-4)
    rn = 1 / from_designs([d]).input_b.Gn[0]
    assert rn == pytest.approx(1e6 * 820e3 / 1.82e6, rel=1e-12)
    assert rn == pytest.approx(450.5e3, abs=50)
    # and in the engine's response: V+ / e_b = R_n/(R_n + R3 + coil) for the input divider
    amp = design_responses([d]).amp
    vplus = Rational(amp.s_b, amp.d_b)(1e3)[0, 0]
    g, zs = _source(1e3)
    assert vplus == pytest.approx(g * rn / (rn + 10e3 + zs), rel=1e-9)


@pytest.mark.parametrize("battery, r", [(9.0, 1e6), (9.0, 47e3), (18.0, 2.2e6)])
def test_equal_bias_resistors_give_half_the_battery(battery, r):
    # common practice, no source: equal divider resistors bias the op-amp at mid-supply
    d = diff_amp_design(10e3, 100e3, 10e3, None, battery=battery, bias=(r, r))
    assert d.bias_v == pytest.approx(battery / 2, rel=1e-15)
    assert d.headroom_up_v == pytest.approx(d.headroom_down_v, rel=1e-12)


# ----------------------------------------------------------------------------
# GBW-limited op-amp: closed-loop corner


@pytest.mark.parametrize(
    "gbw, f_quoted",
    [
        (1e6, 90.9e3),  # f_−3dB ≈ GBW/(1 + R2/R1): 1 MHz, K = 10 -> 90.9 kHz (Microchip Developer Help, op-amp bandwidth)
        (3e6, 272.7e3),  # 3 MHz, K = 10 -> 272.7 kHz (same source)
    ],
)
def test_gbw_closed_loop_corner(gbw, f_quoted):
    R1, K = 100e3, 10.0
    d = diff_amp_design(R1, K * R1, R1, K * R1, gbw=gbw, open_loop_gain=1e6)
    h = design_responses([d]).amp.from_a()
    g1k = abs(h(1e3)[0, 0])
    f3 = brentq(lambda f: abs(h(f)[0, 0]) / g1k - 2**-0.5, 1e4, 1e7, xtol=1e-6)
    assert gbw / (1 + K) == pytest.approx(f_quoted, abs=50)
    # The approximation ignores A0 = 1e6 (1e-5), the reference at 1 kHz (1.2e-4)
    # and the coil's 10 µH in series with R1 (jωL/R1 ≈ 2e-4 at 270 kHz): 0.1 %.
    assert f3 == pytest.approx(gbw / (1 + K), rel=1e-3)

    # Exactly: the inverting gain −Z2/Z1 / (1 + (1 + Z2/Z1)/A(s)), A = A0/(1 + s·A0/ω_gbw)
    # (Sedra & Smith, Microelectronic Circuits: inverting amplifier with finite open-loop
    # gain, ch. 2, from memory; single-pole A(s) as the op-amp's GBW model),
    # Z1 = R1 + the coil's Thevenin impedance and the coupling capacitor.
    def exact(f):
        s = 1j * TWO_PI * f
        g, zs = _source(f)
        z1 = R1 + zs
        a = 1e6 / (1 + s * 1e6 / (TWO_PI * gbw))
        return -g * (K * R1 / z1) / (1 + (1 + K * R1 / z1) / a)

    f = np.geomspace(10, 2e6, 61)
    assert np.allclose(h(f)[0], exact(f), rtol=1e-8)


# ----------------------------------------------------------------------------
# Cable loading: active low-impedance output against the passive reference


def _cable_design(length):
    d = {
        "coil_a": {"inductance": "1.2H", "resistance": "1k8", "capacitance": "60p", "sensitivity": 0.08, "turns_area": 0.75, "position": "38mm"},
        "coil_b": {"inductance": "1.2H", "resistance": "1k8", "capacitance": "60p", "sensitivity": 0.08, "turns_area": 0.75, "position": "56mm"},
        "input_a": {"load_c": "1n0", "series_c": "100n", "series_r": "10k"},
        "input_b": {"load_c": "1n0", "series_c": "100n", "series_r": "10k", "bias_top": "100k", "bias_bottom": "100k"},
        "feedback": {"r": "51k", "c": "22p"},
        "output": {"coupling_c": "10u", "series_r": "220R", "shunt_r": "100k"},
        "supply": {"battery": 9, "gbw": "3MHz"},
        "rig": {"cable_length": length},
    }
    return parse_design(d, source="cable")


def test_low_impedance_output_loses_less_treble_into_a_long_cable():
    # common practice, no source: a preamp's low output impedance (here 220 Ω) is
    # barely loaded by 1 nF of cable, while two passive coils (2 × 1.2 H, 2 × 1.8 kΩ)
    # resonate with it, so the long cable changes the passive treble far more.
    r10 = design_responses([_cable_design(10.0)])
    r0 = design_responses([_cable_design(0.0)])

    def loss_db(a, b):
        return float(20 * np.log10(abs(b(5e3)[0, 0]) / abs(a(5e3)[0, 0])))

    active = loss_db(r10.velocity(), r0.velocity())
    passive = loss_db(r10.passive_velocity(), r0.passive_velocity())
    print(f"\n10 m cable at 5 kHz: active loses {active:.3f} dB, passive {passive:.2f} dB")
    assert abs(active) < abs(passive)
    assert abs(active) < 0.1  # 220 Ω into 1 nF: corner 723 kHz (1/(2πRC), textbook)
    assert abs(passive) > 1.0
