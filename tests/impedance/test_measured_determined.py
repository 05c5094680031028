"""Whether a sweep determines R_dc and the inductance at DC, and R_dc held at an ohmmeter's reading.

Reference: the terminal impedance of R_dc + sL0 + Σ sL_k·R_k/(R_k + sL_k) with C across it,
in closed form with numpy (series and parallel impedances, any circuit-theory text; the ladder
is Foster's, Bell Syst. Tech. J. 3(2), 1924), given 1 % noise on |Z| and 0.01 rad on the phase
(the sweep of tests/impedance/test_measured_reach.py), cut at its low or high end. The coil's
corner R_dc/(2πL) is where ωL = R_dc and the phase is 45° (the same closed form).
"""

import json

import numpy as np
import pytest
from click.testing import CliRunner

from render.cli import main
from render.impedance.measured import LOW_END_DEG, REACH_SD, fit_measurement

from .test_measured_reach import L0, LK, R, ladder_coil, noisy_sweep

L_DC = L0 + sum(LK)
CORNER_HZ = R / (2 * np.pi * L_DC)  # 291 Hz


def from_hz(f, z, lo):
    k = f >= lo * (1 - 1e-6)
    return f[k], z[k]


def test_the_corner_is_where_the_closed_form_phase_is_45_degrees_below_the_ladder():
    # below the ladder's corners (1.7 kHz and up) the coil is R + jωL_dc: at R/(2πL) the phase is 45°
    # (within 2° here, as the ladder's first corner lowers L a little)
    assert np.degrees(np.angle(ladder_coil(np.array([CORNER_HZ]))))[0] == pytest.approx(LOW_END_DEG, abs=2)


@pytest.mark.parametrize("lo", [20.0, 100.0, 200.0])
def test_a_sweep_from_below_the_corner_determines_r_and_l(lo):
    fit = fit_measurement(*from_hz(*noisy_sweep(), lo))
    assert fit.resistance_doubt() is None and fit.inductance_doubt() is None
    assert fit.resistance == pytest.approx(R, rel=0.01) and fit.inductance == pytest.approx(L_DC, rel=0.02)


@pytest.mark.parametrize("lo", [2e3, 5e3])
def test_a_sweep_from_far_above_the_corner_says_r_and_l_are_not_determined(lo):
    # from 2 and 5 kHz (7 and 17 times the corner) the fitted R_dc is more than 20 % off (36 % and 44 %
    # as measured here) while its standard error from the covariance stays under 10 %: the ladder's
    # loss trades against R_dc, which the covariance does not see; the phase at the low end does
    f, z = from_hz(*noisy_sweep(), lo)
    fit = fit_measurement(f, z)
    assert abs(fit.resistance / R - 1) > 0.2 and fit.resistance_rel_sd < REACH_SD
    assert np.degrees(np.angle(z[0])) > LOW_END_DEG
    for doubt, head in ((fit.resistance_doubt(), "R_dc not determined: "), (fit.inductance_doubt(), "L not determined: ")):
        assert doubt is not None and doubt.startswith(head) and "\n" not in doubt


def test_held_r_from_far_above_the_corner():
    # R_dc held at its true value: taken as given, no doubt about R; the DC inductance from 2 kHz is still extrapolated
    fit = fit_measurement(*from_hz(*noisy_sweep(), 2e3), resistance=R)
    assert fit.resistance == R and fit.resistance_given and fit.resistance_rel_sd == 0.0
    assert fit.resistance_doubt() is None and fit.inductance_doubt() is not None


def test_eight_points_below_the_corner_do_not_determine_l():
    # the sweep's first 8 points, 20–34 Hz (ωL/R ≤ 0.12): L's standard error from the covariance is over
    # 10 %; R_dc is fixed (the phase there is under 7°)
    f, z = noisy_sweep()
    fit = fit_measurement(f[:8], z[:8])
    assert f[7] == pytest.approx(34.2, rel=1e-3)
    assert fit.inductance_rel_sd > REACH_SD
    doubt = fit.inductance_doubt()
    assert doubt is not None and doubt.startswith("L not determined: ") and "\n" not in doubt
    assert fit.resistance_doubt() is None and fit.resistance == pytest.approx(R, rel=0.02)


def _write(path, f, z):
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.6g},{abs(b):.6g},{np.degrees(np.angle(b)):.6g}\n" for a, b in zip(f, z)))
    return path


def test_coil_fit_says_it_in_text_and_json_and_holds_r_with_resistance(tmp_path):
    path = _write(tmp_path / "m.csv", *from_hz(*noisy_sweep(), 2e3))
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--json", "-"])
    assert res.exit_code == 0, res.output
    rec = json.loads(res.stdout)
    assert rec["resistance_determined"] is False and rec["inductance_determined"] is False
    warns = [w for w in res.stderr.splitlines() if w.startswith("warning: ")]
    assert sum(w.startswith("warning: R_dc not determined: ") for w in warns) == 1
    assert sum(w.startswith("warning: L not determined: ") for w in warns) == 1
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--resistance", "4.1k", "--json", "-"])
    rec = json.loads(res.stdout)
    assert res.exit_code == 0 and rec["resistance_ohm"] == R and rec["resistance_given"] is True and rec["resistance_determined"] is True
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--resistance", "4.1k"])
    assert "R_dc            4.1 kΩ (given, not fitted)" in res.stdout
    full = _write(tmp_path / "full.csv", *noisy_sweep())
    rec = json.loads(CliRunner().invoke(main, ["coil", "fit", str(full), "--json", "-"]).stdout)
    assert rec["resistance_determined"] and rec["inductance_determined"] and rec["capacitance_determined"]


@pytest.mark.parametrize("value", ["-3", "nan", "4.1kF"])
def test_a_bad_resistance_is_refused_in_one_line(tmp_path, value):
    path = _write(tmp_path / "m.csv", *noisy_sweep())
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--resistance", value])
    assert res.exit_code == 1 and "Traceback" not in res.output
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ") and "--resistance" in lines[0], res.output
