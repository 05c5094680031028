"""render.with_values: one part changed from Python, checked, derived and recorded as a file would be.

Outside references: ngspice AC analyses of the circuit with the changed part's value written
into the netlist by the test itself (``tests/spice.py``, Debian package ``ngspice``), and the
bias divider's closed form V = battery · bottom / (top + bottom) (Ohm's law).
"""

from __future__ import annotations

import dataclasses
import json
import shutil
from pathlib import Path

import numpy as np
import pytest
from spice import active_netlist, run_ac

import render

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
BLADES = ROOT / "models" / "slipway-steel-blades.toml"


def test_a_changed_capacitor_gives_ngspices_response_for_that_capacitor():
    d = render.load_design(REF)
    d2 = render.with_values(d, {"feedback.c": "220p", "input_a.series_r": "2k2"})
    assert d2.feedback.c == pytest.approx(220e-12) and d2.input_a.series_r == pytest.approx(2200.0)
    # the netlist takes the values from the test, not from the changed design
    expected = dataclasses.replace(d, feedback=dataclasses.replace(d.feedback, c=220e-12), input_a=dataclasses.replace(d.input_a, series_r=2200.0))
    sig = (d.coil_a.signal_polarity * d.coil_a.sensitivity, d.coil_b.signal_polarity * d.coil_b.sensitivity)
    f_spice, v_spice = run_ac(active_netlist(expected, wa=sig[0], wb=sig[1]), ["amp"], [20.0, 20000.0])["amp"]
    r = render.response(d2, f_spice)
    err_db = np.abs(20 * np.log10(np.abs(r.velocity) / np.abs(v_spice)))
    assert err_db.max() < 0.001  # the README's ngspice agreement
    before = render.response(d, f_spice)
    assert np.abs(20 * np.log10(np.abs(before.velocity) / np.abs(v_spice))).max() > 0.5  # the change is audible in the check


def test_a_changed_divider_moves_the_bias_point_by_ohms_law():
    d = render.load_design(REF)
    d2 = render.with_values(d, {"input_b.bias_top": 270e3})
    battery, bottom = d.supply.battery, d.input_b.bias_bottom
    assert d2.bias_v == pytest.approx(battery * bottom / (270e3 + bottom), rel=1e-12)


def test_the_loader_derives_again_what_the_change_feeds():
    """A geometry's turns feed its turns area (N times the winding's mean enclosed area): doubling the turns doubles it."""
    d = render.load_design(BLADES)
    n = d.coil_a.geometry.turns
    d2 = render.with_values(d, {"coil_a.geometry.turns": 2 * n})
    assert d2.coil_a.turns_area == pytest.approx(2 * d.coil_a.turns_area, rel=1e-9)
    assert d2.coil_b.turns_area == pytest.approx(d.coil_b.turns_area, rel=1e-12)


def test_a_changed_design_keeps_its_file_and_lists_its_changes():
    d = render.load_design(REF)
    d2 = render.with_values(render.with_values(d, {"feedback.c": "100p"}), {"feedback.c": "220p", "feedback.r": "100k"}, name="ref 220p")
    assert (d2.source, d2.sha256) == (d.source, d.sha256)
    assert d2.changes == (("feedback.c", "220p"), ("feedback.r", "100k"))
    assert d2.name == "ref 220p" and d2.stem == "ref-220p"
    assert "# Harbour Street" in d2.text  # the file's own comments are kept
    assert render.load_design(REF).text == REF.read_text(encoding="utf-8")


def test_none_leaves_a_key_out_and_its_default_applies():
    d = render.load_design(REF)
    assert d.feedback.c is not None
    assert render.with_values(d, {"feedback.c": None}).feedback.c is None


@pytest.mark.parametrize(
    "values, words",
    [
        ({"feedback.c": "220x"}, "cannot read '220x' as a capacitance"),
        ({"feedbak.c": "1p"}, "did you mean 'feedback'"),
        ({"c": 1}, 'expected "table.key"'),
        ({"feedback.c": float("nan")}, "finite number"),
        ({"feedback.c": object()}, "a number in SI units"),
        ({}, "a mapping"),
    ],
)
def test_a_bad_change_is_refused_in_one_line(values, words):
    d = render.load_design(REF)
    with pytest.raises(render.InputError) as exc:
        render.with_values(d, values)
    assert words in str(exc.value) and "\n" not in str(exc.value)


