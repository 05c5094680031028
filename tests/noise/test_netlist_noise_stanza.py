"""The netlist's commented op-amp noise stanza (``render netlist``) against ngspice ``.noise``.

Reference: ngspice (Debian package ``ngspice``), batch mode, at 300 K (``.options temp=26.85``), on the
netlist ``render netlist`` writes for the reference design, with its commented op-amp noise lines
uncommented. The file says its ``.noise`` example leaves the op-amp's noise out; with the stand-ins
(thermal voltage of a lone resistor, Johnson–Nyquist, through a noiseless transconductance) ngspice's
total over 20 Hz–20 kHz is render noise's, and without them it is render noise's total less the
op-amp's own contributions.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
from spice import require_ngspice

from render.analysis.noise import noise_reports
from render.circuit.netlist import netlist
from render.design import load_design

from .spice_noise import run_noise

REF = Path(__file__).resolve().parents[2] / "models" / "studio-reference.toml"
TOL_DB = 0.01  # the totals: ngspice's 200-per-decade sweep integrated by the trapezoid rule against render's own grid


def _total(f, density) -> float:
    return math.sqrt(float(np.trapezoid(density**2, f)))


def test_the_opamp_noise_stanza_gives_render_noise_total():
    require_ngspice()
    d = load_design(REF)
    lines = netlist(d).splitlines()
    assert "leaves out the op-amp's own noise" in "\n".join(lines)
    stanza = [line[2:] for line in lines if re.match(r"\* (Ren|Gen|Rinp|Ginp|Rinn|Ginn) ", line)]
    assert len(stanza) == 6, stanza
    body = [line for line in lines if line != ".end"]
    (r,) = noise_reports([d], temperature=300.0)
    with_op = _total(*run_noise(body + stanza, source="Vvel", output="amp")[:2])
    without = _total(*run_noise(body, source="Vvel", output="amp")[:2])
    opamp = sum(c.total_v**2 for c in r.active.contributors if c.key.startswith("opamp."))
    assert abs(20 * math.log10(with_op / r.active.total_v)) < TOL_DB, (with_op, r.active.total_v)
    assert abs(20 * math.log10(without / math.sqrt(r.active.total_v**2 - opamp))) < TOL_DB, (without, r.active.total_v)
    assert 20 * math.log10(with_op / without) > 0.5  # the op-amp's share is large enough that leaving it out shows
