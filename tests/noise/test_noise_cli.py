"""``render noise`` through click's CliRunner: exit codes, message text, JSON keys, overwrite rules."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render.cli.noise import noise_command

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature


def run(*args):
    return CliRunner().invoke(noise_command, [str(a) for a in args], catch_exceptions=False)


def test_table_names_both_circuits_and_the_reference():
    res = run(REF)
    assert res.exit_code == 0, res.output
    for text in ("studio-reference", "active", "passive reference", "A-weighted", "SNR", "largest contributors", "300 K", "0.1 m/s rms"):
        assert text in res.output, text
    assert "input_a.series_r" in res.output  # the 22 kΩ input resistors are among the largest


def test_json_has_the_documented_keys(tmp_path):
    out = tmp_path / "n.json"
    res = run(REF, "--json", out)
    assert res.exit_code == 0, res.output
    rec = json.loads(out.read_text())
    for key in ("frequency_hz", "density_v_per_rthz", "noise_v_rms", "noise_a_weighted_v_rms", "snr_db", "reference_signal", "temperature_k", "passive", "contributors"):
        assert key in rec, key
    f, s = rec["frequency_hz"], rec["density_v_per_rthz"]
    assert len(f) == len(s) == len(rec["passive"]["density_v_per_rthz"]) > 100
    # the band 20 Hz–20 kHz at 300 K unless told (the command's documented defaults)
    assert f[0] == pytest.approx(20.0) and f[-1] == pytest.approx(20000.0) and rec["temperature_k"] == 300.0
    ref = rec["reference_signal"]
    assert ref["frequency_hz"] == 1000.0 and ref["string_velocity_m_per_s_rms"] == 0.1
    assert rec["snr_db"] == pytest.approx(20 * math.log10(ref["output_v_rms"] / rec["noise_v_rms"]))
    assert rec["passive"]["snr_db"] == pytest.approx(20 * math.log10(ref["passive_output_v_rms"] / rec["passive"]["noise_v_rms"]))
    assert rec["opamp"] == {"noise_voltage_v_per_rthz": 10e-9, "noise_current_a_per_rthz": 1e-14}
    shares = [c["share"] for c in rec["contributors"]]
    assert shares == sorted(shares, reverse=True) and sum(shares) == pytest.approx(1.0)


def test_json_to_stdout_is_only_json():
    res = run(REF, "--json", "-")
    assert res.exit_code == 0
    assert json.loads(res.stdout)["design"] == "studio-reference"


def test_png(tmp_path):
    png = tmp_path / "n.png"
    res = run(REF, "--png", png, "--top", 3)
    assert res.exit_code == 0, res.output
    assert png.read_bytes()[:8] == PNG_MAGIC


def test_refuses_to_overwrite_and_touches_nothing(tmp_path):
    out, png = tmp_path / "n.json", tmp_path / "n.png"
    out.write_text("keep me")
    res = run(REF, "--json", out, "--png", png)
    assert res.exit_code == 1
    assert "exists; pass --overwrite" in res.output
    assert out.read_text() == "keep me" and not png.exists()
    assert run(REF, "--json", out, "--png", png, "--overwrite").exit_code == 0
    assert json.loads(out.read_text())["noise_v_rms"] > 0 and png.exists()


def test_warmer_is_noisier(tmp_path):
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert run(REF, "--json", a).exit_code == 0
    assert run(REF, "--json", b, "--temperature", 350).exit_code == 0
    ra, rb = json.loads(a.read_text()), json.loads(b.read_text())
    assert rb["temperature_k"] == 350.0
    # 4kT·R ∝ T (Johnson–Nyquist); the passive reference has only thermal sources
    assert rb["passive"]["noise_v_rms"] == pytest.approx(ra["passive"]["noise_v_rms"] * math.sqrt(350 / 300), rel=1e-9)
    assert rb["noise_v_rms"] > ra["noise_v_rms"]


def test_reference_velocity_moves_only_the_snr(tmp_path):
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    assert run(REF, "--json", a).exit_code == 0
    assert run(REF, "--json", b, "--reference-velocity", 1.0).exit_code == 0
    ra, rb = json.loads(a.read_text()), json.loads(b.read_text())
    # ten times the signal is +20 dB (definition of the dB)
    assert rb["snr_db"] - ra["snr_db"] == pytest.approx(20.0, abs=1e-9)
    assert rb["noise_v_rms"] == ra["noise_v_rms"]


def test_rig_file_applies(tmp_path):
    rig = tmp_path / "rig.toml"
    rig.write_text('[rig]\npassive_pot = "250k"\n')
    out = tmp_path / "n.json"
    assert run(REF, "--rig", rig, "--json", out).exit_code == 0
    rec = json.loads(out.read_text())
    assert rec["rig"]["file"] == str(rig)
    base = json.loads(run(REF, "--json", "-").stdout)
    assert rec["passive"]["noise_v_rms"] != base["passive"]["noise_v_rms"]


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--temperature", "25"], "--temperature=25: out of range; give a number from 200 to 400 K; kelvin, not °C: 25 °C is 298.15 K"),
        (["--temperature", "1000"], "--temperature=1000: out of range; give a number from 200 to 400 K"),
        (["--reference-velocity", "0"], "--reference-velocity=0: out of range; give a number from 0.0001 to 10 m/s rms"),
    ],
)
def test_bad_options_one_line_exit_1(args, fragment):
    res = run(REF, *args)
    assert res.exit_code == 1
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and fragment in lines[0], res.output


@pytest.mark.parametrize("value", ["1e6", "0", "0.00009", "10.5", "nan"])
def test_the_reference_velocity_is_refused_alike_by_the_library_and_the_command(value):
    """One range and one wording: render.noise(reference_velocity=…) refuses what --reference-velocity refuses, in the same words."""
    import render

    res = run(REF, "--reference-velocity", value)
    assert res.exit_code == 1
    with pytest.raises(render.ArgumentError) as e:
        render.noise(REF, reference_velocity=float(value))
    assert str(e.value).startswith("reference_velocity=")
    assert res.output.strip().removeprefix("Error: ").split(": ", 1)[1] == str(e.value).split(": ", 1)[1]  # same words after the name=value


def test_the_reference_velocity_range_ends_are_accepted():
    import render

    for v in (1e-4, 10.0):
        assert render.noise(REF, reference_velocity=v).reference_velocity == v


def test_usage_errors_one_line_exit_1():
    from render.cli import main

    for args in ((REF, "--temperature", "warm"), (REF, "--top", "0"), ()):
        res = CliRunner().invoke(main, ["noise", *map(str, args)])
        assert res.exit_code == 1 and len(res.output.strip().splitlines()) == 1, res.output


def test_missing_and_bad_design(tmp_path):
    res = run(tmp_path / "nowhere.toml")
    assert res.exit_code == 1 and "no such file" in res.output
    bad = tmp_path / "bad.toml"
    bad.write_text(REF.read_text().replace('series_r = "22k"', 'series_r = "22m"', 1))
    res = run(bad)
    assert res.exit_code == 1 and '"m" is milli; for mega write "22M"' in res.output
    assert "Traceback" not in res.output


def test_a_reference_that_would_clip_is_warned(tmp_path):
    # The reference sine's peak at the op-amp output against the distance from the bias to the soft limit's
    # onset on the nearer side. The peak: √2·v·|V(out)| of ngspice's AC analysis at 1 kHz of the same circuit
    # (EMFs sensitivity·1 V per m/s). The onset: studio-reference's window, 9 V − 1 V margin − 0.5 V knee,
    # less its 4.5 V bias = 3.0 V (the design file's values; render.chain.limit's linear end).
    from spice import active_netlist, run_ac

    from render.analysis.noise import noise
    from render.design import load_design

    d = load_design(REF)
    wa, wb = (c.signal_polarity * c.sensitivity for c in (d.coil_a, d.coil_b))
    f, v = run_ac(active_netlist(d, wa=wa, wb=wb), ["out"], [900, 1100])["out"]
    gain = float(np.interp(1000.0, f, np.abs(v)))  # V per m/s at the op-amp output
    out = tmp_path / "n.json"
    res = run(REF, "--reference-velocity", 10, "--json", out)
    assert res.exit_code == 0, res.output
    rec = json.loads(out.read_text())
    ref = rec["reference_signal"]
    assert ref["onset_v"] == pytest.approx(3.0, abs=1e-12)
    assert ref["opamp_output_peak_v"] == pytest.approx(math.sqrt(2) * 10 * gain, rel=1e-4)
    assert ref["clips"] is True and len(rec["warnings"]) == 1
    assert "warning: the reference signal would clip" in res.output and "the SNRs are for the signal unclipped" in res.output
    assert rec["snr_db"] == pytest.approx(20 * math.log10(ref["output_v_rms"] / rec["noise_v_rms"]))  # the figure is kept
    # the threshold velocity 3.0 V / (√2·gain): just below it no warning, just above one
    edge = 3.0 / (math.sqrt(2) * gain)
    assert noise(d, reference_velocity=edge * 0.999).warnings() == []
    assert noise(d, reference_velocity=edge * 1.001).reference_clips
    default = run(REF, "--json", "-")
    assert json.loads(default.stdout)["warnings"] == [] and "warning:" not in default.output


def _si(text: str) -> float:
    """A printed figure with its SI prefix ("2.29 µV/√Hz", "7.45 V rms", "1.58 mV") in base units."""
    import re

    num, prefix = re.match(r"\s*([-0-9.]+) ?([pnµmk]?)", text).groups()
    return float(num) * {"p": 1e-12, "n": 1e-9, "µ": 1e-6, "m": 1e-3, "k": 1e3, "": 1.0}[prefix]


def test_large_figures_take_a_larger_prefix_not_an_exponent(tmp_path):
    # A high-gain variant (feedback.r 2.2 MΩ, bias 4M4/4M4) at 1 m/s rms: its density at 1 kHz is some µV/√Hz
    # and its reference some V rms; each is printed with the SI prefix that holds it (SI brochure, 9th ed.,
    # table 7), to 3 figures of the JSON's value (project rule, no outside source)
    text = REF.read_text().replace('r = "110k"', 'r = "2.2M"', 1).replace('bias_top = "220k"', 'bias_top = "4M4"').replace('bias_bottom = "220k"', 'bias_bottom = "4M4"')
    path = tmp_path / "high-gain.toml"
    path.write_text(text)
    res = run(path, "--reference-velocity", 1, "--json", tmp_path / "n.json")
    assert res.exit_code == 0, res.output
    rec = json.loads((tmp_path / "n.json").read_text())
    rows = {line[2:22].strip(): line[22:50] for line in res.output.splitlines() if line.startswith("  ") and not line.startswith("   ")}
    assert "e+" not in res.output.split("largest contributors")[0]
    assert rows["density at 1 kHz"].strip().endswith("µV/√Hz")
    assert _si(rows["density at 1 kHz"]) == pytest.approx(rec["density_1k_v_per_rthz"], rel=5e-3)
    assert rows["reference signal"].strip().endswith(" V rms")
    assert _si(rows["reference signal"]) == pytest.approx(rec["reference_signal"]["output_v_rms"], rel=5e-3)
    assert _si(rows["total, 20 Hz–20 kHz"]) == pytest.approx(rec["noise_v_rms"], rel=5e-3)


def test_millivolts_of_hum_read_in_millivolts(tmp_path):
    # odd-pair in a 50 µT room: about 1.6 mV of hum at the amp input, printed "1.… mV", not "1.58e+03 µV"
    # (SI brochure, 9th ed., table 7; project rule, no outside source), to 3 figures of the JSON's value
    rig = tmp_path / "room.toml"
    rig.write_text('[hum]\nfield = "50uT"\n')
    res = run(ROOT / "models" / "odd-pair.toml", "--rig", rig, "--json", tmp_path / "n.json")
    assert res.exit_code == 0, res.output
    hum = next(line for line in res.output.splitlines() if line.split()[:1] == ["hum"] and line.split()[1][0].isdigit())
    assert "e+" not in hum and hum.split()[2] == "mV"
    scale = json.loads((tmp_path / "n.json").read_text())["hum_and_noise"][0]
    assert scale["circuit"] == "active"
    assert _si(" ".join(hum.split()[1:3])) == pytest.approx(scale["hum_v_rms"], rel=5e-3)


def test_passive_contributors_have_one_name_in_print_and_json(tmp_path):
    # project rule, no outside source: a contributor is named the same on the page and in --json; the passive
    # reference's own controls are "rig.…" under "passive", as the active rig's are under the top level
    out = tmp_path / "n.json"
    res = run(REF, "--json", out, "--top", 8)
    assert res.exit_code == 0, res.output
    rec = json.loads(out.read_text())
    lines = res.output.split("largest contributors")[1].split("hum and noise")[0].splitlines()[1:]
    printed = [line[50:].rsplit(" ", 2)[0] for line in lines if line[50:].strip()]
    assert printed == [c["source"] for c in rec["passive"]["contributors"][:8]]
    assert "rig.volume_lower" in printed and not any(c["source"].startswith("passive_") for c in rec["passive"]["contributors"])


def _passive_cancels(tmp_path) -> Path:
    """The reference with its second coil's signal polarity flipped: the passive reference's coils cancel the string
    signal exactly (equal coils, equal and opposite EMFs: arithmetic), the active circuit still has one."""
    path = tmp_path / "passive-cancels.toml"
    text = REF.read_text()
    assert 'position = "56mm"   # the neck-side coil of the pair' in text
    path.write_text(text.replace('position = "56mm"   # the neck-side coil of the pair', 'position = "56mm"\nsignal_polarity = 1', 1))
    return path


def test_the_totals_say_rms_as_the_signal_does():
    # the noise totals and the signal are rms voltages; each printed figure says so (project rule: units on every figure)
    res = run(REF)
    rows = {line[2:22].strip(): line[22:] for line in res.output.splitlines() if line.startswith("  ") and not line.startswith("   ")}
    for row in ("total, 20 Hz–20 kHz", "A-weighted"):
        assert rows[row].count("µV rms (") == 2, rows[row]  # active and passive columns
    assert rows["reference signal"].count("mV rms") == 2


def test_a_passive_reference_without_signal_gives_its_own_reason(tmp_path):
    from render.analysis import undefined as U

    path = _passive_cancels(tmp_path)
    res = run(path, "--json", "-")
    assert res.exit_code == 0, res.output
    rec = json.loads(res.stdout[res.stdout.index("{") :])
    active, passive = rec["hum_and_noise"]
    assert active["signal_to_noise_db"] is not None and passive["signal_to_noise_db"] is None
    assert passive["signal_to_noise_db_reason"] == rec["passive"]["snr_db_reason"] == U.PASSIVE_NO_SIGNAL
    printed = [line for line in run(path).output.splitlines() if line.startswith("  signal to noise")]
    assert printed and printed[0].rstrip().endswith("no passive signal"), printed


def test_the_plot_title_reads_as_a_sentence(tmp_path):
    from render.analysis.noise import noise_reports
    from render.design import load_designs
    from render.report.plots import noise_title

    (d,), _ = load_designs([_passive_cancels(tmp_path)])
    (r,) = noise_reports([d])
    title = noise_title(r)
    assert "none (no signal)" not in title and "passive reference: no SNR, its coils cancel the signal" in title, title
    (d,), _ = load_designs([REF])
    (r,) = noise_reports([d])
    assert noise_title(r).endswith(f"(passive reference {r.passive.snr_db:.1f} dB)")


def test_the_commands_reference_velocity_range_is_the_librarys():
    # one range for the reference velocity: the option's limits are render.analysis.noise's (project rule)
    from render.analysis.noise import REFERENCE_VELOCITY_RANGE
    from render.cli.noise import noise_command

    (opt,) = [p for p in noise_command.params if p.name == "reference_velocity"]
    assert (opt.type.limits["lo"], opt.type.limits["hi"]) == REFERENCE_VELOCITY_RANGE
