"""Coil, load capacitor and op-amp slips: warnings with the likely prefix, hints in refusals, a weak pluck.

References: a coil and the capacitance across it resonate at f = 1/(2π√(LC))
(any circuit text, e.g. Horowitz & Hill, The Art of Electronics, 3rd ed.,
2015, §1.7.14); an inverting stage's closed-loop corner is the op-amp's
gain-bandwidth over its noise gain, f = f_t / (1 + R_f/R_in) (Sedra & Smith,
Microelectronic Circuits, 7th ed., 2015, §2.8.2; section numbers from memory).
SI prefixes from the SI Brochure, 9th ed., 2019, Table 7. The usual ranges and
floors are rules of thumb (common practice, no source) or recalled (from
memory), as render.usual marks them.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from render.design import load_design, load_designs
from render.errors import InputError
from render.plausible import design_warnings
from render.usual import CLOSED_LOOP_CORNER_MIN_HZ, LOADED_RESONANCE_MIN_HZ

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
L_COIL, C_COIL, LOAD_C = 0.35, 40e-12, 3.9e-9  # the reference design's coil_a and input_a.load_c


def load_variant(tmp_path, old, new):
    text = REF.read_text()
    assert old in text
    path = tmp_path / "variant.toml"
    path.write_text(text.replace(old, new, 1))
    (design,), _ = load_designs([path])  # a warning, never a refusal: the design loads
    return design


def resonance_hz(inductance, capacitance):
    """f = 1/(2π√(LC)), Horowitz & Hill §1.7.14."""
    return 1 / (2 * math.pi * math.sqrt(inductance * capacitance))


def test_the_reference_coils_resonate_inside_the_usual_place():
    # 350 mH with 40 pF + 3.9 nF: 4.29 kHz, above the 2 kHz floor (common practice, no source): no warning
    assert resonance_hz(L_COIL, C_COIL + LOAD_C) == pytest.approx(4286, abs=1) and resonance_hz(L_COIL, C_COIL + LOAD_C) > LOADED_RESONANCE_MIN_HZ
    assert design_warnings(load_design(REF)) == ()


def test_a_load_capacitor_in_microfarads_warns_with_the_resonance_and_the_likely_prefix(tmp_path):
    d = load_variant(tmp_path, 'load_c = "3n9"   # with', 'load_c = "3.9u"   # with')
    f0 = resonance_hz(L_COIL, C_COIL + 3.9e-6)  # 136 Hz
    assert f"{f0:.0f}" == "136"
    assert design_warnings(d) == (
        f"[input_a] load_c=3.9 µF: the coil's resonance with its load 1/(2π·√(L·(C + load_c))) is {f0:.0f} Hz, inside the band;"
        ' it normally lies above 2000 Hz (common practice, no source); did you mean "3.9n"?',
    )
    assert resonance_hz(L_COIL, C_COIL + 3.9e-9) >= LOADED_RESONANCE_MIN_HZ  # the fix puts it back


def test_a_winding_capacitance_in_nanofarads_blames_the_coil_not_the_load(tmp_path):
    d = load_variant(tmp_path, 'capacitance = "40pF"   # winding', 'capacitance = "40nF"   # winding')
    f0 = resonance_hz(L_COIL, 40e-9 + LOAD_C)  # 1.28 kHz
    assert design_warnings(d) == (
        f"[coil_a] capacitance=40 nF: the coil's resonance with its load 1/(2π·√(L·(C + load_c))) is {f0 / 1e3:.3g} kHz, inside the band;"
        " it normally lies above 2000 Hz (common practice, no source), and capacitance is outside its usual range for pickup coils"
        ' (10 pF to 1 nF, from memory); did you mean "40p"?',
    )
    assert f"{f0 / 1e3:.3g}" == "1.28"


def test_a_coil_resistance_in_kilohms_warns_with_the_range_render_coil_fit_uses(tmp_path):
    # one range for the design reader and render coil fit (render.runs.coil reads render.usual's)
    d = load_variant(tmp_path, 'resistance = "520R"   # DC', 'resistance = "520k"   # DC')
    assert design_warnings(d) == ('[coil_a] resistance=520 kΩ: outside the usual range for pickup coils (10 Ω to 100 kΩ, from memory); did you mean "520R"?',)


def test_a_core_loss_resistance_in_ohms_warns(tmp_path):
    d = load_variant(tmp_path, 'eddy_resistance = "220k"   # core', 'eddy_resistance = "220"   # core')
    assert design_warnings(d) == ('[coil_a] eddy_resistance=220 Ω: outside the usual range for pickup coils (1 kΩ to 100 MΩ, from memory); did you mean "220k"?',)


def test_a_gain_bandwidth_in_kilohertz_puts_the_closed_loop_corner_in_the_band(tmp_path):
    d = load_variant(tmp_path, 'gbw = "3MHz"', 'gbw = "3kHz"')
    corner = 3e3 / (1 + 110e3 / 22e3)  # f_t / (1 + R_f/R_in), Sedra & Smith §2.8.2: 500 Hz
    assert corner == pytest.approx(500.0)
    assert design_warnings(d) == (
        f"[supply] gbw=3 kHz: the closed-loop corner gbw / (1 + [feedback] r / [input_a] series_r) is {corner:.0f} Hz, inside the band;"
        ' it normally lies above 20 kHz (common practice, no source); did you mean "3M"?',
    )
    assert 3e6 / (1 + 110e3 / 22e3) >= CLOSED_LOOP_CORNER_MIN_HZ  # the fix: 500 kHz


def test_a_slow_op_amp_is_not_blamed_for_an_odd_gain(tmp_path):
    # 3 MHz over a noise gain of 1 + 110k/22 = 5001 is 600 Hz, but the gain's own line names series_r
    d = load_variant(tmp_path, 'series_r = "22k"   # into the inverting input', 'series_r = "22"')
    assert not any(w.startswith("[supply] gbw") for w in design_warnings(d))


@pytest.mark.parametrize(
    "old,new,hint",
    [
        ('resistance = "520R"   # DC', 'resistance = "520M"   # DC', '; did you mean "520R"?'),  # 520 kΩ is legal, 520 Ω is a coil's
        ('resistance = "520R"   # DC', 'resistance = "520m"   # DC', '; did you mean "520R"?'),  # mega would be refused too
        ('battery = "9V"', 'battery = "9mV"', '; did you mean "9V"?'),
        ('inductance = "350mH"   # winding', 'inductance = "350H"   # winding', '; did you mean "350mH"?'),  # a prefix left out
        ('position = "38mm"', 'position = "38m"', '; did you mean "38mm"?'),  # "m" here is the metre, not milli
    ],
)
def test_a_value_refused_for_its_range_names_the_prefix_that_brings_it_in(tmp_path, old, new, hint):
    text = REF.read_text()
    assert old in text
    path = tmp_path / "refused.toml"
    path.write_text(text.replace(old, new, 1))
    with pytest.raises(InputError) as e:
        load_designs([path])
    msg = str(e.value)
    assert "expected a plausible value" in msg and msg.endswith(hint) and "\n" not in msg


def test_no_prefix_hint_where_none_brings_the_value_in(tmp_path):
    path = tmp_path / "low.toml"
    path.write_text(REF.read_text().replace('battery = "9V"', 'battery = "1.4V"', 1))  # 1.4 mV and 1.4 kV are no better
    with pytest.raises(InputError) as e:
        load_designs([path])
    assert str(e.value).endswith("at least 1.5 V and at most 60 V")


@pytest.mark.parametrize(
    "strength_m,ending",
    [
        (22e-9, "; give it in mm, like 1mm"),  # "22n": 22 µm is too weak and 22 mm beyond playing
        (2e-9, "; did you mean 2mm?"),  # "2n": the same digits in mm are a played pluck
        (40e-6, ""),  # "0.04mm": meant, and only weak
    ],
)
def test_a_pluck_far_below_playing_warns(strength_m, ending):
    from render.runs.bias import PLAYED_STRENGTH_MIN_M, check_strength

    assert PLAYED_STRENGTH_MIN_M == 5e-5  # 0.05 mm (common practice, no source)
    (w,) = check_strength(strength_m, Path("phrase.toml"))
    assert w.startswith("--strength: a pluck of ") and "is far below playing (at least about 0.05 mm, common practice, no source)" in w
    assert w.endswith("rendering it anyway" + ending)
    assert check_strength(PLAYED_STRENGTH_MIN_M, Path("phrase.toml")) == ()


def test_clips_warns_of_a_nanometre_pluck_and_renders(tmp_path):
    from click.testing import CliRunner

    from render.cli import main

    phrase = ROOT / "dry_signals" / "default.toml"
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(phrase), "--strength", "22n", "--seconds", "0.3", "--no-plots", "--out", str(tmp_path / "run")])
    assert res.exit_code == 0, res.output
    lines = [x for x in res.stderr.splitlines() if "--strength" in x]
    assert lines == ["warning: --strength: a pluck of 22 nm is far below playing (at least about 0.05 mm, common practice, no source); rendering it anyway; give it in mm, like 1mm"]


def test_the_readme_shows_the_load_capacitor_warning_as_check_prints_it(tmp_path):
    from click.testing import CliRunner

    from render.cli import main

    text = REF.read_text().replace('load_c = "3n9"   # with', 'load_c = "3.9u"   # with', 1)
    (tmp_path / "studio-reference.toml").write_text(text)
    res = CliRunner().invoke(main, ["check", str(tmp_path / "studio-reference.toml")])
    assert res.exit_code == 0
    (line,) = [x for x in res.stderr.splitlines() if x.startswith("warning:")]
    assert f"    {line}\n" in (ROOT / "README.md").read_text()
