"""`render coil` and `render coil fit` through click's CliRunner.

The fit's reference is the known model a synthetic measurement was computed
from (eq. (1) of render.impedance.measured with chosen R_dc, ladder and C),
with 1 % noise added: the command must give those parameters back.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render.cli import main
from render.design import load_design
from render.impedance.ladder import Ladder
from render.impedance.measured import terminal_impedance

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
MEASURED = ROOT / "models" / "measured-blade.toml"
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


TRUE_LADDER = Ladder(1.3, (0.6, 0.3), (7e4, 2.5e3))  # invented, for the synthetic measurement


def _synthetic(path: Path, *, seed: int, r=4100.0, ladder=TRUE_LADDER, c=95e-12, points=150):
    """A measurement file computed from known parameters, 1 % noise on |Z| and 0.01 rad on the phase."""
    rng = np.random.default_rng(seed)
    f = np.geomspace(20.0, 50e3, points)
    z = terminal_impedance(f, resistance=r, ladder=ladder, capacitance=c)
    mag = np.abs(z) * (1 + 0.01 * rng.standard_normal(f.size))
    ph = np.degrees(np.angle(z) + 0.01 * rng.standard_normal(f.size))
    rows = ["# synthetic, for a test", "frequency_hz,z_ohm,phase_deg"] + [f"{a:.6g},{b:.6g},{p:.6g}" for a, b, p in zip(f, mag, ph)]
    path.write_text("\n".join(rows) + "\n")
    return r, ladder, c


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_fit_recovers_known_parameters_from_a_noisy_measurement(tmp_path, seed):
    # the parameters the file was computed from; bounds: R_dc 1 %, inductance at DC and C 2 %, the
    # self-resonance 1 % (the noise is 1 %; our bounds, common practice, no source)
    path = tmp_path / "coil.csv"
    r, lad, c = _synthetic(path, seed=seed)
    res = run("coil", "fit", path, "--json", tmp_path / "fit.json", "--out", tmp_path / "coil.toml")
    assert res.exit_code == 0, res.output
    assert "20 Hz – 20 kHz" in res.output and "max dB" in res.output
    got = json.loads((tmp_path / "fit.json").read_text())
    assert got["resistance_ohm"] == pytest.approx(r, rel=0.01)
    assert got["inductance_h"] == pytest.approx(lad.dc_inductance, rel=0.02)
    assert got["capacitance_f"] == pytest.approx(c, rel=0.02)
    f = np.geomspace(1e3, 1e6, 20001)
    z = terminal_impedance(f, resistance=r, ladder=lad, capacitance=c)
    true_srf = f[np.flatnonzero(np.angle(z) <= 0)[0]]
    assert got["self_resonance_hz"] == pytest.approx(true_srf, rel=0.01)
    # the residual is the noise: rms about 1 % (0.087 dB) and 0.57°
    band = got["residual"][0]
    assert band["from_hz"] == 20.0 and band["to_hz"] == 20e3
    assert 0.04 < band["rms_db"] < 0.15 and 0.3 < band["rms_deg"] < 1.0


def test_the_written_table_is_the_fitted_coil_in_a_design(tmp_path):
    # render coil fit --out writes [coil_a] and [coil_a.ladder]; a design with those tables has the
    # impedance of the design that references the measurement itself (same fit; values rounded to 5 digits)
    res = run("coil", "fit", CSV, "--out", tmp_path / "coil.toml")
    assert res.exit_code == 0, res.output
    table = (tmp_path / "coil.toml").read_text()
    ladder = "[coil_a.ladder]" + table.split("\n[coil_a.ladder]", 1)[1]
    design = MEASURED.read_text().replace('measured = "coils/harbour-blade-coil.synthetic.csv"   # relative to this file\n', _values(table), 1)
    doc = design.replace("[coil_b]", ladder + "\n[coil_b]", 1)
    (tmp_path / "typed.toml").write_text(doc)
    (tmp_path / "coils").mkdir()
    (tmp_path / "coils" / CSV.name).write_bytes(CSV.read_bytes())  # coil_b still references it, relative to the design
    typed, measured = load_design(tmp_path / "typed.toml"), load_design(MEASURED)
    f = np.geomspace(20, 20e3, 30)
    assert typed.coil_a.impedance_from is None and typed.coil_a.ladder is not None
    np.testing.assert_allclose(typed.coil_a.ladder.impedance(f), measured.coil_a.ladder.impedance(f), rtol=1e-4)
    assert typed.coil_a.capacitance == pytest.approx(measured.coil_a.capacitance, rel=1e-4)
    assert typed.coil_a.resistance == pytest.approx(measured.coil_a.resistance, rel=1e-4)


def test_the_tables_measured_hint_is_relative_to_the_file_written(tmp_path):
    # a design reads measured = "…" relative to its own folder: the hint in a table written to another folder
    # names the sweep from there, so a design beside the table can use it as it stands
    (tmp_path / "deep").mkdir()
    res = run("coil", "fit", CSV, "--out", tmp_path / "deep" / "coil.toml")
    assert res.exit_code == 0, res.output
    hint = next(line for line in (tmp_path / "deep" / "coil.toml").read_text().splitlines() if 'measured = "' in line)
    rel = hint.split('measured = "', 1)[1].split('"', 1)[0]
    assert (tmp_path / "deep" / rel).resolve() == CSV.resolve()


def _values(table: str) -> str:
    lines = table.split("\n[coil_a]\n", 1)[1].split("\n[coil_a.ladder]")[0].splitlines()
    return "".join(line + "\n" for line in lines if line.startswith(("resistance", "capacitance")))


def test_render_coil_prints_each_coil_and_writes_csv_png_json(tmp_path):
    res = run("coil", MEASURED, "--csv", tmp_path / "z.csv", "--png", tmp_path / "z.png", "--json", tmp_path / "z.json")
    assert res.exit_code == 0, res.output
    assert "measured: coils/harbour-blade-coil.synthetic.csv" in res.output and "self-resonance 11.89 kHz" in res.output
    rec = json.loads((tmp_path / "z.json").read_text())
    a = rec["coils"]["coil_a"]
    assert a["source"] == "measured" and len(a["from"]["sha256"]) == 64
    rows = (tmp_path / "z.csv").read_text().splitlines()
    assert rows[0] == "frequency_hz,coil_a_z_ohm,coil_a_phase_deg,coil_b_z_ohm,coil_b_phase_deg" and len(rows) == 302
    assert (tmp_path / "z.png").stat().st_size > 10_000


def test_typed_coil_against_its_closed_form(tmp_path):
    # studio-reference: R 520 Ω + (jωL ∥ 220 kΩ), 40 pF across: the closed form at 1 kHz
    res = run("coil", REF, "--json", tmp_path / "z.json")
    assert res.exit_code == 0, res.output
    a = json.loads((tmp_path / "z.json").read_text())["coils"]["coil_a"]
    w = 2 * np.pi * 1e3
    zl = 1 / (1 / (1j * w * 0.35) + 1 / 220e3)
    z = 1 / (1 / (520 + zl) + 1j * w * 40e-12)
    i = int(np.argmin(np.abs(np.asarray(a["frequency_hz"]) - 1e3)))
    f = a["frequency_hz"][i]
    zl = 1 / (1 / (1j * 2 * np.pi * f * 0.35) + 1 / 220e3)
    z = 1 / (1 / (520 + zl) + 2j * np.pi * f * 40e-12)
    assert a["magnitude_ohm"][i] == pytest.approx(abs(z), rel=1e-9)
    assert a["phase_deg"][i] == pytest.approx(np.degrees(np.angle(z)), abs=1e-9)
    assert a["source"] == "typed"


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("frequency_hz,z_ohm\n" + "".join(f"{i + 1},1\n" for i in range(10)), "phase"),
        ("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{(10 - i) if i < 5 else i},1,1\n" for i in range(10)), "does not increase"),
        ("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{i + 1},{'nan' if i == 3 else 1},1\n" for i in range(10)), "row"),
    ],
)
def test_bad_files_are_refused_in_one_line(tmp_path, text, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    res = CliRunner().invoke(main, ["coil", "fit", str(path)])
    assert res.exit_code == 1
    lines = [x for x in res.output.splitlines() if x.strip()]
    assert len(lines) == 1 and lines[0].startswith("Error: ") and fragment in lines[0].lower(), res.output


def _exact(path: Path, *, r, ladder, c, f_hi=20e3, points=61):
    """A noiseless sweep of eq. (1), written to 6 digits as a meter exports it."""
    f = np.geomspace(20.0, f_hi, points)
    z = terminal_impedance(f, resistance=r, ladder=ladder, capacitance=c)
    rows = ["frequency_hz,z_ohm,phase_deg"] + [f"{a:.6g},{b:.6g},{p:.6g}" for a, b, p in zip(f, np.abs(z), np.degrees(np.angle(z)))]
    path.write_text("\n".join(rows) + "\n")


# invented coils (demo values): (R_dc Ω, ladder, C F, top of the sweep Hz); C = 0 is a sweep that shows no capacitance
ROUND_TRIP = {
    "r-l, no capacitance": (6500.0, Ladder(4.2), 0.0, 20e3),
    "r-l with a core-loss section, no capacitance": (8200.0, Ladder(0.0, (4.4,), (80e3,)), 0.0, 20e3),
    "low-impedance coil": (250.0, Ladder(0.02, (0.005,), (400.0,)), 300e-12, 100e3),
    "hot coil": (15e3, Ladder(6.0, (2.0,), (30e3,)), 150e-12, 50e3),
}


@pytest.mark.parametrize("name", [*ROUND_TRIP, "shipped example"])
def test_every_written_table_loads_in_a_design(tmp_path, name):
    # render coil fit --out on noiseless sweeps of known coils (eq. (1) of render.impedance.measured):
    # the table loads in a design and holds the fitted values (5 digits); R_dc and the DC inductance are
    # the known ones within 0.1 %. A sweep with no capacitance is written with the design reader's
    # floor, 0.1 pF, and a WARNING line in the table and on standard error.
    if name == "shipped example":
        path, known = CSV, None
    else:
        r, lad, c, f_hi = ROUND_TRIP[name]
        path, known = tmp_path / "sweep.csv", (r, lad, c)
        _exact(path, r=r, ladder=lad, c=c, f_hi=f_hi)
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--out", str(tmp_path / "coil.toml"), "--json", str(tmp_path / "fit.json")])
    assert res.exit_code == 0, res.output
    fit = json.loads((tmp_path / "fit.json").read_text())
    table = (tmp_path / "coil.toml").read_text()
    ladder = "[coil_a.ladder]" + table.split("\n[coil_a.ladder]", 1)[1]
    doc = MEASURED.read_text().replace('measured = "coils/harbour-blade-coil.synthetic.csv"   # relative to this file\n', _values(table), 1)
    (tmp_path / "typed.toml").write_text(doc.replace("[coil_b]", ladder + "\n[coil_b]", 1))
    (tmp_path / "coils").mkdir()
    (tmp_path / "coils" / CSV.name).write_bytes(CSV.read_bytes())
    coil = load_design(tmp_path / "typed.toml").coil_a
    assert coil.resistance == pytest.approx(fit["resistance_ohm"], rel=1e-4)
    assert coil.inductance == pytest.approx(fit["inductance_h"], rel=1e-4)
    if fit["capacitance_f"] < 1e-13:
        assert coil.capacitance == pytest.approx(1e-13, rel=1e-9)
        assert "# WARNING: the sweep shows no winding capacitance" in table and "warning: the sweep shows no winding capacitance" in res.output
    else:
        assert coil.capacitance == pytest.approx(fit["capacitance_f"], rel=1e-4)
        assert "WARNING" not in table
    if known is not None:
        r, lad, c = known
        assert fit["resistance_ohm"] == pytest.approx(r, rel=1e-3) and fit["inductance_h"] == pytest.approx(lad.dc_inductance, rel=1e-3)
        assert (fit["capacitance_f"] < 1e-13) == (c == 0)
    if name == "r-l, no capacitance":
        # 0.1 pF across 4.2 H at 20 kHz: |Z| rises by 1/(1 − ω²LC) with R_dc ≪ ωL, 0.058 dB (closed form)
        w = 2 * np.pi * 20e3
        shift_db = -20 * np.log10(1 - w**2 * 4.2 * 1e-13)
        assert f"{shift_db:.2g}" == "0.058" and f"moves |Z| by {shift_db:.2g} dB at most" in res.output


@pytest.mark.parametrize(
    "z_of, words",
    [
        (lambda f: 1 / (2j * np.pi * f * 100e-9), ["R_dc", "inductance", "capacitance 100 nF is outside 10 pF to 1 nF, from memory"]),
        (lambda f: 1000.0 + 0j * f, ["inductance", "outside 1 mH to 10 H, from memory"]),
    ],
    ids=["capacitor", "resistor"],
)
def test_a_sweep_that_is_no_coil_is_fitted_with_warnings_and_no_table(tmp_path, z_of, words):
    # a 100 nF capacitor and a 1 kΩ resistor: each fitted value outside a pickup coil's range gets a
    # warning line (the fit is still printed, exit 0), and --out refuses in one line (exit 1)
    f = np.geomspace(20.0, 20e3, 40)
    z = z_of(f)
    path = tmp_path / "part.csv"
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.6g},{abs(b):.6g},{np.degrees(np.angle(b)):.6g}\n" for a, b in zip(f, z)))
    res = CliRunner().invoke(main, ["coil", "fit", str(path)])
    assert res.exit_code == 0
    warnings = [x for x in res.output.splitlines() if x.startswith("warning: ")]
    # each line is a range warning, or says a value is not determined (a capacitor's phase is -90° at 20 Hz: no R_dc is seen)
    assert warnings and all(w in res.output for w in words) and all("pickup coils" in w or " not determined: " in w for w in warnings), res.output
    res = CliRunner().invoke(main, ["coil", "fit", str(path), "--out", str(tmp_path / "coil.toml")])
    assert res.exit_code == 1 and not (tmp_path / "coil.toml").exists()
    errors = [x for x in res.output.splitlines() if x.startswith("Error: ")]
    assert len(errors) == 1 and "would not load in a design" in errors[0] and "no table was written" in errors[0]


def test_a_fit_far_from_its_sweep_is_warned_about(tmp_path):
    # a coil's sweep with its phase column in the wrong sign (a lead swapped in the export): no R, ladder
    # and C give a negative phase at low frequency, so the residual is large and said in one line
    f = np.geomspace(20.0, 20e3, 40)
    z = terminal_impedance(f, resistance=4100.0, ladder=TRUE_LADDER, capacitance=95e-12)
    path = tmp_path / "swapped.csv"
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.6g},{abs(b):.6g},{-np.degrees(np.angle(b)):.6g}\n" for a, b in zip(f, z)))
    res = CliRunner().invoke(main, ["coil", "fit", str(path)])
    assert res.exit_code == 0
    assert "warning: the fit is off by up to" in res.output and "does not describe this sweep" in res.output, res.output


def test_the_plot_names_a_self_resonance_above_the_band(tmp_path, monkeypatch):
    # studio-reference's typed coils, 350 mH and 40 pF: 1/(2π√(LC)) = 42.5 kHz (R_dc and the core loss
    # move the phase's zero crossing by under 1 %), above the plotted 20 Hz–20 kHz; the plot says so
    # with an arrow to the right
    import render.report.coil as plot

    texts = []

    def keep(fig, path, **_):
        texts.extend(t.get_text() for ax in fig.axes for t in ax.texts)
        return path

    monkeypatch.setattr(plot, "save", keep)
    res = run("coil", REF, "--png", tmp_path / "z.png")
    assert res.exit_code == 0, res.output
    f0 = 1 / (2 * np.pi * np.sqrt(0.35 * 40e-12))
    assert 42.4e3 == pytest.approx(f0, rel=0.01)
    assert texts == ["coil_a self-resonance 42.4 kHz →", "coil_b self-resonance 42.4 kHz →"]
    assert plot.resonance_note("coil_a", 12.0, (20.0, 20e3)) == "← coil_a self-resonance 12 Hz"
    assert plot.resonance_note("coil_b", 8.1e3, (20.0, 20e3)) == "coil_b self-resonance 8.1 kHz"
    assert plot.resonance_note("coil_b", None, (20.0, 20e3)) == "coil_b: no self-resonance below 10 MHz"


def test_the_derived_line_adds_up_with_the_small_parts_summed():
    # steel-poles: coil_b's six screws add about 0.2 mH to coil_a, each under 0.1 % of its air core; they are
    # summed into "6 others" so that the printed parts add up to the JSON's (within the ladder's fit)
    from render.cli import main

    design = Path(__file__).resolve().parents[2] / "models" / "slipway-steel-poles.toml"
    import re

    res = CliRunner().invoke(main, ["coil", str(design)])
    assert res.exit_code == 0, res.output
    line = next(x for x in res.output.splitlines() if x.strip().startswith("coil_a  derived"))
    assert "6 others +" in line and "coil_b pole" not in line
    # the printed rises (4 digits) sum to the JSON's, every part counted once
    scale = {"mH": 1e-3, "µH": 1e-6, "H": 1.0}
    printed = sum(float(v) * scale[u] for v, u in re.findall(r"\+([0-9.]+) (mH|µH|H)\b", line.split(";")[0]))
    rec = json.loads(CliRunner().invoke(main, ["coil", str(design), "--json", "-"]).stdout)
    parts = rec["coils"]["coil_a"]["from"]["parts"]
    assert printed == pytest.approx(sum(p["rise_h"] for p in parts), rel=1e-3)


def test_a_passive_comparison_pickups_coils_are_shown(tmp_path):
    # the comparison pickup's typed coils: 2.1 H with 240 pF self-resonates near 1/(2π·√(LC)) = 7.09 kHz
    # (its 4.2 kΩ and 1 MΩ core loss move it by under 1 %: the parallel RLC, any circuits text)
    import math

    from render.cli import main

    passive = Path(__file__).resolve().parents[2] / "models" / "compare" / "workshop-passive.toml"
    js = tmp_path / "c.json"
    res = CliRunner().invoke(main, ["coil", str(passive), "--json", str(js)])
    assert res.exit_code == 0, res.output
    rec = json.loads(js.read_text())
    f0 = 1 / (2 * math.pi * math.sqrt(2.1 * 240e-12))
    assert rec["coils"]["coil_a"]["self_resonance_hz"] == pytest.approx(f0, rel=0.01)


def test_impedance_cells_keep_apart_at_any_size():
    # A formatting check, no physics: a cell is 3 figures with its SI prefix (IEC 60050 prefixes),
    # so megohms do not run into the next cell as "4.11e+03k" did.
    from render.cli.coil import _short

    assert [_short(v) for v in (185.0, 1010.0, 9520.0, 4.11e6)] == ["185", "1.01k", "9.52k", "4.11M"]
    assert all(len(_short(v)) <= 7 for v in (1e-3, 0.5, 999.4, 1e5, 9.99e8))  # each fits its 8-wide cell with a space


def test_a_sweep_within_one_decade_reports_its_residual_once(tmp_path):
    # 20-150 Hz lies inside the first decade: the whole band's row and that decade's hold the same points,
    # so one row is printed, labelled with what the data cover (20 Hz – 150 Hz)
    from render.runs.coil import fit_coil

    rng = np.random.default_rng(4)
    f = np.geomspace(20.0, 150.0, 40)
    z = terminal_impedance(f, resistance=4100.0, ladder=TRUE_LADDER, capacitance=95e-12) * (1 + 0.01 * rng.standard_normal(f.size))
    path = tmp_path / "narrow.csv"
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "\n".join(f"{a:.6g},{abs(b):.6g},{np.degrees(np.angle(b)):.6g}" for a, b in zip(f, z)) + "\n")
    bands = fit_coil(path).residual_bands()
    assert len(bands) == 1 and bands[0]["points"] == 40
    assert bands[0]["from_hz"] == pytest.approx(20.0) and bands[0]["to_hz"] == pytest.approx(150.0)


def test_a_sweep_above_the_band_says_its_residual_is_not_computed(tmp_path):
    # a sweep from 25 kHz to 1 MHz of R + jωL in parallel with C (circuit theory: the coil model with no core
    # loss): it fits, but it has no point in 20 Hz–20 kHz for the residual table, and says so in words
    f = np.geomspace(25e3, 1e6, 40)
    w = 2 * np.pi * f
    z = 1 / (1 / (4100 + 1j * w * 2.2) + 1j * w * 95e-12)
    path = tmp_path / "high.csv"
    path.write_text("frequency_hz,z_ohm,phase_deg\n" + "".join(f"{a:.9g},{abs(b):.9g},{np.degrees(np.angle(b)):.9g}\n" for a, b in zip(f, z)))
    res = run("coil", "fit", path)
    assert res.exit_code == 0, res.output
    assert "residual: not computed: the sweep has no points in 20 Hz–20 kHz" in res.stdout


def _core_loss_variant(tmp_path, name, keys):
    """studio-reference with coil_a's parallel core loss replaced by ``keys`` (TOML lines)."""
    text = REF.read_text()
    old = 'eddy_resistance = "220k"   # core loss, in parallel with the inductance\n'
    assert old in text
    path = tmp_path / f"{name}.toml"
    path.write_text(text.replace(old, keys, 1))
    return path


