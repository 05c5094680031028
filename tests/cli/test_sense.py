"""`render sense` through click's CliRunner: the JSON's keys, the plot, the refusals."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner
from magnetics.reference import require_material_response

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
POLES = ROOT / "models" / "slipway-steel-poles.toml"
KEYS = {
    "string",
    "sensitivity_v_s_per_m",
    "sensitivity_lateral_v_s_per_m",
    "balance_db",
    "along_x_m",
    "along_weight",
    "lateral_offset_m",
    "lateral_db",
    "h2_db",
    "h3_db",
    "polarization_t",
    "differential_permeability",
}


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


@pytest.fixture(autouse=True)
def _needs_the_solver():
    require_material_response()


def test_json_has_the_keys_per_coil_and_string(tmp_path):
    out, png = tmp_path / "s.json", tmp_path / "s.png"
    res = run("sense", POLES, "--json", out, "--png", png)
    assert res.exit_code == 0, res.output
    rec = json.loads(out.read_text())
    assert set(rec["coils"]) == {"coil_a", "coil_b"}
    for rows in rec["coils"].values():
        assert [r["string"] for r in rows] == [6, 5, 4, 3, 2, 1]  # lowest first, numbered as guitarists do
        for r in rows:
            assert set(r) == KEYS
            assert len(r["along_x_m"]) == len(r["along_weight"]) and len(r["lateral_offset_m"]) == len(r["lateral_db"])
            # the documented push range, −6 to +6 mm every 0.5 mm (towards the bass and the treble side), relative to rest
            assert np.allclose(r["lateral_offset_m"], np.arange(-12, 13) * 0.5e-3, rtol=0, atol=1e-12)
            assert r["lateral_db"][r["lateral_offset_m"].index(0.0)] == 0.0
    # x from the bridge saddle: the demo file's coils sit at 38 and 56 mm (its own positions), so the sensing runs around them
    xs = rec["coils"]["coil_a"][0]["along_x_m"]
    assert xs[0] < 0.038 < xs[-1]
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert "string" in res.output and "H2" in res.output


def test_the_strings_polarisation_and_the_saturation_warning(tmp_path):
    # The README's figures for the strings' polarisation at rest (µ0·|M|, largest along each string) and
    # their steel's differential permeability there, the steel saturating along the string (the
    # Fröhlich–Kennelly curve, tests/magnetics/test_string_saturation.py), measured with this command
    # 2026-12-04: 0.86 T over the screws (differential µr 33.3–49.2), 0.89 T over the steel blades
    # (31.5–45.4), 0.95–1.39 T over the NdFeB blades (10.1–28.3); a linear steel gave 1.41, 1.54 and
    # 1.49–3.66 T. Past half of the steel's saturation (2.0 T) the command says so, once.
    peaks, slopes = {}, {}
    for name in ("slipway-steel-poles", "slipway-steel-blades", "slipway-magnet-blades"):
        out = tmp_path / f"{name}.json"
        res = run("sense", ROOT / "models" / f"{name}.toml", "--json", out)
        assert res.exit_code == 0, res.output
        rows = json.loads(out.read_text())["coils"]["coil_a"]
        pol = [r["polarization_t"] for r in rows]
        dif = [r["differential_permeability"] for r in rows]
        peaks[name], slopes[name] = (min(pol), max(pol)), (round(min(dif)), round(max(dif)))
        assert all(p < 2.0 for p in pol)  # never past the steel's saturation
        warned = [line for line in res.stderr.splitlines() if line.startswith("warning:")]
        if name == "slipway-magnet-blades":
            assert len(warned) == 1 and "strings 1, 2, 3, 4, 5 at rest" in warned[0] and "up to 1.39 T of 2 T (string 2)" in warned[0]
            assert "differential permeability has fallen to 10 (from 100)" in warned[0]
        else:
            assert warned == []
    assert round(peaks["slipway-steel-poles"][1], 2) == 0.86
    assert round(peaks["slipway-steel-blades"][1], 2) == 0.89
    assert (round(peaks["slipway-magnet-blades"][0], 2), round(peaks["slipway-magnet-blades"][1], 2)) == (0.95, 1.39)
    assert slopes == {"slipway-steel-poles": (33, 49), "slipway-steel-blades": (32, 45), "slipway-magnet-blades": (10, 28)}


def test_json_to_stdout_prints_nothing_else():
    res = run("sense", POLES, "--json", "-")
    assert res.exit_code == 0
    assert json.loads(res.stdout)["design"] == "slipway-steel-poles"


def test_a_design_without_construction_is_refused():
    res = CliRunner().invoke(main, ["sense", str(ROOT / "models" / "studio-reference.toml")])
    assert res.exit_code == 1
    assert "no [construction] table" in res.output and res.output.count("\n") == 1


def test_existing_output_is_refused_before_work(tmp_path):
    out = tmp_path / "s.json"
    out.write_text("{}")
    res = CliRunner().invoke(main, ["sense", str(POLES), "--json", str(out)])
    assert res.exit_code == 1 and "--overwrite" in res.output


def test_the_sideways_sensitivity_matches_the_flux_table():
    # Two computations of the same figure: the printed/JSON sideways sensitivity (the field's
    # y-derivative along the string) against the central difference of the flux table over ±1 mm
    # sideways (the flux recomputed with the string displaced); the difference's error is the
    # table's curvature over 1 mm (central difference: error h²/6·f''', Press et al., Numerical Recipes,
    # 3rd ed., 2007, §5.7). Measured 0.27 % of the largest value; the 5 % bound is common practice, no source.
    from render.design import load_design
    from render.design.construction import sensing

    d = load_design(POLES)
    r = sensing(d)
    for name in ("coil_a", "coil_b"):
        strings = r.coil(name)
        largest = max(abs(s.sensitivity_y) for s in strings)
        assert largest > 0
        for s in strings:
            i0 = int(np.flatnonzero(np.abs(s.dz) < 1e-12)[0])
            ip, im = int(np.flatnonzero(np.abs(s.dy - 1e-3) < 1e-12)[0]), int(np.flatnonzero(np.abs(s.dy + 1e-3) < 1e-12)[0])
            diff = (s.flux[ip, i0] - s.flux[im, i0]) / 2e-3
            assert abs(diff - s.sensitivity_y) < 0.05 * largest
    rec = json.loads(run("sense", POLES, "--json", "-").stdout)
    pol = d.coil_a.hum_polarity
    assert [row["sensitivity_lateral_v_s_per_m"] for row in rec["coils"]["coil_a"]] == [pol * s.sensitivity_y for s in sorted(r.coil_a, key=lambda s: -s.string)]


def test_figures_of_strings_not_sensed_or_below_resolution_are_words():
    """Pure: the −60 dB rule and the table-agreement rule (render.analysis.sense.mark_unsensed), on made-up rows."""
    from render.analysis.sense import mark_unsensed
    from render.analysis.undefined import BELOW_RESOLUTION, NOT_SENSED

    def row(n, s):
        return {"string": n, "sensitivity_v_s_per_m": s, "sensitivity_lateral_v_s_per_m": s / 10, "along_x_m": [0.0], "along_weight": [0.0],
                "lateral_offset_m": [0.0], "lateral_db": [0.0], "h2_db": -20.0, "h3_db": -40.0, "polarization_t": 1.0, "differential_permeability": 30.0}  # fmt: skip

    # string 3 is 1e-4 of the loudest resolved one (−80 dB); string 1 is the largest but its table disagrees by 30 %
    rows = mark_unsensed([row(3, 1e-6), row(2, 0.01), row(1, 0.05)], {3: 0.01, 2: 0.01, 1: 0.3})
    assert rows[1]["balance_db"] == 0.0  # the loudest resolved string, not the unresolved larger one
    assert rows[0]["balance_db"] is None and rows[0]["balance_db_reason"] == NOT_SENSED and rows[0]["h2_db"] is None and rows[0]["lateral_db"] is None
    assert rows[0]["sensitivity_v_s_per_m"] == 1e-6  # resolved: its sensitivity stands
    assert rows[2]["sensitivity_v_s_per_m"] is None and rows[2]["sensitivity_v_s_per_m_reason"] == BELOW_RESOLUTION
    json.dumps(rows, allow_nan=False)


def test_the_demos_tables_agree_with_their_sensing_functions():
    # the README's "within 1.7 %" on the demos (measured 1.68 %, the strings saturating; 1.9 % with a linear steel): two computations of one figure (the table's central difference over
    # ±0.5 mm, its error h²/6 times the third derivative, Press et al., Numerical Recipes, 3rd ed., 2007, §5.7)
    from render.analysis.sense import TABLE_AGREEMENT, table_disagreement
    from render.design import load_design
    from render.design.construction import sensing

    worst = max(table_disagreement(s) for name in ("slipway-steel-poles", "slipway-steel-blades", "slipway-magnet-blades") for s in sensing(load_design(ROOT / "models" / f"{name}.toml")).coil_a)
    assert worst < 0.017 and worst * 5 < TABLE_AGREEMENT + 1e-12


def test_strings_beside_the_coils_print_words_and_small_sensitivities_keep_four_figures(tmp_path):
    text = POLES.read_text()
    # twelve strings 10.4 mm apart over coils 58 mm long: the outer ones lie far beyond the winding's ends
    far = text.replace('string_cores = ["0.44mm", "0.41mm", "0.36mm", "0.43mm", "0.33mm", "0.25mm"]', "string_cores = [" + ", ".join(['"0.3mm"'] * 12) + "]")
    far = far.replace('string_diameters = ["1.17mm", "0.91mm", "0.66mm", "0.43mm", "0.33mm", "0.25mm"]', "")
    far = far.replace('string_height = ["3.0mm", "2.9mm", "2.8mm", "2.7mm", "2.6mm", "2.5mm"]', 'string_height = "2.6mm"')
    far = far.replace('pole_spacing = "10.4mm"', 'poles = 2\npole_spacing = "10.4mm"')
    path = tmp_path / "far.toml"
    path.write_text(far)
    res = run("sense", path, "--json", tmp_path / "far.json")
    assert res.exit_code == 0, res.output
    assert "not sensed" in res.output and " dB " in res.output
    data = [line.split() for line in res.output.splitlines() if line.split()[:1] and line.split()[0].isdigit()]
    assert all(float(cells[3]) >= -60 for cells in data if cells[4] == "dB")  # every balance printed as a number is within 60 dB
    rows = json.loads((tmp_path / "far.json").read_text())["coils"]["coil_a"]
    assert sum(r["balance_db"] is None for r in rows) >= 4
    # a string of µr barely above 1: output a few parts in 1e4 of the demo's, printed to four significant figures
    weak = text.replace("\n[construction]\n", "\n[construction]\nstring_permeability = 1.0001\n")
    path.write_text(weak)
    out = run("sense", path).output
    data = [line.split() for line in out.splitlines() if line.split()[:1] and line.split()[0].isdigit()]
    assert len(data) == 12
    for cells in data:  # four significant figures of a value a few parts in 1e4 of the demo's, never +0.0000
        digits = cells[1].lstrip("+-").split("e")[0].replace(".", "").lstrip("0")
        assert len(digits) == 4 and float(cells[1]) != 0.0
