"""The shipped reference design against an ngspice AC analysis (ngspice, Debian package)."""

import numpy as np
from spice import active_netlist, run_ac

from render.circuit.engine import design_responses
from render.design import load_design

ROOT = __import__("pathlib").Path(__file__).resolve().parents[2]


def test_reference_design_matches_ngspice():
    d = load_design(ROOT / "models" / "studio-reference.toml")
    wa = d.coil_a.signal_polarity * d.coil_a.sensitivity
    wb = d.coil_b.signal_polarity * d.coil_b.sensitivity
    f, v = run_ac(active_netlist(d, wa=wa, wb=wb), ["amp"], [20, 20000])["amp"]
    h = design_responses([d]).velocity()(f)[0]
    # the engine's contract (README, opening paragraph): 0.001 dB and 0.01° against ngspice
    assert np.max(np.abs(20 * np.log10(np.abs(h) / np.abs(v)))) < 0.001
    assert np.max(np.abs(np.degrees(np.angle(h / v)))) < 0.01
