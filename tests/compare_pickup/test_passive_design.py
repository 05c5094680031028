"""The passive pickup's file: what it reads, what it refuses, how a rig file applies.

The expectations are the file format's own contract (no outside source); the
circuit itself is checked against ngspice in test_passive_spice.py.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from render.design import load_design, load_rig
from render.design.passive import carrier, load_passive, parse_passive
from render.errors import InputError
from render.io.toml import loads

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "models" / "compare" / "workshop-passive.toml"


def _demo_data():
    return loads(DEMO.read_text(encoding="utf-8"))


def test_the_demo_reads_with_its_values():
    p = load_passive(DEMO)
    assert p.name == "workshop-passive"
    assert p.controls.pot == 500e3 and p.controls.tone_cap == 22e-9
    assert p.rig.cable_length * p.rig.cable_capacitance == pytest.approx(600e-12)  # as written: 6 m × 100 pF/m
    assert p.coil_a.inductance + p.coil_b.inductance == pytest.approx(4.12)  # 2.1 H + 2.02 H, as written
    # as connected: signals add, hum opposes (the defaults)
    assert (p.coil_a.signal_polarity, p.coil_b.signal_polarity) == (1, 1)
    assert (p.coil_a.hum_polarity, p.coil_b.hum_polarity) == (1, -1)
    assert "invented for the demo" in DEMO.read_text(encoding="utf-8")


def test_the_carrier_reverses_coil_b_for_the_engine():
    # the engine's passive path runs coil_b reversed (ground – coil_b – coil_a – jack, EMF −e_b)
    d = carrier(load_passive(DEMO))
    assert (d.coil_b.signal_polarity, d.coil_b.hum_polarity) == (-1, 1)
    assert d.rig.passive_pot == 500e3 and d.rig.passive_tone_cap == 22e-9


def test_a_rig_file_replaces_cable_amp_and_hum_but_not_the_controls(tmp_path):
    rig = tmp_path / "rig.toml"
    rig.write_text('[rig]\ncable_length = "3m"\nvolume_pot = "25k"\ntone_cap = "47n"\n[hum]\nmains = 60\n', encoding="utf-8")
    p = load_passive(DEMO, rig=load_rig(rig))
    assert p.rig.cable_length == 3.0
    assert p.hum.mains == 60.0
    assert p.controls.pot == 500e3 and p.controls.tone_cap == 22e-9


@pytest.mark.parametrize(
    "change, words",
    [
        (lambda d: d.pop("coil_b"), "missing table [coil_b]"),
        (lambda d: d["rig"].update(volume_pot="500k"), "go in its [controls] table"),
        (lambda d: d["controls"].update(pots="500k"), "did you mean 'pot'"),
        (lambda d: d.update(preamp={}), "unknown table or key"),
        (lambda d: d["coil_a"].update(eddy_coupling=0.2), "eddy_coupling and eddy_corner go together"),
    ],
)
def test_refusals_are_one_line(change, words):
    data = _demo_data()
    change(data)
    with pytest.raises(InputError) as exc:
        parse_passive(data, source="x.toml")
    assert words in str(exc.value) and "\n" not in str(exc.value)


def test_a_passive_file_named_as_a_design_is_refused_with_the_fix():
    from render.errors import PassiveGiven

    with pytest.raises(PassiveGiven, match="give a design with a preamp") as exc:  # the CLI words the fix per command
        load_design(DEMO)
    assert exc.value.path == str(DEMO)


def test_a_design_named_with_compare_is_refused():
    with pytest.raises(InputError, match='kind = "passive"'):
        load_passive(ROOT / "models" / "studio-reference.toml")


def test_the_comparison_pickups_rejection_is_quoted_where_the_designs_is(tmp_path):
    # a room without hum at the fundamental (harmonics [0, 0.05, 0.3]): render check quotes every rejection at the
    # lowest harmonic with hum, H2 at 120 Hz, the design's and the comparison pickup's alike (the rule of render hum)
    from click.testing import CliRunner

    from render.cli import main

    rig = tmp_path / "rig.toml"
    rig.write_text('[hum]\nmains = "60Hz"\nfield = "1uT"\nharmonics = [0, 0.05, 0.3]\n', encoding="utf-8")
    res = CliRunner().invoke(main, ["check", str(ROOT / "models" / "studio-reference.toml"), "--rig", str(rig), "--compare", str(DEMO)])
    assert res.exit_code == 0, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip().startswith("hum rejection")]
    assert len(lines) == 2 and all(ln.endswith("dB at H2, 120 Hz, the lowest harmonic with hum") for ln in lines), lines
