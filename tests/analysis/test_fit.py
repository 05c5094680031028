"""`render fit`: preferred numbers, recovery of known figures (re-checked by ngspice), refusals."""

import json
import math
from pathlib import Path

import pytest
from click.testing import CliRunner
from spice import active_netlist, run_ac

from render.analysis.figures import db, response_figures
from render.cli import main
from render.design import load_design, parse_design
from render.eseries import E6, E12, E24, E48, E96, nearest, values_between
from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def test_e_series_tables():
    # IEC 60063:2015 tables
    assert E12 == (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
    assert E24 == (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
    assert E6 == (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
    # IEC 60063: rounding 10^(k/24) differs from the E24 table at these values
    computed = [round(10 ** (k / 24), 1) for k in range(24)]
    differ = sorted(t for t, c in zip(E24, computed) if t != c)
    assert differ == [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]
    # E48 and E96 (IEC 60063, from memory: first and last values of the tables)
    assert (E48[0], E48[1], E48[-1]) == (1.0, 1.05, 9.53)
    assert (E96[0], E96[1], E96[-1]) == (1.0, 1.02, 9.76)
    # nearest preferred value: 319 -> 330 in E24 (the eseries package's documented example)
    assert nearest("E24", 319.0) == 330.0
    assert list(values_between("E12", 1e3, 4.7e3)) == [1e3, 1.2e3, 1.5e3, 1.8e3, 2.2e3, 2.7e3, 3.3e3, 3.9e3, 4.7e3]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def write_fit(tmp_path, text, name="aim.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def ngspice_figures(design_path):
    """Figures of a written design from an ngspice AC analysis (no engine involved)."""
    d = load_design(design_path)
    wa = d.coil_a.signal_polarity * d.coil_a.sensitivity
    wb = d.coil_b.signal_polarity * d.coil_b.sensitivity
    f, v = run_ac(active_netlist(d, wa=wa, wb=wb), ["amp"], [5, 40000])["amp"]
    return response_figures(db(v)[None, :], f)


def test_fit_recovers_a_known_voicing_checked_by_ngspice(tmp_path):
    # figures measured on a known design (the bright demo), then a fit from the reference
    known = ROOT / "models" / "glasswing-bright.toml"
    fig = ngspice_figures(known)
    peak, level = float(fig["peak_hz"][0]), float(fig["level_1k_db"][0])
    fit = write_fit(
        tmp_path,
        f'''from = "{REF}"
[aim]
peak_hz = {{ value = {peak:.1f}, within = "3%" }}
level_1k_db = {{ value = {level:.3f}, within = 0.5 }}
[free]
"input_a.load_c" = {{ min = "1n", max = "10n", series = "E12" }}
"input_b.load_c" = {{ same_as = "input_a.load_c" }}
"input_a.series_r" = {{ min = "4k7", max = "100k", series = "E24" }}
"input_b.series_r" = {{ same_as = "input_a.series_r" }}
"feedback.r" = {{ min = "47k", max = "470k", series = "E24" }}
''',
    )
    out = tmp_path / "out"
    res = run("fit", fit, "--out", out, "--top", 2)
    assert res.exit_code == 0, res.output
    results = json.loads((out / "fit.json").read_text())["results"]
    assert results[0]["meets"] is True and results[0]["score"] == 0
    # re-check the written file with ngspice, not with the tool's engine
    check = ngspice_figures(Path(results[0]["file"]))
    assert abs(math.log(check["peak_hz"][0] / peak)) <= math.log(1.03) + 1e-3
    assert abs(check["level_1k_db"][0] - level) <= 0.5 + 1e-3
    # every written value is a preferred number and the file is a valid design
    d = parse_design(tomllib.loads(Path(results[0]["file"]).read_text()), source="fit")
    mant = lambda x: round(x / 10 ** math.floor(math.log10(x)), 2)
    assert mant(d.input_a.load_c) in E12 and mant(d.input_a.series_r) in E24 and mant(d.feedback.r) in E24
    assert d.input_a.load_c == d.input_b.load_c


def test_fit_picks_the_e12_capacitor_nearest_the_exact_one(tmp_path):
    # closed form: a lightly loaded coil resonates at f0 = 1/(2π√(L·C)) (circuit theory);
    # pick f0 so that the exact capacitor is 2.3 nF, whose nearest E12 value is 2.2 nF
    L, cw = 1.0, 1e-12
    c_exact = 2.3e-9
    f0 = 1 / (2 * math.pi * math.sqrt(L * (c_exact + cw)))
    text = REF.read_text()
    design = tmp_path / "one-coil.toml"
    design.write_text(
        text.replace('inductance = "350mH"   # winding inductance', 'inductance = "1H"')
        .replace('resistance = "520R"   # DC resistance', 'resistance = "10R"')
        .replace('capacitance = "40pF"   # winding self-capacitance', 'capacitance = "1pF"')
        .replace('eddy_resistance = "220k"   # core loss, in parallel with the inductance\n', "")
        .replace('series_r = "22k"   # into the inverting input', 'series_r = "1M"')
        .replace('r = "110k"   # gain ≈ 110k/22k = 5 per coil', 'r = "1M"')
        .replace("sensitivity = 0.045\n", "sensitivity = 1e-5\n", 1)  # coil_b: heard not at all
    )
    fit = write_fit(
        tmp_path,
        f'''from = "{design}"
[aim]
peak_hz = {{ value = {f0:.3f}, within = "3%" }}
[free]
"input_a.load_c" = {{ min = "1n", max = "10n", series = "E12" }}
''',
    )
    res = run("fit", fit, "--out", tmp_path / "o", "--top", 1)
    assert res.exit_code == 0, res.output
    chosen = load_design(json.loads((tmp_path / "o" / "fit.json").read_text())["results"][0]["file"]).input_a.load_c
    assert chosen == pytest.approx(nearest("E12", c_exact)) == pytest.approx(2.2e-9)


@pytest.mark.parametrize(
    "aim,free,fragment",
    [
        ('peek_hz = { value = 3000, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k" }', "did you mean 'peak_hz'?"),
        ("level_1k_db = { min = 3, max = 1 }", '"feedback.r" = { min = "22k", max = "470k" }', "these bounds contradict each other"),
        ('peak_hz = { value = 3000, within = "5%" }', '"feedback.rr" = { min = "22k", max = "470k" }', "did you mean 'feedback.r'?"),
        ('peak_hz = { value = 3000, within = "5%" }', '"feedback.r" = { min = "470k", max = "22k" }', "must be below max"),
        ('peak_hz = { value = 3000, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k", series = "E7" }', "expected one of E6, E12"),
        ('peak_hz = { value = 500, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k" }', "outside 1 kHz to 20 kHz"),
        ("level_1k_db = { value = 3 }", '"feedback.r" = { min = "22k", max = "470k" }', "a value needs a tolerance"),
        # an unknown key is worded as in a design file (render.validate.unknown)
        ('peak_hz = { valeu = 3000, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k" }', "[aim] peak_hz: unknown key 'valeu'; did you mean 'value'?"),
        ('peak_hz = { value = 3000, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k", serie = "E12" }', "[free] \"feedback.r\": unknown key 'serie'; did you mean 'series'?"),
        ('peak_hz = { value = "3kHz", within = "0.1kHz" }', '"feedback.r" = { min = "22k", max = "470k", step = 1 }', "unknown key 'step'; known keys: min, max, series, same_as"),
        ('peak_hz = { value = "fast", within = "5%" }', '"feedback.r" = { min = "22k", max = "470k" }', '[aim] peak_hz value="fast": cannot read'),
        ('peak_hz = { value = 0, within = "5%" }', '"feedback.r" = { min = "22k", max = "470k" }', "[aim] peak_hz value=0: must be > 0 Hz"),
    ],
)
def test_fit_refuses_bad_files(tmp_path, aim, free, fragment):
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\n{aim}\n[free]\n{free}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1, res.output
    assert fragment in res.output
    assert not (tmp_path / "o").exists()


def test_fit_file_unknown_top_key_is_worded_as_in_a_design(tmp_path):
    fit = write_fit(tmp_path, f'from = "{REF}"\naimx = 1\n[aim]\npeak_hz = {{ value = 3000, within = "5%" }}\n[free]\n"feedback.r" = {{ min = "22k", max = "470k" }}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1 and res.output.strip().endswith(f"{fit}: unknown table or key 'aimx'; did you mean 'aim'?"), res.output
    assert len(res.output.strip().splitlines()) == 1


def test_a_free_part_without_a_series_is_snapped_to_e24(tmp_path):
    # project rule, no outside source (README, render fit: "a [free] entry without series is snapped to E24"); the
    # E24 values from 22k to 47k are IEC 60063's 2.2 ... 4.7 (table above)
    from render.analysis.fit import load_fit

    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\npeak_hz = {{ value = 4000, within = "5%" }}\n[free]\n"feedback.r" = {{ min = "22k", max = "47k" }}\n')
    (free,) = load_fit(fit).free
    assert free.series == "E24"
    assert list(free.choices) == pytest.approx([22e3, 24e3, 27e3, 30e3, 33e3, 36e3, 39e3, 43e3, 47e3])
    assert 'series = "…" is snapped to E24' in run("fit", "--help").output


def test_fit_refuses_unreachable_aims(tmp_path):
    # the feedback resistor alone cannot move the resonance to 15 kHz
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\npeak_hz = {{ value = 15000, within = "1%" }}\n[free]\n"feedback.r" = {{ min = "22k", max = "470k" }}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1
    assert "out of reach with these free parts" in res.output and "peak_hz = 15000" in res.output
    # project rule, no outside source: the range given is what the designs tried measured, not a claim of what is reachable
    assert "(the designs the search tried measured " in res.output and "search reached" not in res.output


def test_an_aim_at_a_peak_the_design_does_not_have_says_so(tmp_path):
    # measured-blade's response has no peak (render check: peak_hz null) and the feedback resistor
    # cannot make one: the refusal says so in words instead of the stand-in it scores (1000 to 1000)
    design = ROOT / "models" / "measured-blade.toml"
    fit = write_fit(tmp_path, f'from = "{design}"\n[aim]\npeak_hz = {{ value = 4800, within = "4%" }}\n[free]\n"feedback.r" = {{ min = "22k", max = "470k" }}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1
    assert "the design has no peak to aim at, and no variant the search tried has one" in res.output and "reached 1000" not in res.output
    assert not (tmp_path / "o").exists()


def test_fit_can_render_and_build_a_blind_session(tmp_path):
    out = tmp_path / "f"
    res = run("fit", ROOT / "models" / "fits" / "brighter-reference.toml", "--out", out, "--top", 1, "--render", "--blind")
    assert res.exit_code == 0, res.output
    assert (out / "clips" / "studio-reference-fit-1.wav").exists() and (out / "clips" / "studio-reference.wav").exists()
    assert (out / "blind" / "public").is_dir() and (out / "blind" / "private").is_dir()
    # a result carries its own name, never the start's
    assert load_design(out / "studio-reference-fit-1.toml").name == "studio-reference-fit-1"


def test_a_fit_of_a_measured_design_writes_results_that_find_the_measurement(tmp_path):
    # a result file lives in the output folder: its measured = "…" path is rewritten relative to it, so the
    # result loads with the start's measured coil (the same fitted ladder, the same file hash)
    import shutil

    start_dir = tmp_path / "designs"
    shutil.copytree(ROOT / "models" / "coils", start_dir / "coils")
    shutil.copy(ROOT / "models" / "measured-blade.toml", start_dir / "measured-blade.toml")
    fit = tmp_path / "fits" / "mb.toml"
    fit.parent.mkdir()
    fit.write_text('from = "../designs/measured-blade.toml"\n\n[aim]\nlevel_1k_db = { min = -9.5 }\n\n[free]\n"feedback.r" = { min = "22k", max = "220k", series = "E24" }\n')
    out = tmp_path / "elsewhere" / "out"
    res = CliRunner().invoke(main, ["fit", str(fit), "--out", str(out)], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    start = load_design(start_dir / "measured-blade.toml")
    result = load_design(out / "measured-blade-fit-1.toml")
    assert result.coil_a.ladder == start.coil_a.ladder and result.coil_a.impedance_from.sha256 == start.coil_a.impedance_from.sha256


def test_rebasing_leaves_absolute_paths_alone():
    from render.analysis.fit import rebase_files

    text = 'measured = "coils/a.csv"   # note\nmeasured = "/abs/b.csv"\nother = "coils/c.csv"\n  measured=\'coils/d.csv\'\n'
    got = rebase_files(text, from_dir=Path("/d/models"), to_dir=Path("/d/out/run"))
    assert got == 'measured = "../../models/coils/a.csv"   # note\nmeasured = "/abs/b.csv"\nother = "coils/c.csv"\n  measured=\'../../models/coils/d.csv\'\n'


def checked(tmp_path, files):
    """`render check --json` of written design files: their figures as the project's own check gives them, by file."""
    out = tmp_path / "check.json"
    res = run("check", *files, "--json", out)
    assert res.exit_code == 0, res.output
    return {d["file"]: d["figures"] for d in json.loads(out.read_text())["designs"]}


def test_a_start_value_off_the_series_is_scored_as_written(tmp_path):
    # the start's feedback.r (110k) is not an E6 value; on E6 from 100k to 150k the level is -7.66 dB (100k)
    # or -4.41 dB (150k) (render check of those files), so an aim of -6.9 ± 0.05 dB is met by neither and
    # the run says so, writing nothing, instead of writing 100k with the 110k start's score
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\nlevel_1k_db = {{ value = -6.9, within = 0.05 }}\n[free]\n"feedback.r" = {{ min = "100k", max = "150k", series = "E6" }}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1, res.output
    assert "no design met every aim" in res.output and "only between the series' values" in res.output
    assert not (tmp_path / "o").exists()


def test_results_are_distinct_and_claim_what_their_files_give(tmp_path):
    # two E6 values lie in the range: two distinct results (never the 110k start snapped onto 100k twice), and each
    # one's level and verdict are those of `render check` on its written file
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\nlevel_1k_db = {{ min = -8 }}\n[free]\n"feedback.r" = {{ min = "100k", max = "150k", series = "E6" }}\n')
    out = tmp_path / "o"
    res = run("fit", fit, "--out", out)
    assert res.exit_code == 0, res.output
    results = json.loads((out / "fit.json").read_text())["results"]
    assert sorted(r["changes"].get("feedback.r", 110e3) for r in results) == [100e3, 150e3]
    check = checked(tmp_path, [r["file"] for r in results])
    for r in results:
        level = check[r["file"]]["level_1k_db"]
        assert r["figures"]["level_1k_db"] == pytest.approx(level, rel=1e-9)
        assert r["meets"] is (level >= -8) and r["misses"] == ([] if level >= -8 else ["level_1k_db ≥ -8"])
    assert "asked for 3 results, found 2" in res.output


def test_a_continuous_part_is_written_as_it_was_scored(tmp_path):
    # series = "none": the written value reproduces the scored one, so `render check` of the file meets the
    # narrow aim as fit.json says (a value rounded to 3 figures, 109k, gives -6.98 dB and misses it)
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\nlevel_1k_db = {{ value = -7.0, within = 0.002 }}\n[free]\n"feedback.r" = {{ min = "22k", max = "470k", series = "none" }}\n')
    out = tmp_path / "o"
    res = run("fit", fit, "--out", out, "--top", 2)
    assert res.exit_code == 0, res.output
    results = json.loads((out / "fit.json").read_text())["results"]
    check = checked(tmp_path, [r["file"] for r in results])
    for r in results:
        level = check[r["file"]]["level_1k_db"]
        assert r["figures"]["level_1k_db"] == pytest.approx(level, rel=1e-9)
        assert r["meets"] and abs(level + 7.0) <= 0.002
        assert load_design(r["file"]).feedback.r == pytest.approx(r["changes"]["feedback.r"], rel=1e-12)


def test_more_results_asked_for_than_can_be_built(tmp_path):
    # E6 bias_top from 10k to 10M against bias_bottom 220k: most values put the bias outside the output's
    # linear window (a design the parser refuses), so fewer than 20 results can be built; those are written
    # with finite figures (render check), the run finishes (fit.json, no INCOMPLETE.txt) and says so
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\nheadroom_v = {{ min = 1 }}\n[free]\n"input_b.bias_top" = {{ min = "10k", max = "10M", series = "E6" }}\n')
    out = tmp_path / "o"
    res = run("fit", fit, "--out", out, "--top", 20)
    assert res.exit_code == 0, res.output
    names = {p.name for p in out.iterdir()}
    assert "fit.json" in names and "INCOMPLETE.txt" not in names
    results = json.loads((out / "fit.json").read_text())["results"]
    assert 0 < len(results) < 20 and len(names & {f"studio-reference-fit-{i}.toml" for i in range(1, 21)}) == len(results)
    assert f"asked for 20 results, found {len(results)}" in res.output
    check = checked(tmp_path, [r["file"] for r in results])
    for r in results:
        headroom = check[r["file"]]["headroom_v"]
        assert math.isfinite(headroom) and r["figures"]["headroom_v"] == pytest.approx(headroom, rel=1e-9)
        assert r["meets"] is (headroom >= 1)


def test_each_result_says_which_aims_it_misses(tmp_path):
    # the printed verdicts agree with `render check` of the written files, judged here against the demo fit
    # file's aims: peak_hz 4800 ± 4 % (the peak check prints, from 4608 to 4992 Hz), peak_db ≥ 3, level ≥ -7.5, hum rejection ≥ 50, headroom ≥ 3
    out = tmp_path / "o"
    res = run("fit", ROOT / "models" / "fits" / "brighter-reference.toml", "--out", out)
    assert res.exit_code == 0, res.output
    results = json.loads((out / "fit.json").read_text())["results"]
    check = checked(tmp_path, [r["file"] for r in results])
    lines = res.output.splitlines()
    for i, r in enumerate(results, 1):
        f = check[r["file"]]
        missed = [
            name
            for name, holds in (
                ("peak_hz = 4800 ± 4 %", 4608 <= f["peak_hz"] <= 4992),
                ("peak_db ≥ 3", f["peak_db"] >= 3),
                ("level_1k_db ≥ -7.5", f["level_1k_db"] >= -7.5),
                ("hum_rejection_db ≥ 50", f["hum_rejection_db"] >= 50),
                ("headroom_v ≥ 3", f["headroom_v"] >= 3),
            )
            if not holds
        ]
        (line,) = [ln for ln in lines if ln.startswith(f"#{i} ")]
        if missed:
            assert line.startswith(f"#{i} misses ") and all(m in line for m in missed) and r["misses"] == missed, line
        else:
            assert line == f"#{i} meets every aim" and r["meets"], line


def test_same_as_naming_a_part_listed_below_says_to_move_it(tmp_path):
    fit = write_fit(tmp_path, f'from = "{REF}"\n[aim]\nlevel_1k_db = {{ min = -8 }}\n[free]\n"input_b.load_c" = {{ same_as = "input_a.load_c" }}\n"input_a.load_c" = {{ min = "1n", max = "10n" }}\n')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1
    assert res.output.strip().endswith('move the line "input_a.load_c" = { … } above "input_b.load_c" in [free]'), res.output
    assert "known parts above it: \n" not in res.output


def test_every_free_part_is_written_as_the_design_parser_reads_it():
    # a written value read back by the design files' reader gives the value to half a unit in the sixth figure;
    # an area's prefix squares with its unit (SI brochure, 9th ed., 3.1: mm² = (10⁻³ m)²), so an area is written in m²
    from render import units as U
    from render.analysis.fit import FREE_TABLES, Free, format_value
    from render.design import DESIGN_TABLES

    kinds = {}
    for t in FREE_TABLES:
        for k, s in DESIGN_TABLES[t].items():
            if isinstance(s.kind, U.Kind):
                kinds.setdefault(s.kind.name, Free(f"{t}.{k}", t, k, s, s.lo or 1e-3, s.hi or 1e3, None, None))
    assert "area" in kinds and "resistance" in kinds and "capacitance" in kinds
    for fr in kinds.values():
        for x in (1.23456789e-9, 9.9999e-4, 0.8019036, 999.9, 108679.4365, 4.7e3):
            text = format_value(fr, x)
            assert U.parse_quantity(text, fr.spec.kind) == pytest.approx(x, rel=5e-6), (fr.spec.kind.name, x, text)