def test_a_rig_applied_after_loading_stays_applied():
    designs, _ = render.load_designs([REF], rig=ROOT / "rigs" / "near-transformer.toml")
    assert designs[0].hum != render.load_design(REF).hum  # the rig brings its own hum sources
    d2 = render.with_values(designs[0], {"feedback.c": "220p"})
    assert d2.rig == designs[0].rig and d2.hum == designs[0].hum


def test_a_design_changed_with_replace_is_refused_where_it_would_be_recorded(tmp_path):
    d = render.load_design(REF)
    d3 = dataclasses.replace(d, feedback=dataclasses.replace(d.feedback, c=220e-12))
    with pytest.raises(render.ArgumentError, match=r"designs\[1\]=studio-reference: its values were changed after it was read .*render.with_values"):
        render.render_clips([d, d3], ROOT / "dry_signals" / "default.toml", settings=render.RenderSettings(seconds=0.5), out=tmp_path / "o")
    assert not (tmp_path / "o").exists()
    render.response(d3, [1000.0])  # a figure in memory records nothing: taken as it is


def test_clips_and_a_blind_session_record_what_was_heard(tmp_path):
    d = render.load_design(REF)
    d2 = render.with_values(d, {"feedback.c": "220p"}, name="ref 220p")
    render.render_clips([d, d2], ROOT / "dry_signals" / "default.toml", settings=render.RenderSettings(seconds=0.5), out=tmp_path / "clips")
    rec = json.loads((tmp_path / "clips" / "ref-220p.json").read_text())
    assert rec["design_file"] == str(REF) and rec["design_changes"] == {"feedback.c": "220p"} and rec["design_values"]["feedback"]["c"] == pytest.approx(220e-12)
    assert json.loads((tmp_path / "clips" / "studio-reference.json").read_text())["design_changes"] == {}

    render.build_blind_session([d, d2], None, out=tmp_path / "blind", settings=render.BlindSettings(trials=2, seconds=1.0))
    from render.listening.score import designs_from_key

    key = json.loads((tmp_path / "blind" / "private" / "key.json").read_text())
    rebuilt = designs_from_key(key)  # what the score draws its response difference from
    assert [x.feedback.c for x in rebuilt] == pytest.approx([d.feedback.c, 220e-12])
    assert rebuilt[1].changes == (("feedback.c", "220p"),)


def test_a_relative_measured_coil_is_found_from_the_design_files_folder(tmp_path):
    """A changed design is read from its file's folder, so a measured coil's relative path still resolves."""
    src = ROOT / "models"
    shutil.copytree(src, tmp_path / "models")
    measured = tmp_path / "models" / "measured-blade.toml"
    d = render.load_design(measured)
    d2 = render.with_values(d, {"feedback.r": "100k"})
    assert d2.coil_a.inductance == d.coil_a.inductance and d2.feedback.r == pytest.approx(100e3)


def test_a_changed_design_cannot_start_a_fit_but_its_text_can(tmp_path):
    d2 = render.with_values(render.load_design(REF), {"feedback.c": "68p"}, name="ref 68p")
    fitfile = ROOT / "models" / "fits" / "brighter-reference.toml"
    with pytest.raises(render.ArgumentError, match=r"start_path=.*with changes \(feedback.c\): no file holds it.*write design.text"):
        render.fit(fitfile, out=tmp_path / "f", start_path=d2)
    assert not (tmp_path / "f").exists()


def test_a_hum_source_is_named_by_its_index_and_its_hum_scales_with_its_moment(tmp_path):
    """A dipole's field is linear in its moment (B = μ0/4π · (3(m·r̂)r̂ − m)/r³), so twice the moment gives twice each coil's hum."""
    path = tmp_path / "with-source.toml"
    path.write_text(REF.read_text(encoding="utf-8") + '\n[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["0.5m", 0, 0]\n', encoding="utf-8")
    d = render.load_design(path)
    d2 = render.with_values(d, {"hum.source.0.moment": 0.1})
    assert d2.hum.sources[0].moment == pytest.approx(0.1)
    h, h2 = render.hum(d).harmonics[0], render.hum(d2).harmonics[0]
    assert h2.coil_a_v == pytest.approx(2 * h.coil_a_v, rel=1e-9) and h2.coil_b_v == pytest.approx(2 * h.coil_b_v, rel=1e-9)
    with pytest.raises(render.ArgumentError, match="hum.source holds 1 table; index them from 0"):
        render.with_values(d, {"hum.source.3.moment": 0.1})