@pytest.mark.parametrize(
    ("keys", "words", "models"),
    [
        ('eddy_coupling = 0.3\neddy_corner = "3kHz"\n', "(core loss: shorted secondary, k² 0.3, corner 3 kHz)", ["shorted_secondary"]),
        (
            'eddy_resistance = "220k"\neddy_coupling = 0.3\neddy_corner = "3kHz"\n',
            "(core loss: 220 kΩ in parallel; shorted secondary, k² 0.3, corner 3 kHz)",
            ["parallel_resistance", "shorted_secondary"],
        ),
        ("", "(no core loss)", []),
    ],
)
def test_every_lumped_core_loss_is_named(tmp_path, keys, words, models):
    # A shorted secondary is core loss: render.circuit.coil's closed form Z_L = sL(ωe + s(1 − k²))/(s + ωe)
    # (ωe = 2π·corner), with R_dc in series and C_w across, gives coil_a's |Z| at 5 kHz; the line and the
    # JSON name the model(s) the |Z| came from (the wording and keys: project rule, no outside source)
    path = _core_loss_variant(tmp_path, "loss", keys)
    res = run("coil", path, "--json", tmp_path / "c.json")
    assert res.exit_code == 0, res.output
    line = next(x for x in res.output.splitlines() if "L 350 mH at DC" in x)  # coil_a's line comes first
    assert words in line, line
    c = json.loads((tmp_path / "c.json").read_text())["coils"]["coil_a"]
    assert c["core_loss"] == models
    k2, fe = (0.3, 3e3) if "shorted_secondary" in models else (None, None)
    assert (c["eddy_coupling_k2"], c["eddy_corner_hz"]) == (k2, fe)
    assert c["eddy_resistance_ohm"] == (220e3 if "parallel_resistance" in models else None)
    s, L = 2j * np.pi * 5e3, 0.35
    zl = s * L * (2 * np.pi * fe + s * (1 - k2)) / (s + 2 * np.pi * fe) if k2 else s * L
    if c["eddy_resistance_ohm"]:
        zl = 1 / (1 / zl + 1 / 220e3)
    z = 1 / (1 / (520 + zl) + s * 40e-12)
    got = np.interp(np.log(5e3), np.log(c["frequency_hz"]), c["magnitude_ohm"])
    assert got == pytest.approx(abs(z), rel=2e-3)


def test_a_ladders_loss_is_named_as_the_ladder():
    # A derived coil with a construction: its steel's eddy-current loss is a fitted ladder (render.design.coil_impedance),
    # named as such in the JSON's core_loss (project rule, no outside source); the lumped keys are empty
    rec = json.loads(run("coil", ROOT / "models" / "slipway-steel-blades.toml", "--json", "-").stdout)
    c = rec["coils"]["coil_a"]
    assert c["core_loss"] == ["ladder"] and len(c["ladder"]["inductances_h"]) >= 1
    assert (c["eddy_resistance_ohm"], c["eddy_coupling_k2"], c["eddy_corner_hz"]) == (None, None, None)
