"""`render check` and `render response` through click's CliRunner: exit codes and message text."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def run(*args, cwd=None):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def variant(tmp_path, old, new, name="variant.toml"):
    text = REF.read_text()
    assert old in text, old
    path = tmp_path / name
    path.write_text(text.replace(old, new, 1))
    return path


def test_check_all_shipped_models():
    res = run("check", *sorted((ROOT / "models").glob("*.toml")))
    assert res.exit_code == 0, res.output
    assert res.output.count("bias point") == len(list((ROOT / "models").glob("*.toml")))


def test_check_json_has_contract_keys(tmp_path):
    out = tmp_path / "c.json"
    res = run("check", REF, "--json", out)
    assert res.exit_code == 0, res.output
    rec = json.loads(out.read_text())["designs"][0]
    for key in ("file", "design", "bias_v", "headroom_up_v", "headroom_down_v", "coil_a", "coil_b"):
        assert key in rec
    assert set(rec["coil_a"]) >= {"inductance_h", "resistance_ohm", "capacitance_f"}
    # equal bias resistors put the bias at half the battery (common practice, no source)
    assert rec["bias_v"] == pytest.approx(4.5, abs=1e-12)


def test_check_refuses_to_overwrite(tmp_path):
    out = tmp_path / "c.json"
    out.write_text("keep me")
    res = run("check", REF, "--json", out)
    assert res.exit_code == 1
    assert "exists; pass --overwrite" in res.output
    assert out.read_text() == "keep me"
    assert run("check", REF, "--json", out, "--overwrite").exit_code == 0
    assert json.loads(out.read_text())["designs"]


BAD = [
    # (old text, new text, expected message fragment)
    ('inductance = "350mH"', 'inductance = "350mF"', "unit 'F' does not fit an inductance"),
    ('inductance = "350mH"', 'inductance = "lots"', "cannot read 'lots' as an inductance"),
    ('inductance = "350mH"', "inductance = -0.35", "must not be negative"),
    ('resistance = "520R"', "resistance = 0", "expected a plausible value"),
    ('series_r = "22k"', 'series_r = "22m"', '"m" is milli; for mega write "22M"'),
    ('series_c = "1u"', "series_c = 3.3", "plain numbers are in SI units"),
    ('inductance = "350mH"', 'inductanse = "350mH"', "did you mean 'inductance'?"),
    ("[feedback]", "[fedback]", "did you mean 'feedback'?"),
    ('r = "110k"', 'q = "110k"', "unknown key 'q'"),
    ('bias_top = "220k"   # battery + to the non-inverting input\n', "", "missing required key 'bias_top'"),
    ('battery = "9V"', 'battery = "3V"', "must be below battery=3 V"),
    ('bias_top = "220k"', 'bias_top = "4M7"', "outside the output's linear window"),
    ('eddy_resistance = "220k"', "eddy_coupling = 0.3", "eddy_coupling and eddy_corner go together"),
    ('eddy_resistance = "220k"', "signal_polarity = 2", "a polarity must be +1 or -1"),
    # the hint keeps the digits written: "1k" is "1M" (bias 9 V · 220k / 1.22M = 1.62 V, inside 1.5..7.5 V), not "1000k"
    ('bias_top = "220k"', 'bias_top = "1k"', 'did you mean bias_top="1M"?'),
    ('eddy_resistance = "220k"', 'eddy_coupling = 0\neddy_corner = "2k"', "0 is no secondary: leave both eddy_coupling and eddy_corner out"),
    ('load_c = "3n9"', "load_c = 0", "0 F is no capacitor: leave load_c out"),
    ('c = "47p"', "c = 0", "0 F is no capacitor: leave c out"),
    # datasheets give slew rates in V/µs; a bare number is V/s (SI)
    ('battery = "9V"', 'battery = "9V"\nslew_rate = 13', 'if the datasheet gives 13 V/µs, write "13V/us"'),
    # 1 G = 1e-4 T (SI Brochure, 9th ed., Table 9, non-SI units): 10 mG = 1 µT
    ("[supply]", '[hum]\nfield = "10mG"\n[supply]', "for '10mG' write \"1uT\""),
    ('aperture = "8mm"', 'aperture = "8mm"\n[coil_a.winding]\nturns = 4000', "missing required key 'wire'"),
    (
        'aperture = "8mm"',
        'aperture = "8mm"\n[coil_a.winding]\nturns = 4000\nwire = 42\nmean_turn = "150mm"\nheight = "10mm"\ndepth = "5mm"\ncore_factor = "steel"',
        "given as well as [coil_a.winding]",
    ),
    (
        'aperture = "8mm"',
        'aperture = "8mm"\n[coil_a.winding]\nturns = 4000\nwire = 12\nmean_turn = "150mm"\nheight = "10mm"\ndepth = "5mm"\ncore_factor = "steel"',
        "an AWG gauge must be from 20 to 60",
    ),
]


@pytest.mark.parametrize("old,new,fragment", BAD, ids=[b[2][:30] for b in BAD])
def test_bad_design_values_give_one_line(tmp_path, old, new, fragment):
    path = variant(tmp_path, old, new)
    res = run("check", path)
    assert res.exit_code == 1, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert fragment in lines[0], lines[0]
    assert "Traceback" not in res.output
    assert str(path) in lines[0]


def test_missing_table(tmp_path):
    text = REF.read_text()
    start = text.index("[output]")
    end = text.index("[supply]")
    path = tmp_path / "no-output.toml"
    path.write_text(text[:start] + text[end:])
    res = run("check", path)
    assert res.exit_code == 1
    assert "missing table [output]" in res.output


@pytest.mark.parametrize(
    "content,fragment",
    [
        (b"this is = = not toml", "not valid TOML"),
        (b"\xff\xfe\x00binary", "not a UTF-8 text file"),
        (b"", "missing table [coil_a]"),
    ],
)
def test_unreadable_files(tmp_path, content, fragment):
    path = tmp_path / "bad.toml"
    path.write_bytes(content)
    res = run("check", path)
    assert res.exit_code == 1
    assert fragment in res.output


def test_missing_file_and_folder(tmp_path):
    res = run("check", tmp_path / "nowhere.toml")
    assert res.exit_code == 1 and "no such file" in res.output
    res = run("check", tmp_path)
    assert res.exit_code == 1 and len(res.output.strip().splitlines()) == 1, res.output


def test_rig_file_overrides_design_rig(tmp_path):
    # Thevenin's theorem (closed form): the level at the amp input is V_th · Z_L / (Z_out + Z_L), Z_out the pickup's
    # output impedance at the jack and Z_L the rig's load there (tone pot + tone cap ∥ volume pot ∥ amp_r ∥ cable + amp C,
    # volume and tone at 1); a rig with amp_r = 10 kΩ moves the 1 kHz level by the ratio of the two dividers
    import hashlib
    import math

    from render.circuit.engine import responses
    from render.circuit.params import from_designs
    from render.design import load_designs

    rig = tmp_path / "rig.toml"
    rig.write_text('[rig]\ncable_length = "12m"\namp_r = "10k"\n[hum]\nmains = "60Hz"\n')
    out, own = tmp_path / "c.json", tmp_path / "own.json"
    assert run("check", REF, "--rig", rig, "--json", out).exit_code == 0
    assert run("check", REF, "--json", own).exit_code == 0
    record, before = json.loads(out.read_text()), json.loads(own.read_text())
    assert record["rig"] == {"file": str(rig), "sha256": hashlib.sha256(rig.read_bytes()).hexdigest()}
    assert record["designs"][0]["mains_hz"] == 60.0 and before["designs"][0]["mains_hz"] == 50.0
    assert before["rig"]["file"] is None
    (design,), _ = load_designs([REF])
    z_out = complex(responses(from_designs([design])).z_out([1000.0])[0, 0])
    w = 2 * math.pi * 1000.0

    def divider(amp_r, cable_m):
        r = design.rig
        y = 1 / r.volume_pot + 1 / amp_r + 1j * w * (cable_m * r.cable_capacitance + r.amp_c) + 1 / (r.tone_pot + 1 / (1j * w * r.tone_cap))
        return abs((1 / y) / (z_out + 1 / y))

    expected = 20 * math.log10(divider(10e3, 12.0) / divider(design.rig.amp_r, design.rig.cable_length))
    change = record["designs"][0]["figures"]["level_1k_db"] - before["designs"][0]["figures"]["level_1k_db"]
    assert expected < -0.1 and change == pytest.approx(expected, abs=1e-6)
    bad = tmp_path / "badrig.toml"
    bad.write_text('[rig]\ncable_lenght = "12m"\n')
    res = run("check", REF, "--rig", bad)
    assert res.exit_code == 1 and "did you mean 'cable_length'?" in res.output


def test_a_design_file_given_as_the_rig_is_named_as_such():
    res = run("check", REF, "--rig", ROOT / "models" / "odd-pair.toml")
    assert res.exit_code == 1 and "looks like a design file (it has a [coil_a] table)" in res.output and "[rig]" in res.output, res.output


def test_response_summary_csv_png(tmp_path):
    csv = tmp_path / "r.csv"
    png = tmp_path / "r.png"
    res = run("response", REF, "--csv", csv, "--png", png, "--points", 50)
    assert res.exit_code == 0, res.output
    assert "resonance peak" in res.output and "output impedance" in res.output
    lines = csv.read_text().splitlines()
    assert lines[0] == "frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg"
    assert len(lines) == 51
    assert float(lines[1].split(",")[0]) == pytest.approx(20.0)
    assert float(lines[-1].split(",")[0]) == pytest.approx(20000.0)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_response_bad_range_and_overwrite(tmp_path):
    res = run("response", REF, "--fmin", 1000, "--fmax", 100)
    assert res.exit_code == 1 and "--fmax=100 must be above --fmin=1000" in res.output
    csv = tmp_path / "r.csv"
    csv.write_text("old")
    png = tmp_path / "r.png"
    res = run("response", REF, "--csv", csv, "--png", png)
    assert res.exit_code == 1 and "exists" in res.output
    assert csv.read_text() == "old" and not png.exists()  # nothing half-written


def test_low_impedance_output_loses_less_treble_into_cable(tmp_path):
    # common practice, no source: a low-impedance output loses less treble
    # into a long cable than the passive reference does; assert the direction.
    rig = tmp_path / "rig.toml"
    rig.write_text('[rig]\ncable_length = "10m"\n')
    res = run("response", REF, "--rig", rig)
    m = re.search(r"cable treble loss ([+-][\d.]+) dB at 5 kHz \(10 m; passive: ([+-][\d.]+) dB\)", res.output)
    assert m, res.output
    active, passive = float(m.group(1)), float(m.group(2))
    print(f"cable loss at 5 kHz, 10 m: active {active:+.2f} dB, passive {passive:+.2f} dB")
    assert abs(active) < abs(passive)


def test_help_lists_commands():
    res = run("--help")
    assert res.exit_code == 0
    for cmd in ("check", "response"):
        assert cmd in res.output


def test_corners_read_with_an_si_prefix_not_an_exponent():
    # the feedback corner 1/(2π·r·c) with r = 110 kΩ, c = 47 pF (closed form): 30.785 kHz
    import math

    res = run("check", REF)
    assert res.exit_code == 0, res.output
    expected = 1 / (2 * math.pi * 110e3 * 47e-12)
    assert f"feedback {expected / 1e3:.4g} kHz" in res.output and "e+0" not in res.output


def test_volume_at_zero_prints_no_signal_not_the_end_stop(tmp_path):
    # rig.volume = 0 is legal; the circuit keeps a 1 mΩ end stop, whose level (about -155 dB) means nothing.
    # "No signal" is decided by the setting, so every level and ratio against the signal is words / null.
    rig = tmp_path / "rig.toml"
    rig.write_text("[rig]\nvolume = 0\n")
    out = tmp_path / "c.json"
    res = run("check", REF, "--rig", rig, "--json", out)
    assert res.exit_code == 0, res.output
    assert "gain at 1 kHz     no signal: the volume is at 0" in res.output
    assert "against the passive reference" not in res.output and " dB re 1 V per m/s" not in res.output
    fig = json.loads(out.read_text())["designs"][0]["figures"]
    for key in ("level_1k_db", "gain_vs_passive_db", "peak_hz", "treble_corner_hz", "cable_loss_db"):
        assert fig[key] is None and "volume is at 0" in fig[f"{key}_reason"], key
    res = run("response", REF, "--rig", rig)
    assert res.exit_code == 0 and "level at 1 kHz" not in res.output and "no signal: the volume is at 0" in res.output, res.output
    for command in ("noise", "hum"):
        js = tmp_path / f"{command}.json"
        assert run(command, REF, "--rig", rig, "--json", js).exit_code == 0
        scales = json.loads(js.read_text())["hum_and_noise"]
        for scale in scales:
            assert scale["signal_to_noise_db"] is None and "volume is at 0" in scale["signal_to_noise_db_reason"]
    assert json.loads((tmp_path / "noise.json").read_text())["snr_db"] is None


def test_check_says_when_there_is_no_pole_pair_and_writes_tiny_corners_with_a_prefix(tmp_path):
    # a 1 mH coil with 40 pF + 100 pF resonates at 1/(2π·√(L·C)) = 425 kHz (closed form): no pole pair below 20 kHz
    import math

    text = REF.read_text().replace('inductance = "350mH"', 'inductance = "1mH"').replace('load_c = "3n9"', 'load_c = "100p"')
    small = tmp_path / "small.toml"
    small.write_text(text)
    assert 1 / (2 * math.pi * math.sqrt(1e-3 * 140e-12)) > 20e3
    res = run("check", small)
    assert res.exit_code == 0 and "(no complex pole pair below 20 kHz)" in res.output, res.output
    # bias node 1/(2π·(220 kΩ ∥ 220 kΩ)·0.1 F) = 14.47 µHz (closed form), printed with its SI prefix, not 1.447e-05
    path = variant(tmp_path, 'bias_bottom = "220k"', 'bias_bottom = "220k"\nshunt_c = 0.1', name="slow.toml")
    res = run("check", path)
    expected = 1 / (2 * math.pi * 110e3 * 0.1)
    assert f"bias node {expected * 1e6:.4g} µHz" in res.output and "e-0" not in res.output, res.output
