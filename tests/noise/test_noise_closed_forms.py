"""Noise: Johnson–Nyquist, A-weighting, band integration and the model's structure."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from render.analysis.noise import (
    a_weighting_db,
    band_rms,
    check_temperature,
    integration_grid,
    noise_reports,
    thermal_density,
)
from render.circuit.noise import K_BOLTZMANN, design_noise_model
from render.circuit.params import from_designs
from render.circuit.rig import rig_chain, rig_parts
from render.design import load_design
from render.errors import InputError

ROOT = Path(__file__).resolve().parents[2]
REF = load_design(ROOT / "models" / "studio-reference.toml")
MODELS = [load_design(p) for p in sorted((ROOT / "models").glob("*.toml"))]


def test_boltzmann_constant_is_the_si_value():
    # SI Brochure, 9th ed. (2019): k = 1.380649e-23 J/K exactly
    assert K_BOLTZMANN == 1.380649e-23


def test_johnson_nyquist():
    # Johnson 1928; Nyquist, Phys. Rev. 32 (1928): v = √(4kTRB); 1 kΩ, 20 kHz, 300 K -> 0.5756 µV
    assert thermal_density(1e3, 300.0) * np.sqrt(20e3) == pytest.approx(0.5756e-6, abs=0.00005e-6)
    # same formula: 1 kΩ at 300 K is 4.070 nV/√Hz; at 290 K over 20 kHz 0.5660 µV; 6 kΩ at 300 K 1.410 µV
    assert thermal_density(1e3, 300.0) == pytest.approx(4.070e-9, abs=0.0005e-9)
    assert thermal_density(1e3, 290.0) * np.sqrt(20e3) == pytest.approx(0.5660e-6, abs=0.00005e-6)
    assert thermal_density(6e3, 300.0) * np.sqrt(20e3) == pytest.approx(1.410e-6, abs=0.0005e-6)


def test_band_integration_of_a_white_density():
    # √(S·B) for a flat density over 20 Hz–20 kHz (Johnson–Nyquist, B = 19 980 Hz)
    f = integration_grid()
    s = 4 * K_BOLTZMANN * 300.0 * 1e3
    assert band_rms(np.full_like(f, s), f) == pytest.approx(np.sqrt(s * 19980.0), rel=1e-9)
    # ∫ f² df = (b³ − a³)/3 (calculus), a check that the log-grid rule is accurate for a sloped density
    assert band_rms(f**2, f) ** 2 == pytest.approx((20e3**3 - 20.0**3) / 3, rel=1e-9)


@pytest.mark.parametrize(
    "f_hz, table_db",
    # IEC 61672-1:2013 Table 3, A-weighting (the standard's rounded values)
    [(50.0, -30.2), (63.0, -26.2), (100.0, -19.1), (1000.0, 0.0), (10000.0, -2.5)],
)
def test_a_weighting_against_the_iec_table(f_hz, table_db):
    # IEC 61672-1:2013 Table 3, within 0.1 dB
    assert a_weighting_db(f_hz) == pytest.approx(table_db, abs=0.1)


def test_a_weighting_formula_values():
    # IEC 61672-1:2013 analytic A-weighting (its pole frequencies and +2.00 dB); values
    # recomputed with numpy: 50 Hz −30.27, 60 Hz −27.05, 100 Hz −19.14, 1 kHz 0.00, 10 kHz −2.49 (±0.05 dB)
    got = a_weighting_db(np.array([50.0, 60.0, 100.0, 1000.0, 10000.0]))
    assert got == pytest.approx([-30.27, -27.05, -19.14, 0.0, -2.49], abs=0.05)
    # the formula at 1 kHz: within 0.05 dB of 0 (IEC 61672-1:2013, normalised to 0 dB at 1 kHz)
    assert abs(float(a_weighting_db(1000.0))) < 0.05


def test_rig_parts_cascade_to_the_engine_rig_chain():
    # the noise model rebuilds the rig's sections; they must be the engine's, exactly (identity)
    p = from_designs(MODELS)
    for r in (p.rig, p.passive_rig):
        from render.circuit.poly import cascade

        a, b = cascade(*rig_parts(r)), rig_chain(r)
        for k in ("a", "b", "c", "d", "scale"):
            assert np.array_equal(getattr(a, k), getattr(b, k)), k


def test_absent_parts_contribute_exactly_nothing():
    # no load_r, no volume upper half at full volume: exact zeros, not small numbers (identity)
    m = design_noise_model([REF])
    f = np.geomspace(20, 20e3, 50)
    by_key = {s.key: s for s in m.active}
    for key in ("input_a.load_r", "input_b.load_r", "rig.volume_upper"):
        assert np.all(by_key[key].output_psd(f) == 0.0), key


def test_coil_core_loss_is_nyquist_of_its_impedance():
    # Nyquist (Phys. Rev. 32, 1928): a passive one-port's open-circuit noise is 4kT·Re{Z}; for
    # R_p ∥ L alone Re{Z} = R_p ω²L² / (R_p² + ω²L²) (circuit algebra)
    m = design_noise_model([REF], temperature=300.0)
    src = {s.key: s for s in m.active}["coil_a.core_loss"]
    f = np.geomspace(20, 20e3, 30)
    w = 2 * np.pi * f
    rp, L = REF.coil_a.eddy_resistance, REF.coil_a.inductance
    expect = 4 * K_BOLTZMANN * 300.0 * rp * (w * L) ** 2 / (rp**2 + (w * L) ** 2)
    np.testing.assert_allclose(src.source_psd(f)[0], expect, rtol=1e-9)


def test_thermal_noise_scales_with_temperature_opamp_noise_does_not():
    # 4kT·R ∝ T (Johnson–Nyquist); the op-amp's densities are given, not thermal
    f = np.geomspace(20, 20e3, 20)
    a, b = design_noise_model([REF], temperature=300.0), design_noise_model([REF], temperature=360.0)
    for sa, sb in zip(a.active, b.active):
        ratio = 1.2 if sa.thermal else 1.0
        np.testing.assert_allclose(sb.output_psd(f), ratio * sa.output_psd(f), rtol=1e-12, atol=0)


def test_batch_equals_one_at_a_time():
    # vectorised over designs: each row equals the design alone (identity)
    f = np.geomspace(20, 20e3, 40)
    batch = design_noise_model(MODELS).output_psd(f)
    for i, d in enumerate(MODELS):
        np.testing.assert_allclose(batch[i], design_noise_model([d]).output_psd(f)[0], rtol=1e-12)


def test_report_totals_and_shares():
    (r,) = noise_reports([REF])
    for fl in (r.active, r.passive):
        # shares of uncorrelated powers add up to the whole (Parseval, independent sources)
        assert sum(c.share for c in fl.contributors) == pytest.approx(1.0, rel=1e-12)
        assert sum(c.total_v**2 for c in fl.contributors) == pytest.approx(fl.total_v**2, rel=1e-12)
        shares = [c.share for c in fl.contributors]
        assert shares == sorted(shares, reverse=True)
        # A-weighting is at most about +1.3 dB, near 2.5 kHz (IEC 61672-1 Table 3, from memory), and this floor is
        # not concentrated near 2.5 kHz, so the A-weighted total is below the unweighted one
        assert fl.a_weighted_v < fl.total_v
        assert fl.snr_db == pytest.approx(20 * np.log10(fl.signal_v / fl.total_v))
    # the reference signal: |H(1 kHz)| × 0.1 m/s (its definition), from the engine's response
    from render.circuit.engine import design_responses

    h = design_responses([REF]).velocity()([1000.0])[0, 0]
    assert r.active.signal_v == pytest.approx(abs(h) * 0.1, rel=1e-12)


def test_op_amp_noise_defaults_and_override():
    # defaults 10 nV/√Hz and 10 fA/√Hz (the design file's documented defaults)
    assert REF.supply.noise_voltage == 10e-9 and REF.supply.noise_current == 1e-14
    f = np.array([1000.0])
    loud = replace(REF, supply=replace(REF.supply, noise_voltage=20e-9))
    s0 = {s.key: s for s in design_noise_model([REF]).active}["opamp.voltage"].output_psd(f)
    s1 = {s.key: s for s in design_noise_model([loud]).active}["opamp.voltage"].output_psd(f)
    # doubling e_n quadruples its power (|H|²·e_n²)
    assert s1 == pytest.approx(4 * s0, rel=1e-12)


@pytest.mark.parametrize("t, fragment", [(25.0, "kelvin, not °C"), (0.0, "from 200 K to 400 K"), (float("nan"), "from 200 K")])
def test_temperature_refused_outside_plausible_range(t, fragment):
    with pytest.raises(InputError, match=fragment):
        check_temperature(t)
