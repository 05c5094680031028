"""A measured coil whose sweep stops below its self-resonance, through the commands; separators; wording.

The sweeps are the shipped synthetic example (true C 95 pF, self-resonance
11.9 kHz: its header and tests/impedance/test_measured.py) cut at 1 kHz, where
its fitted C is 3.7 times the true one (tests/impedance/test_measured_reach.py).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render.cli import main
from render.design import load_design
from render.errors import InputError
from render.impedance.measurement_csv import parse_measurement
from render.plausible import design_warnings

ROOT = Path(__file__).resolve().parents[2]
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
SHIPPED = "coils/harbour-blade-coil.synthetic.csv"


def cut_file(path: Path, top_hz: float) -> Path:
    lines = CSV.read_text(encoding="utf-8").splitlines()
    keep = [x for x in lines if x.startswith("#") or x.startswith("frequency") or float(x.split(",")[0]) <= top_hz * (1 + 1e-6)]
    path.write_text("\n".join(keep) + "\n", encoding="utf-8")
    return path


def invoke(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_coil_fit_of_a_1_khz_sweep_warns_once_about_c_and_labels_the_residual_with_the_data(tmp_path):
    path = cut_file(tmp_path / "to1k.csv", 1e3)
    res = invoke("coil", "fit", path, "--json", tmp_path / "fit.json")
    assert res.exit_code == 0, res.output
    warns = [x for x in res.output.splitlines() if x.startswith("warning: ")]
    # C's line, and the band's top extrapolated (tests/cli/test_coil_band_end.py)
    assert len(warns) == 2 and warns[0].startswith("warning: C is not determined: the sweep ends at 1 kHz") and "--capacitance" in warns[0]
    assert warns[1].startswith("warning: the sweep ends at 1 kHz, below 20 kHz")
    rows = [x.strip() for x in res.output.splitlines() if " pts " in x]
    assert [r.split("  ")[0] for r in rows] == ["20 Hz – 1 kHz", "20 Hz – 200 Hz", "200 Hz – 1 kHz"]
    assert "not determined by this sweep" in res.output
    rec = json.loads((tmp_path / "fit.json").read_text())
    assert rec["capacitance_determined"] is False and rec["residual"][0]["to_hz"] == 1000.0
    # the full sweep: the band as before, C determined, no warning
    res = invoke("coil", "fit", CSV)
    assert "20 Hz – 20 kHz" in res.output and "warning" not in res.output


def test_coil_fit_holds_a_given_capacitance(tmp_path):
    path = cut_file(tmp_path / "to1k.csv", 1e3)
    res = invoke("coil", "fit", path, "--capacitance", "95p", "--out", tmp_path / "coil.toml")
    assert res.exit_code == 0, res.output
    assert "capacitance     95 pF (given, not fitted)" in res.output and "C is not determined" not in res.output
    # C held: only the band's top is still extrapolated, and said
    assert [x for x in res.output.splitlines() if x.startswith("warning: ")] == [
        "warning: the sweep ends at 1 kHz, below 20 kHz: the core loss (the ladder's R∥L sections) and |Z| above 1 kHz are the fit's extrapolation, not the coil's; sweep on to 20 kHz"
    ]
    table = (tmp_path / "coil.toml").read_text()
    assert 'capacitance = "95pF"' in table and "# capacitance held at the value given" in table
    res = invoke("coil", "fit", path, "--capacitance", "95")
    assert res.exit_code == 1 and res.output.count("\n") == 1 and "--capacitance" in res.output
    assert 'write e.g. "95p"' in res.output  # a coil's usual range (render.usual) sets the hint's prefix


def _design(tmp_path, csv_name: str, *, held_a: bool = False) -> Path:
    text = (ROOT / "models" / "measured-blade.toml").read_text(encoding="utf-8").replace(SHIPPED, csv_name)
    if held_a:
        text = text.replace(f'measured = "{csv_name}"   # relative to this file', f'measured = "{csv_name}"\ncapacitance = "95pF"', 1)
        assert 'capacitance = "95pF"' in text
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_a_design_with_a_short_sweep_warns_in_one_line_for_both_coils(tmp_path):
    cut_file(tmp_path / "to1k.csv", 1e3)
    d = load_design(_design(tmp_path, "to1k.csv"))
    warns = [w for w in design_warnings(d) if "C is not determined" in w]
    assert len(warns) == 1 and warns[0].startswith("[coil_a] and [coil_b] measured='to1k.csv': C is not determined") and 'capacitance = "…" beside measured' in warns[0]
    res = invoke("coil", _design(tmp_path, "to1k.csv"))
    assert res.exit_code == 0 and res.output.count("C is not determined") == 1
    assert res.output.count("(not determined by the sweep)") == 2
    res = invoke("check", _design(tmp_path, "to1k.csv"))
    assert res.exit_code == 0 and res.output.count("C is not determined") == 1


def test_capacitance_beside_measured_holds_it(tmp_path):
    cut_file(tmp_path / "to1k.csv", 1e3)
    d = load_design(_design(tmp_path, "to1k.csv", held_a=True))
    assert d.coil_a.capacitance == 95e-12 and d.coil_a.impedance_from.capacitance_given
    assert d.coil_b.capacitance > 3 * 95e-12  # the fit of the 1 kHz sweep (356 pF)
    warns = [w for w in design_warnings(d) if "C is not determined" in w]
    assert len(warns) == 1 and warns[0].startswith("[coil_b] measured=")


# --- separators -----------------------------------------------------------------------

ROWS = [(20.0, 4077.24, 3.64979), (50.0, 4158.9, 10.5), (100.0, 4368.0, 19.0), (200.0, 4923.0, 32.7), (500.0, 8057.7, 58.2), (1e3, 14400.0, 69.6), (2e3, 27400.0, 75.7), (5e3, 76000.0, 77.3)]


@pytest.mark.parametrize(
    "sep,decimal",
    [(",", "."), (";", "."), (";", ","), ("\t", "."), ("\t", ",")],
    ids=["comma", "semicolon", "semicolon-decimal-comma", "tab", "tab-decimal-comma"],
)
def test_meter_exports_with_semicolons_or_tabs_read_the_same(sep, decimal):
    # the same numbers written as meters export them (a decimal comma where the comma is no separator)
    # read back to the values written; Python's float() of the decimal-point text is the reference
    text = "# exported\n" + sep.join(["frequency_hz", "z_ohm", "phase_deg"]) + "\n"
    text += "".join(sep.join(f"{v:g}".replace(".", decimal) for v in row) + "\n" for row in ROWS)
    m = parse_measurement(text, source="meter.csv")
    np.testing.assert_array_equal(m.frequency_hz, [r[0] for r in ROWS])
    np.testing.assert_array_equal(m.magnitude_ohm, [r[1] for r in ROWS])
    np.testing.assert_array_equal(m.phase_deg, [r[2] for r in ROWS])


@pytest.mark.parametrize("line_end, pad", [("\t", ""), ("", "\t"), ("", " ")], ids=["trailing-tab", "tab-aligned", "space-aligned"])
def test_a_comma_file_with_tabs_for_alignment_stays_a_comma_file(line_end, pad):
    # whitespace around a cell is layout, not a separator: the same numbers read back
    text = f",{pad}".join(["frequency_hz", "z_ohm", "phase_deg"]) + line_end + "\n"
    text += "".join(f",{pad}".join(f"{v:g}" for v in row) + line_end + "\n" for row in ROWS)
    m = parse_measurement(text, source="meter.csv")
    np.testing.assert_array_equal(m.frequency_hz, [r[0] for r in ROWS])
    np.testing.assert_array_equal(m.phase_deg, [r[2] for r in ROWS])


@pytest.mark.parametrize("sep", ["|", " "])
def test_other_separators_are_refused_naming_the_separator(sep):
    text = sep.join(["frequency_hz", "z_ohm", "phase_deg"]) + "\n" + "".join(sep.join(f"{v:g}" for v in row) + "\n" for row in ROWS)
    with pytest.raises(InputError) as e:
        parse_measurement(text, source="meter.csv")
    msg = str(e.value)
    assert "\n" not in msg and msg.startswith("meter.csv: the header") and "is not split cleanly by one of ',', ';' or tab" in msg


# --- wording --------------------------------------------------------------------------


def test_one_small_part_is_named_and_a_ladder_without_sections_says_so():
    # slipway-magnet-blades: coil_a's only small part is coil_b's magnet; its ladder has no R∥L sections
    res = invoke("coil", ROOT / "models" / "slipway-magnet-blades.toml")
    assert res.exit_code == 0, res.output
    assert "1 others" not in res.output and "coil_b magnet +" in res.output
    assert "alone, no R∥L sections" in res.output and "+ 0 R∥L" not in res.output


def test_an_aim_file_given_as_a_design_is_named():
    path = ROOT / "models" / "fits" / "brighter-reference.toml"
    res = invoke("coil", path)
    assert res.exit_code == 1 and res.output.count("\n") == 1
    assert "an aim file for render fit" in res.output and "not a design" in res.output
