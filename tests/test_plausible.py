"""Legal but unlikely values: warnings, the likely prefix in hints, and common ways of writing units.

References: the corners are first-order RC corners 1/(2πRC) (any circuit
text, e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., 2015, §1.7.1);
SI prefixes from the SI Brochure, 9th ed., 2019, Table 7; letter codes from
IEC 60062. The usual ranges themselves are rules of thumb (common practice,
no source) or recalled (from memory), as render.plausible marks them.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner

from render import units as U
from render.design import load_designs
from render.errors import InputError
from render.plausible import design_warnings, likely_prefix

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"


def variant(tmp_path, old, new, name="variant.toml"):
    text = REF.read_text()
    assert old in text
    path = tmp_path / name
    path.write_text(text.replace(old, new, 1))
    return path


@pytest.mark.parametrize(
    "table,key,number,want",
    [
        ("coil_a", "inductance", 120, "120m"),  # 120 H is no pickup coil; 120 mH is
        ("feedback", "c", 22, "22p"),
        ("input_a", "load_c", 3.9, "3.9n"),
        ("output", "coupling_c", 10, "10u"),
        ("rig", "cable_capacitance", 100, "100p"),
        ("input_a", "series_r", 22, "22k"),
        ("input_b", "load_r", 470, "470k"),
        ("input_b", "bias_top", 220, "220k"),
        ("feedback", "r", 110, "110k"),
        ("output", "shunt_r", 100, "100k"),
    ],
)
def test_likely_prefix_puts_a_bare_number_in_its_parts_usual_range(table, key, number, want):
    assert likely_prefix(table, key, number) == want


@pytest.mark.parametrize(
    "old,new,fix",
    [
        ('inductance = "350mH"   # winding inductance', "inductance = 120", '"120m"'),
        ('c = "47p"   # rolls off far above the band', "c = 22", '"22p"'),
        ('c = "47p"   # rolls off far above the band', 'c = "22"', '"22p"'),
    ],
)
def test_a_refused_bare_number_hints_the_likely_prefix(tmp_path, old, new, fix):
    with pytest.raises(InputError) as e:
        load_designs([variant(tmp_path, old, new)])
    assert f"write e.g. {fix}" in str(e.value)


def test_a_feedback_capacitor_in_nanofarads_warns_with_the_corner_and_the_likely_prefix(tmp_path):
    d = load_designs([variant(tmp_path, 'c = "47p"   # rolls off far above the band', 'c = "22n"')])[0][0]
    (w,) = design_warnings(d)
    corner = 1 / (2 * math.pi * 110e3 * 22e-9)  # 65.8 Hz
    assert w.startswith("[feedback] c=22 nF") and f"{corner:.3g} Hz" in w and w.endswith('did you mean "22p"?')
    assert "common practice, no source" in w


def test_coupling_corners_inside_the_band_warn(tmp_path):
    p = variant(tmp_path, 'series_c = "1u"   # bass cut: 1/(2π·22k·1µ) = 7 Hz', 'series_c = "10n"')
    (w,) = design_warnings(load_designs([p])[0][0])
    assert w.startswith("[input_a] series_c=10 nF") and f"{1 / (2 * math.pi * 22e3 * 10e-9):.3g} Hz" in w and '"10u"' in w
    # 100n: 72.3 Hz; its thousandfold slip 100u would put the corner at 0.072 Hz, so the part that reaches 40 Hz
    # is named instead: 1/(2π·22k·40 Hz) = 181 nF
    p = variant(tmp_path, 'series_c = "1u"   # bass cut: 1/(2π·22k·1µ) = 7 Hz', 'series_c = "100n"', "c100n.toml")
    (w,) = design_warnings(load_designs([p])[0][0])
    assert f"{1 / (2 * math.pi * 22e3 * 100e-9):.3g} Hz" in w and "did you mean" not in w
    assert w.endswith(f"a series_c of {1e9 / (2 * math.pi * 22e3 * 40):.3g} nF or more puts it at 40 Hz or below"), w
    p = variant(tmp_path, 'coupling_c = "10u"   # blocks the DC bias', 'coupling_c = "100n"', "out.toml")
    (w,) = design_warnings(load_designs([p])[0][0])
    # into series_r + (shunt_r ‖ volume pot): 220 Ω + (100k ‖ 25k) = 20.22 kΩ
    assert w.startswith("[output] coupling_c=100 nF") and f"{1 / (2 * math.pi * (220 + 20e3) * 100e-9):.3g} Hz" in w and '"100u"' in w


@pytest.mark.parametrize(
    "c,place",
    [
        ("22n", "inside the band"),  # 1/(2π·110k·22n) = 65.8 Hz
        ("47u", "below the band"),  # 1/(2π·110k·47µ) = 30.8 mHz: the stage integrates across the whole band
    ],
)
def test_a_corner_is_placed_against_the_band_in_words(tmp_path, c, place):
    # where the corner lies against 20 Hz-20 kHz (the usual band of hearing, common practice, no source)
    d = load_designs([variant(tmp_path, 'c = "47p"   # rolls off far above the band', f'c = "{c}"')])[0][0]
    (w,) = design_warnings(d)
    corner = 1 / (2 * math.pi * 110e3 * U.parse_quantity(c, U.CAPACITANCE))
    assert f"is {U.format_si(corner, 'Hz')}, {place};" in w
    # an input coupling corner past the band's top: 1/(2π·22k·100p) = 72.3 kHz
    p = variant(tmp_path, 'series_c = "1u"   # bass cut: 1/(2π·22k·1µ) = 7 Hz', 'series_c = "100p"', "hi.toml")
    (w,) = design_warnings(load_designs([p])[0][0])
    assert f"is {U.format_si(1 / (2 * math.pi * 22e3 * 100e-12), 'Hz')}, above the band;" in w


def test_an_unusual_coil_inductance_warns(tmp_path):
    d = load_designs([variant(tmp_path, 'inductance = "350mH"   # winding inductance', 'inductance = "50H"')])[0][0]
    (w,) = design_warnings(d)
    assert w.startswith("[coil_a] inductance=50 H") and "from memory" in w and '"50m"' in w


def test_the_shipped_designs_are_plausible():
    # Every shipped design's values are usual; the one line left is a fact of the NdFeB demo: its strings
    # at rest are polarised past half their steel's saturation (README, "The strings' saturation"), where a
    # stronger magnet adds little output, which the warning says rather than hides.
    designs, _ = load_designs(sorted((ROOT / "models").glob("*.toml")))
    got = {d.name: design_warnings(d) for d in designs}
    (note,) = got.pop("slipway-magnet-blades")
    assert note.startswith("[construction] strings 1, 2, 3, 4, 5 at rest are polarised past half the steel's saturation: up to 1.39 T of 2 T")
    assert got == {d.name: () for d in designs if d.name != "slipway-magnet-blades"}


@pytest.mark.parametrize(
    "text,kind,value",
    [
        ("2.2uf", U.CAPACITANCE, 2.2e-6),
        ("22nf", U.CAPACITANCE, 22e-9),
        ("100pf", U.CAPACITANCE, 100e-12),
        ("2.2µf", U.CAPACITANCE, 2.2e-6),
        ("120mh", U.INDUCTANCE, 0.12),
        ("9v", U.VOLTAGE, 9.0),
        ("1khz", U.FREQUENCY, 1000.0),
        ("22KOhm", U.RESISTANCE, 22e3),
        ("22K", U.RESISTANCE, 22e3),
        ("4k7", U.RESISTANCE, 4.7e3),
        ("4K7", U.RESISTANCE, 4.7e3),
        ("1µfd", U.CAPACITANCE, 1e-6),  # "fd" for farad after the SI's micro: unambiguous
        ("10ufd", U.CAPACITANCE, 10e-6),
    ],
)
def test_common_habits_are_read(text, kind, value):
    assert U.parse_quantity(text, kind) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize(
    "text,kind,fix",
    [
        ("2.2mf", U.CAPACITANCE, '"2.2uF" for microfarads or "2.2mF"'),
        ("10mfd", U.CAPACITANCE, '"10uF"'),
        ("2.2UF", U.CAPACITANCE, '"2.2uF"'),
        ("4.7NF", U.CAPACITANCE, '"4.7nF"'),
        ("3mhz", U.FREQUENCY, '"3MHz"'),
        ("2.2Ufd", U.CAPACITANCE, '"2.2uF"'),
        ("47PF", U.CAPACITANCE, '"47pF"'),
        # a prefix in the wrong case with no unit: the SI's prefixes are case-sensitive (SI Brochure, 9th ed., §3)
        ("22N", U.CAPACITANCE, 'did you mean "22n"?'),
        ("4.7U", U.CAPACITANCE, 'did you mean "4.7u"?'),
        ("100P", U.CAPACITANCE, 'did you mean "100p"?'),
        ("120N", U.INDUCTANCE, 'did you mean "120n"?'),
    ],
)
def test_ambiguous_habits_are_refused_with_the_fix(text, kind, fix):
    with pytest.raises(U.QuantityError) as e:
        U.parse_quantity(text, kind)
    assert fix in str(e.value)
    assert "not an SI prefix" not in str(e.value)  # P is peta in the SI (SI Brochure, 9th ed., table 7); it is refused as a slip of case


def test_warnings_reach_stderr_and_the_json_of_check_and_clips(tmp_path):
    from render.cli import main

    p = variant(tmp_path, 'c = "47p"   # rolls off far above the band', 'c = "22n"')
    res = CliRunner().invoke(main, ["check", str(p), "--json", str(tmp_path / "c.json")])
    assert res.exit_code == 0
    lines = [x for x in res.stderr.splitlines() if x.startswith("warning:")]
    assert len(lines) == 1 and '"22p"' in lines[0]
    assert json.loads((tmp_path / "c.json").read_text())["designs"][0]["warnings"] == [lines[0].split(": ", 2)[2]]
    res = CliRunner().invoke(main, ["clips", str(p), "--seconds", "0.5", "--no-plots", "--out", str(tmp_path / "run")])
    assert res.exit_code == 0 and '"22p"' in res.stderr
    assert any('"22p"' in w for w in json.loads((tmp_path / "run" / "variant.json").read_text())["warnings"])


def test_a_derived_coil_far_from_a_wound_fill_warns_once_per_coil():
    # 1200 turns of AWG 42 (0.0635 mm bare, ASTM B258's gauge formula; insulated 1.127 × bare,
    # render.design.coil_impedance) in a 9 mm × 5 mm section: N·π·d²/4 / (9 mm · 5 mm) = 0.107,
    # far below the 40–85 % of wound coils (common practice, no source); AWG 35 (0.1426 mm bare)
    # fills 0.54 and passes.
    from magnetics.reference import require_material_response

    require_material_response()  # skips with the reason on a user's machine, fails under CI=true
    from render.design import parse_design
    from render.io.toml import read_toml
    from render.plausible import fill_warnings

    data, _ = read_toml(Path(__file__).resolve().parents[1] / "models" / "slipway-magnet-blades.toml")
    assert fill_warnings(parse_design(data, source="x.toml")) == []
    for name in ("coil_a", "coil_b"):
        data[name]["wire"] = 42
    d = parse_design(data, source="x.toml")
    warns = fill_warnings(d)
    assert len(warns) == 2 and all("\n" not in w for w in warns)
    outer = 0.0635e-3 * 1.127
    expected = 1200 * math.pi * outer**2 / 4 / (9e-3 * 5e-3)
    assert f"fills {expected:.0%}" in warns[0] and "40%–85%" in warns[0] and "common practice, no source" in warns[0]
    assert any(w in design_warnings(d) for w in warns)


def test_reversed_coil_warns_that_the_coils_signals_oppose(tmp_path):
    # coil_b at +1 into the difference stage adds its EMF with coil_a's sign flipped: the strings cancel
    # (superposition: the output is the sum of each coil's contribution, render.circuit.engine)
    (d,), _ = load_designs([variant(tmp_path, "[coil_b]", "[coil_b]\nsignal_polarity = 1")])
    found = [w for w in design_warnings(d) if "oppose" in w]
    assert len(found) == 1 and found[0].startswith("[coil_b] signal_polarity=+1") and "more than 20 dB" in found[0]
    assert not [w for w in design_warnings(load_designs([REF])[0][0]) if "oppose" in w]


def test_half_strength_reversed_coil_stays_under_the_opposition_criterion(tmp_path):
    # superposition with the two matched paths of the reference: |s - s/2| / |s + s/2| = 1/3, 9.54 dB (closed form),
    # under the 20 dB criterion
    import numpy as np

    from render.circuit.engine import responses
    from render.circuit.params import from_designs

    text = REF.read_text()
    half = text.replace("[coil_b]", "[coil_b]\nsignal_polarity = 1", 1)
    (d,), _ = load_designs([variant(tmp_path, text, half)])
    from dataclasses import replace

    d = replace(d, coil_b=replace(d.coil_b, sensitivity=d.coil_b.sensitivity / 2))
    flipped = replace(d, coil_b=replace(d.coil_b, signal_polarity=-1))
    own, other = np.abs(responses(from_designs([d, flipped])).velocity()([1000.0])[:, 0])
    assert 20 * math.log10(other / own) == pytest.approx(20 * math.log10(3), abs=0.1)
    assert not [w for w in design_warnings(d) if "oppose" in w]
