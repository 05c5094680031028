"""`render fit` against its start design: parts the start derives are refused, every claim is `render check`'s.

The reference for what a loaded design derives is the design loader itself
(render.design.parse_design reading the start's file with the part rewritten),
and for every figure a result claims, `render check` of its written file.
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from render import units as U
from render.analysis.fit import FREE_TABLES, Aim, Free, format_value, rewrite, with_free_values
from render.cli import main
from render.design import DESIGN_TABLES, load_design, load_rig, parse_design
from render.design.derived import derived_parts
from render.io.toml import loads

ROOT = Path(__file__).resolve().parents[2]
MODELS = ROOT / "models"
REF = MODELS / "studio-reference.toml"
TABLES = ("coil_a", "coil_b", "input_a", "input_b", "feedback", "output", "supply", "rig", "hum")


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def checked(tmp_path, files, *extra):
    """`render check --json` of written design files: their figures as the project's own check gives them, by file."""
    out = tmp_path / "check.json"
    res = run("check", *files, *extra, "--json", out)
    assert res.exit_code == 0, res.output
    return {d["file"]: d["figures"] for d in json.loads(out.read_text())["designs"]}


def _free(name: str) -> Free:
    table, key = name.split(".")
    spec = DESIGN_TABLES[table][key]
    return Free(name, table, key, spec, spec.lo, spec.hi, None, None)


def _probe(fr: Free, start) -> float:
    """A value for ``fr`` other than the start's, inside its plausible range, exactly as a file would hold it."""
    v = getattr(getattr(start, fr.table), fr.key)
    if v:
        v = float(v) * 1.1
    else:
        lo, hi = max(fr.spec.lo, 1e-6), min(fr.spec.hi, 1e9)
        v = 0.01 if fr.key == "aperture" else math.sqrt(lo * hi)
    return U.parse_quantity(format_value(fr, v), fr.kind)


SHIPPED = sorted(p for p in MODELS.glob("*.toml") if "aim" not in loads(p.read_text(encoding="utf-8")) and loads(p.read_text(encoding="utf-8")).get("kind") != "passive")


@pytest.mark.parametrize("path", SHIPPED, ids=lambda p: p.stem)
def test_a_part_not_derived_is_set_as_the_loader_reads_it(path):
    # every part render fit may free and the start does not derive (render.design.derived.derived_parts): the search's
    # design (analysis.fit.with_free_values) equals what the loader makes of the start's file with that value written in; a derived
    # part's written value is not what the loader gives (that is why it is refused)
    text = path.read_text(encoding="utf-8")
    start = load_design(path)
    derived = derived_parts(start)
    names = [f"{t}.{k}" for t in FREE_TABLES for k, s in DESIGN_TABLES[t].items() if isinstance(s.kind, U.Kind)]
    partners = {"eddy_coupling": "eddy_corner", "eddy_corner": "eddy_coupling", "slew_rate": "gbw"}
    checked_parts = 0
    for name in names:
        fr = _free(name)
        partner = partners.get(fr.key)
        if partner and getattr(getattr(start, fr.table), partner) is None:
            continue  # refused by render fit unless the partner is free too (test_parts_that_cannot_change_alone)
        if name in derived and fr.key == "position":
            continue  # a field solve for each position; refused (test_a_part_the_start_derives_is_refused_before_the_search)
        v = _probe(fr, start)
        try:
            loaded = parse_design(loads(rewrite(text, [(fr, v, None)], "")), source=str(path), name=path.stem)
        except Exception as exc:  # the loader refuses the value: only a derived part may be refused so
            assert name in derived, (name, exc)
            continue
        searched = with_free_values(start, [fr], [v])
        same = all(getattr(loaded, t) == getattr(searched, t) for t in TABLES)
        assert same is (name not in derived), (path.stem, name, v, derived.get(name))
        checked_parts += 1
    assert checked_parts > 20


def fitted(tmp_path, fit, *args):
    """`render fit` of ``fit`` into ``tmp_path/o``: (its output, fit.json's results)."""
    out = tmp_path / "o"
    res = run("fit", fit, "--out", out, *args)
    assert res.exit_code == 0, res.output
    return res, json.loads((out / "fit.json").read_text())["results"]


def claims_check(tmp_path, results, figure, *extra):
    """Each result's ``figure`` in fit.json is render check's for its written file (``extra``: check's options)."""
    check = checked(tmp_path, [r["file"] for r in results], *extra)
    for r in results:
        assert r["figures"][figure] == pytest.approx(check[r["file"]][figure], rel=1e-9)
    return check


def fit_file(tmp_path, start, aim, free, name="f.toml"):
    p = tmp_path / name
    p.write_text(f'from = "{start}"\n[aim]\n{aim}\n[free]\n{free}\n', encoding="utf-8")
    return p


