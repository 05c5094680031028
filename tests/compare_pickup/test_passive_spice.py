"""A passive comparison pickup's response and hum against ngspice.

Reference: ngspice (Debian package ``ngspice``), AC analysis of a netlist
written here from the passive file's values alone (coil_b from ground to the
middle node, coil_a from there to the jack, each coil's EMF in the string's
direction times its polarity; the pots, tone capacitor, cable and amplifier
by ``tests/spice.py``), without the engine's algebra or the carrier design
that evaluates the pickup. Magnitude within 0.001 dB and phase within 0.01°
at every point of a 200-per-decade sweep from 20 Hz to 20 kHz, the tolerance
of the designs' own ngspice checks.
"""

from __future__ import annotations

from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
from spice import _coil_lines, _rig_lines, run_ac

from render.analysis.comparison import compare_response
from render.circuit.engine import design_responses
from render.design.passive import carrier, load_passive, parse_passive
from render.io.toml import loads

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "models" / "compare" / "workshop-passive.toml"
TOL_DB = 0.001
TOL_DEG = 0.01


def pickup_netlist(p, *, wa, wb):
    """ground – coil_b – m – coil_a – jack, EMFs wa·V(drive) and wb·V(drive) towards the jack; controls, cable, amp."""
    c = p.controls
    rig = SimpleNamespace(
        passive_pot=c.pot,
        passive_tone_cap=c.tone_cap,
        volume=c.volume,
        volume_taper=c.volume_taper,
        tone=c.tone,
        tone_taper=c.tone_taper,
        cable_length=p.rig.cable_length,
        cable_capacitance=p.rig.cable_capacitance,
        amp_r=p.rig.amp_r,
        amp_c=p.rig.amp_c,
    )
    lines = ["* passive comparison pickup", "Vdrive drive 0 DC 0 AC 1"]
    lines += _coil_lines("b", p.coil_b, "m", "0", "drive", wb)
    lines += _coil_lines("a", p.coil_a, "jack", "m", "drive", wa)
    lines += _rig_lines("jack", rig, passive=True)
    return lines


def _variant():
    """The demo with its knobs turned (audio volume at 0.7, linear tone at 0.4) and a shorted-secondary core loss."""
    text = DEMO.read_text(encoding="utf-8")
    data = loads(text)
    data["controls"].update(volume=0.7, tone=0.4)
    data["coil_a"].update(eddy_coupling=0.3, eddy_corner="3kHz")
    return parse_passive(data, source="variant")


CASES = {"demo": lambda: load_passive(DEMO), "knobs-turned": _variant}


def _check(f, got, ref):
    err_db = np.abs(20 * np.log10(np.abs(got) / np.abs(ref)))
    err_deg = np.abs(np.degrees(np.angle(got / ref)))
    assert err_db.max() < TOL_DB, f"worst {err_db.max():.3g} dB at {f[err_db.argmax()]:.0f} Hz"
    assert err_deg.max() < TOL_DEG, f"worst {err_deg.max():.3g}° at {f[err_deg.argmax()]:.0f} Hz"


@pytest.mark.parametrize("case", list(CASES))
def test_velocity_response_against_ngspice(case):
    p = CASES[case]()
    wa = p.coil_a.signal_polarity * p.coil_a.sensitivity
    wb = p.coil_b.signal_polarity * p.coil_b.sensitivity
    f, ref = run_ac(pickup_netlist(p, wa=wa, wb=wb), ["amp"], [20.0, 20e3])["amp"]
    _check(f, compare_response(p, f), ref)


@pytest.mark.parametrize("case", list(CASES))
def test_hum_response_against_ngspice(case):
    # uniform dB/dt: each coil's hum EMF is hum_polarity · turns_area · dB/dt, towards the jack as connected
    p = CASES[case]()
    wa = p.coil_a.hum_polarity * p.coil_a.turns_area
    wb = p.coil_b.hum_polarity * p.coil_b.turns_area
    f, ref = run_ac(pickup_netlist(p, wa=wa, wb=wb), ["amp"], [20.0, 20e3])["amp"]
    got = design_responses([carrier(p)]).passive_hum()(f)[0]
    _check(f, got, ref)
