"""Resistor typos: each resistor's usual range, the likely prefix in the hint, and the stage gain.

The ranges are rules of thumb (common practice, no source), as render.usual marks
them. The corner is the first-order RC corner 1/(2πRC) (Horowitz & Hill, The Art
of Electronics, 3rd ed., 2015, §1.7.1); the stage gain is the inverting amplifier's
-R_f/R_in (Sedra & Smith, Microelectronic Circuits, 7th ed., 2015, eq. 2.5).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from render.design import load_designs
from render.plausible import STAGE_GAIN_RANGE, design_warnings, usual

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"


def warnings_for(tmp_path, old, new):
    text = REF.read_text()
    assert old in text
    path = tmp_path / "variant.toml"
    path.write_text(text.replace(old, new, 1))
    return design_warnings(load_designs([path])[0][0])


def test_every_shipped_design_is_quiet():
    # but for the NdFeB demo's one line on its strings near saturation (test_plausible.py)
    for path in sorted((ROOT / "models").glob("*.toml")):
        (design,), _ = load_designs([path])
        got = design_warnings(design)
        if path.stem == "slipway-magnet-blades":
            assert len(got) == 1 and got[0].startswith("[construction] strings 1, 2, 3, 4, 5 at rest are polarised past half"), got
        else:
            assert got == (), path.name


@pytest.mark.parametrize(("table", "key"), [("input_a", "series_r"), ("input_b", "load_r"), ("input_b", "bias_top"), ("feedback", "r"), ("output", "shunt_r")])
def test_a_resistors_usual_range_is_marked_as_a_rule_of_thumb(table, key):
    # the likely prefix of a bare resistor value is checked with the other parts in test_plausible.py
    assert "common practice, no source" in usual(table, key).origin


def test_a_22_ohm_input_resistor_is_blamed_with_its_fix_and_the_gain(tmp_path):
    ws = warnings_for(tmp_path, 'series_r = "22k"   # into the inverting input', 'series_r = "22"')
    corner = 1 / (2 * math.pi * 22 * 1e-6)  # 7234 Hz: 1/(2π·22 Ω·1 µF), Horowitz & Hill §1.7.1
    gain = 110e3 / 22  # 5000: R_f/R_in, Sedra & Smith eq. 2.5
    assert len(ws) == 2, ws
    first, second = ws
    assert first.startswith("[input_a] series_r=22 Ω: the input coupling corner") and f"{corner / 1e3:.3g} kHz" in first
    assert first.endswith('did you mean "22k"?') and "series_c" not in first.split(":")[0]
    assert f"a stage gain of about {gain:.0f} (+{20 * math.log10(gain):.0f} dB)" in second and "look at [input_a] series_r first" in second


def test_a_feedback_resistor_in_megohms_blames_the_resistor(tmp_path):
    ws = warnings_for(tmp_path, 'r = "110k"   # gain ≈ 110k/22k = 5 per coil', 'r = "110M"')
    corner = 1 / (2 * math.pi * 110e6 * 47e-12)  # 30.8 Hz, Horowitz & Hill §1.7.1
    assert ws[0].startswith("[feedback] r=110 MΩ: the feedback corner") and f"{corner:.3g} Hz" in ws[0] and ws[0].endswith('did you mean "110k"?')
    assert any("stage gain of about 5000" in w for w in ws)


def test_divider_resistors_out_of_range_warn_without_a_corner(tmp_path):
    text = REF.read_text().replace('bias_top = "220k"', 'bias_top = "220"').replace('bias_bottom = "220k"', 'bias_bottom = "220"')
    (tmp_path / "low.toml").write_text(text)
    ws = design_warnings(load_designs([tmp_path / "low.toml"])[0][0])
    assert ws == tuple(f'[input_b] {k}=220 Ω: outside the usual range (10 kΩ to 10 MΩ, common practice, no source); did you mean "220k"?' for k in ("bias_top", "bias_bottom"))


def test_one_divider_resistor_off_by_a_prefix_is_refused_with_the_fix(tmp_path):
    from render.errors import InputError

    with pytest.raises(InputError) as exc:
        warnings_for(tmp_path, 'bias_top = "220k"   # battery + to the non-inverting input', 'bias_top = "220"')
    assert str(exc.value).endswith('outside the output\'s linear window 1.5..7.5 V; did you mean bias_top="220k"?')


def test_a_low_gain_warns_with_no_resistor_blamed(tmp_path):
    (w,) = warnings_for(tmp_path, 'r = "110k"   # gain ≈ 110k/22k = 5 per coil', 'r = "11k"')
    assert w.startswith("[feedback] r / [input_a] series_r = 11 kΩ / 22 kΩ: a stage gain of about 0.5 (-6 dB)") and "look at" not in w
    assert STAGE_GAIN_RANGE == (1.0, 100.0)  # 0 to +40 dB (common practice, no source)