@pytest.mark.parametrize(
    "design,part,span,fragment",
    [
        # a coil with [coil_b.geometry]: its turns_area is the geometry's (with the steel's share); the fit claimed
        # 22.36 dB rejection where render check gives 71.2 dB for the file it wrote
        ("slipway-steel-blades", "coil_b.turns_area", ("0.3", "3"), "it is derived from [coil_b.geometry] and the steel"),
        # a [construction]: a position is a new field solve; the fit claimed -7.09 dB where render check gives -8.31 dB
        ("slipway-magnet-blades", "coil_b.position", ("65mm", "80mm"), "it places the coil in [construction]'s field solve"),
        ("slipway-steel-blades", "coil_b.sensitivity", ("0.1", "1"), "it is derived from [construction]'s field solve"),
        ("slipway-steel-blades", "coil_b.aperture", ("1mm", "20mm"), "it is derived from [construction]'s field solve"),
        ("slipway-steel-blades", "coil_a.inductance", ("50mH", "500mH"), "it is derived from wire and [coil_a.geometry]"),
        ("slipway-steel-blades", "coil_b.eddy_resistance", ("10k", "1M"), "it is derived from wire and [coil_b.geometry]"),
        ("measured-blade", "coil_a.capacitance", ("50p", "500p"), "it is fitted to the measurement coils/"),
        ("bench-wound", "coil_a.resistance", ("100R", "1k"), "it is derived from [coil_a.winding]"),
    ],
)
def test_a_part_the_start_derives_is_refused_before_the_search(tmp_path, design, part, span, fragment):
    fit = fit_file(tmp_path, MODELS / f"{design}.toml", "level_1k_db = { min = -30 }", f'"{part}" = {{ min = "{span[0]}", max = "{span[1]}", series = "none" }}')
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1, res.output
    (line,) = res.output.strip().splitlines()
    assert line.startswith(f'Error: {fit}: [free] "{part}": in {MODELS / design}.toml {fragment}'), line
    assert "so a value the search sets alone is not what a result's file would give; " in line, line
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize(
    "free,fragment",
    [
        ('"coil_a.eddy_coupling" = { min = "0.05", max = "0.5", series = "none" }', "has no coil_a.eddy_corner, which eddy_coupling needs beside it; give eddy_corner a value"),
        ('"supply.slew_rate" = { min = "1V/us", max = "10V/us", series = "none" }', "has no supply.gbw, which slew_rate needs beside it"),
    ],
)
def test_parts_that_cannot_change_alone(tmp_path, free, fragment):
    # render.design.loading.parse_design refuses eddy_coupling without eddy_corner, and slew_rate without gbw
    start = tmp_path / "d.toml"
    start.write_text(REF.read_text(encoding="utf-8").replace('gbw = "3MHz"', ""), encoding="utf-8")
    assert load_design(start).supply.gbw is None
    fit = fit_file(tmp_path, start, "level_1k_db = { min = -30 }", free)
    res = run("fit", fit, "--out", tmp_path / "o")
    assert res.exit_code == 1 and fragment in res.output and len(res.output.strip().splitlines()) == 1, res.output
    assert not (tmp_path / "o").exists()


def test_the_pair_free_together_is_searched(tmp_path):
    # with eddy_corner free beside eddy_coupling, each candidate is a design the loader accepts: `render check` of
    # every written file gives the level fit.json claims
    fit = fit_file(
        tmp_path,
        REF,
        "level_1k_db = { min = -30 }",
        '"coil_a.eddy_coupling" = { min = "0.05", max = "0.5", series = "E6" }\n"coil_a.eddy_corner" = { min = "1k", max = "10k", series = "E6" }',
    )
    _, results = fitted(tmp_path, fit, "--top", 2)
    claims_check(tmp_path, results, "level_1k_db")


def test_a_position_next_to_a_hum_source_is_never_a_result(tmp_path):
    # rigs/near-transformer.toml: a dipole at x = 0.5 m from the pickup's middle; the loader refuses a coil centre within
    # 10 cm of it (render.magnetics.schema.check_source_places). coil_a sits at 38 mm, coil_b's centre at half the
    # spacing from the middle: of E12 positions from 0.8 to 1.5 m, 1.0 and 1.2 m put it 1.9 and 8.1 cm from the
    # dipole, 0.82 and 1.5 m 10.9 and 23.1 cm (arithmetic). Two results, which load with the rig and claim what
    # render check gives
    rig = ROOT / "rigs" / "near-transformer.toml"
    assert load_rig(rig).hum.sources[0].at == pytest.approx((0.5, 0.0, 0.0)) and load_design(REF).coil_a.position == pytest.approx(0.038)
    fit = fit_file(tmp_path, REF, "level_1k_db = { min = -60 }", '"coil_b.position" = { min = "0.8", max = "1.5", series = "E12" }')
    res, results = fitted(tmp_path, fit, "--rig", rig)
    assert sorted(r["changes"]["coil_b.position"] for r in results) == [pytest.approx(0.82), pytest.approx(1.5)]
    assert "asked for 3 results, found 2" in res.output
    claims_check(tmp_path, results, "hum_rejection_db", "--rig", rig)


