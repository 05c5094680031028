"""A design whose measured coil's sweep starts above the coil's corner: R_dc and L not determined, said on loading.

The sweep is the shipped synthetic example (R_dc 4100 Ω, 2.2 H at DC: its header; corner
R/(2πL) ≈ 297 Hz, where the closed-form phase is 45°, tests/impedance/test_measured_determined.py)
started at 2 kHz, where its phase is over 45°: from there the fit's R_dc is more than 10 % off
(4.589 kΩ), so render check and render clips must say so, with the fix.
"""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from render.cli import main
from render.design import load_design
from render.plausible import design_warnings
from render.runs.coil import measured_note

ROOT = Path(__file__).resolve().parents[2]
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
SHIPPED = "coils/harbour-blade-coil.synthetic.csv"
TRUE_R = 4100.0  # the file's header


def from_file(path: Path, lo_hz: float) -> Path:
    lines = CSV.read_text(encoding="utf-8").splitlines()
    keep = [x for x in lines if x.startswith("#") or x.startswith("frequency") or float(x.split(",")[0]) >= lo_hz * (1 - 1e-6)]
    path.write_text("\n".join(keep) + "\n", encoding="utf-8")
    return path


def _design(tmp_path: Path, csv_name: str, *, held_r: str | None = None) -> Path:
    text = (ROOT / "models" / "measured-blade.toml").read_text(encoding="utf-8").replace(SHIPPED, csv_name)
    if held_r is not None:
        old = f'measured = "{csv_name}"   # relative to this file'
        assert old in text
        text = text.replace(old, f'measured = "{csv_name}"\nresistance = "{held_r}"', 1)
    path = tmp_path / "m.toml"
    path.write_text(text, encoding="utf-8")
    return path


def _dc_lines(lines):
    return [w for w in lines if "not determined" in w and ("R_dc" in w or "L not" in w)]


def test_check_and_clips_say_r_and_l_are_not_determined_in_one_line_with_the_fix(tmp_path):
    from_file(tmp_path / "from2k.csv", 2e3)
    d = load_design(_design(tmp_path, "from2k.csv"))
    assert abs(d.coil_a.resistance / TRUE_R - 1) > 0.1  # the guess the warning is about (4.589 kΩ, as README.md's example from 2 kHz)
    warns = _dc_lines(design_warnings(d))
    assert len(warns) == 1, warns
    w = warns[0]
    assert w.startswith("[coil_a] and [coil_b] measured='from2k.csv': R_dc and L not determined: the sweep starts at 2.15 kHz, where the phase is")  # the file's first point from 2 kHz
    assert "start it where the phase is under 45°" in w and 'add resistance = "…" beside measured' in w and "--resistance" not in w
    res = CliRunner().invoke(main, ["check", str(_design(tmp_path, "from2k.csv"))])
    assert res.exit_code == 0, res.output
    assert len(_dc_lines(x for x in res.output.splitlines() if x.startswith("warning: "))) == 1
    res = CliRunner().invoke(main, ["clips", str(_design(tmp_path, "from2k.csv")), "--seconds", "1", "--no-plots", "--out", str(tmp_path / "out")])
    assert res.exit_code == 0, res.output
    assert len(_dc_lines(x for x in res.output.splitlines() if x.startswith("warning: "))) == 1


def test_resistance_beside_measured_holds_r_dc_and_leaves_only_l_in_doubt(tmp_path):
    from_file(tmp_path / "from2k.csv", 2e3)
    d = load_design(_design(tmp_path, "from2k.csv", held_r="4.1k"))
    assert d.coil_a.resistance == TRUE_R and d.coil_a.impedance_from.resistance_given
    warns = _dc_lines(design_warnings(d))
    # coil_a: R_dc given, L still extrapolated from 2 kHz; coil_b: both, as before
    assert [w.split(": ", 1)[0] for w in warns] == ["[coil_a] measured='from2k.csv'", "[coil_b] measured='from2k.csv'"]
    assert ": L not determined: the sweep starts at 2.15 kHz" in warns[0] and "beside measured" not in warns[0]
    assert ": R_dc and L not determined" in warns[1]


def test_a_full_sweep_says_nothing():
    d = load_design(ROOT / "models" / "measured-blade.toml")
    assert _dc_lines(design_warnings(d)) == []


def test_a_written_table_keeps_what_was_held():
    assert measured_note("coil_a", resistance_given=False, capacitance_given=False) == " (in place of resistance, capacitance and [coil_a.ladder])"
    assert measured_note("coil_a", resistance_given=True, capacitance_given=False) == " (in place of capacitance and [coil_a.ladder]; keep resistance beside it to hold R_dc)"
    assert measured_note("coil_a", resistance_given=True, capacitance_given=True) == " (in place of [coil_a.ladder]; keep resistance and capacitance beside it to hold R_dc and C)"
