"""``render coil MODEL`` and ``render coil fit --out`` claim no self-resonance where the sweep does not
determine the winding capacitance: null with the reason in words, as ``render coil fit`` prints it.

References: the known ladder coil of tests/impedance/test_measured_reach.py (its terminal impedance in
closed form with numpy; Foster's ladder, Bell Syst. Tech. J. 3(2), 1924), cut at 1 kHz, where C
carries ω²LC = 0.007 of the reactance; and a coil with no capacitance at all, (R + jωL) in closed form
(series impedances, any circuit-theory text). Both with 1 % noise on |Z| and 0.01 rad on the phase.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render.cli import main

from ..impedance.test_measured_reach import cut, noisy_sweep

ROOT = Path(__file__).resolve().parents[2]
MEASURED = ROOT / "models" / "measured-blade.toml"


def _write(path, f, z):
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.7g},{abs(b):.7g},{np.degrees(np.angle(b)):.7g}\n" for a, b in zip(f, z)))
    return path


def _no_capacitance(seed=5):
    # R_dc 4.1 kΩ and 2.2 H, nothing across it (invented demo values)
    rng = np.random.default_rng(seed)
    f = np.geomspace(20.0, 20e3, 103)
    z = 4100.0 + 2j * np.pi * f * 2.2
    return f, np.abs(z) * (1 + 0.01 * rng.standard_normal(f.size)) * np.exp(1j * (np.angle(z) + 0.01 * rng.standard_normal(f.size)))


SWEEPS = {"cut at 1 kHz": lambda: cut(*noisy_sweep(), 1e3), "no capacitance": _no_capacitance}


@pytest.mark.parametrize("name", list(SWEEPS))
def test_no_self_resonance_from_a_sweep_that_does_not_show_c(tmp_path, name):
    csv = _write(tmp_path / "sweep.csv", *SWEEPS[name]())
    runner = CliRunner()
    res = runner.invoke(main, ["coil", "fit", str(csv), "--json", str(tmp_path / "fit.json"), "--out", str(tmp_path / "coil.toml")])
    assert res.exit_code == 0, res.output
    fit = json.loads((tmp_path / "fit.json").read_text())
    words = fit["self_resonance_hz_reason"]
    assert fit["self_resonance_hz"] is None and ("not determined" in words or "none within the sweep" in words)
    # the written table's comment line gives the same words, no frequency
    (head,) = [x for x in (tmp_path / "coil.toml").read_text().splitlines() if "inductance at DC" in x]
    assert head.endswith(f", self-resonance {words}"), head

    # a design whose coils are this measurement: render coil MODEL says the same, in the terminal and in the JSON
    doc = MEASURED.read_text().replace("coils/harbour-blade-coil.synthetic.csv", "sweep.csv")
    (tmp_path / "design.toml").write_text(doc)
    res = runner.invoke(main, ["coil", str(tmp_path / "design.toml"), "--json", str(tmp_path / "coil.json")])
    if name == "no capacitance":  # its fitted C, far under 0.1 pF, is below what a design accepts: refused in one line
        assert "none within the sweep" in words
        assert res.exit_code == 1 and "fitted capacitance" in res.output and len(res.output.strip().splitlines()) == 1, res.output
        return
    assert res.exit_code == 0, res.output
    lines = [x for x in res.stdout.splitlines() if "self-resonance" in x]
    assert len(lines) == 2 and all(x.endswith(f"self-resonance {words}") for x in lines), lines
    assert not any(re.search(r"self-resonance [\d.]+ [kM]?Hz", x) for x in lines)
    for c in json.loads((tmp_path / "coil.json").read_text())["coils"].values():
        assert c["self_resonance_hz"] is None and c["self_resonance_hz_reason"] == words
        assert c["from"]["self_resonance_doubt"] == words