def test_a_peak_aim_is_met_only_where_render_check_prints_it_in_the_band(tmp_path):
    # ember-dark has a flat top (two maxima 0.015 dB apart, README): the smooth frequency that guides the search
    # (aimed_peak_hz) lay up to 90 Hz above the peak render check prints, and results claimed 3100 ± 1.5 % with a
    # printed peak of 2966 Hz. Each verdict now agrees with render check's printed peak on its written file, judged on
    # the band 3100·(1 ± 0.015) = 3053.5 to 3146.5 Hz
    fit = fit_file(
        tmp_path,
        MODELS / "ember-dark.toml",
        'peak_hz = { value = 3100, within = "1.5%" }',
        '"input_a.load_c" = { min = "1n", max = "47n", series = "E96" }\n"input_b.load_c" = { same_as = "input_a.load_c" }',
    )
    res, results = fitted(tmp_path, fit, "--top", 6)
    check = claims_check(tmp_path, results, "peak_hz")
    lines = res.output.splitlines()
    (row,) = [ln for ln in lines if ln.startswith("peak_hz = 3100")]
    for i, r in enumerate(results, 1):
        peak = check[r["file"]]["peak_hz"]
        holds = 3053.5 <= peak <= 3146.5
        assert r["meets"] is holds, (r["file"], peak)
        assert row.split()[-len(results) + i - 1] == f"{peak:.0f}"  # the table prints check's peak
        (line,) = [ln for ln in lines if ln.startswith(f"#{i} ")]
        assert line == f"#{i} meets every aim" if holds else f"(it measures {peak:.4g})" in line
    assert results[0]["meets"]


def test_a_percentage_is_the_band_it_prints():
    # "4800 ± 4 %" is 4800·(1 ± 0.04) = 4608 to 4992 Hz (arithmetic), not a log-ratio band
    a = Aim("peak_hz", value=4800, within_rel=0.04)
    assert a.miss(np.array([4608.0, 4610.0, 4992.0])).tolist() == [0.0, 0.0, 0.0]
    assert a.miss(np.array([4600.0]))[0] == pytest.approx(8 / 192) and a.miss(np.array([5000.0]))[0] == pytest.approx(8 / 192)


@pytest.mark.parametrize(
    "aim,free,fragment",
    [
        (
            'gain_vs_passive_db = { value = 0, within = "5%" }',
            '"feedback.r" = { min = "47k", max = "470k" }',
            'within="5%": a percentage of a value of 0 is no tolerance; give it in the figure\'s own unit, e.g. within = 1',
        ),
        ("level_1k_db = { min = -8 }", '"feedback.r" = { same_as = "feedback.r" }', "same_as='feedback.r' names the part itself"),
        ("level_1k_db = { min = -8 }", '"coil_a.turns" = { min = "1", max = "2" }', "a coil's number of turns is not a part render fit changes"),
        ("level_1k_db = { min = -8 }", '"coil_a.aperture" = { min = 0, max = "10mm" }', "give a min above 0"),
    ],
)
def test_fit_refuses_before_reading_the_start(tmp_path, aim, free, fragment):
    res = run("fit", fit_file(tmp_path, REF, aim, free), "--out", tmp_path / "o")
    assert res.exit_code == 1 and fragment in res.output and "did you mean" not in res.output and "move the line" not in res.output, res.output
    assert not (tmp_path / "o").exists()


def test_from_and_phrase_are_relative_to_the_fit_file_only(tmp_path, monkeypatch):
    # the same relative name in the current folder and beside the fit file: the one beside the fit file is used, and
    # one only in the current folder is refused, naming where it was looked for
    fits = tmp_path / "fits"
    fits.mkdir()
    (fits / "d.toml").write_text((MODELS / "ember-dark.toml").read_text(encoding="utf-8"), encoding="utf-8")
    (tmp_path / "d.toml").write_text(REF.read_text(encoding="utf-8"), encoding="utf-8")
    monkeypatch.chdir(tmp_path)
    fit = fit_file(fits, "d.toml", "level_1k_db = { min = -30 }", '"feedback.r" = { min = "100k", max = "150k", series = "E6" }')
    res = run("fit", fit, "--out", tmp_path / "o", "--top", 1)
    assert res.exit_code == 0, res.output
    assert json.loads((tmp_path / "o" / "fit.json").read_text())["start"] == str(fits / "d.toml")
    (fits / "d.toml").unlink()
    res = run("fit", fit, "--out", tmp_path / "o2")
    assert res.exit_code == 1 and str(fits / "d.toml") in res.output, res.output
    (tmp_path / "p.toml").write_text((ROOT / "dry_signals" / "default.toml").read_text(encoding="utf-8"), encoding="utf-8")
    fit.write_text(f'from = "{REF}"\nphrase = "p.toml"\n[aim]\nphrase_headroom_db = {{ min = 1 }}\n[free]\n"feedback.r" = {{ min = "47k", max = "470k" }}\n', encoding="utf-8")
    res = run("fit", fit, "--out", tmp_path / "o3")
    assert res.exit_code == 1 and f"no such file ({fits / 'p.toml'}); the path is relative to the fit file's folder" in res.output, res.output
