"""``render hum``'s words where a number would mislead: a field whose profile does not start at 1, a harmonic
the room lacks in the map and the random places, the JSON's units, and the refusals' fixes."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

import render
from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
BOBBIN = ROOT / "models" / "bobbins" / "studio-bobbin.toml"


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def rig(tmp_path, harmonics, field="2uT") -> Path:
    p = tmp_path / "rig.toml"
    p.write_text(f'[hum]\nmains = "50Hz"\nfield = "{field}"\nharmonics = {harmonics}\n', encoding="utf-8")
    return p


def test_a_profile_not_starting_at_1_prints_the_fundamentals_own_peak(tmp_path):
    # harmonic h of the field is field × harmonics[h−1] (render.analysis.hum.field_derivative), so with
    # harmonics[0] = 0.5 a 2 µT field's fundamental peaks at 1 µT; the EMF is turns_area·dB/dt (Faraday's law)
    res = run("hum", BOBBIN, "--rig", rig(tmp_path, "[0.5, 0.1, 0.3]"), "--json", tmp_path / "h.json")
    assert res.exit_code == 0, res.output
    head = res.output.splitlines()[0]
    assert head.endswith("field 2 µT reference, fundamental 1 µT peak (harmonic h peaks at the field × harmonics[h−1])")
    assert "field 2 µT peak" not in res.output
    data = json.loads((tmp_path / "h.json").read_text())
    d = render.load_design(BOBBIN)
    # coil_a's hum at the amp input at 50 Hz: its gain × turns_area × 2π·50·(2 µT × 0.5), by Faraday's law
    from render.magnetics.rejection import engine_gains

    ga, _ = engine_gains(d, [50.0])
    expected = abs(ga[0]) * d.coil_a.turns_area * 2 * np.pi * 50 * 1e-6
    assert data["harmonics"][0]["coil_a_v"] == pytest.approx(expected, rel=1e-9)
    res = run("hum", BOBBIN, "--rig", rig(tmp_path, "[0, 0.5, 0.3]"))
    assert res.output.splitlines()[0].endswith("field 2 µT reference (no fundamental; harmonic h peaks at the field × harmonics[h−1])")
    default = run("hum", BOBBIN)  # the default profile starts with 1: the field is the fundamental's peak
    assert default.output.splitlines()[0].endswith("field 1 µT peak")


def test_map_and_random_places_at_a_harmonic_the_room_lacks_are_words(tmp_path):
    res = run("hum", BOBBIN, "--rig", rig(tmp_path, "[0, 0.5, 0.3]"), "--map", "--positions", "20", "--joint", "--json", tmp_path / "h.json")
    assert res.exit_code == 0, res.output
    out = res.output
    assert "of a dipole (axis z) in the x–y plane (top faces; 0° neck side, 90° treble side): no field at this harmonic" in out
    assert "    H1    50 Hz: no field at this harmonic (the field has no such harmonic), so no hum to reject" in out
    assert "H2   100 Hz: median " in out  # the harmonics that exist keep their figures
    data = json.loads((tmp_path / "h.json").read_text())
    cells = data["map"]["rejection_db"]
    assert all(c[0] is None for row in cells for c in row) and all(c[1] is not None for row in cells for c in row)
    assert {c[0] for row in data["map"]["rejection_db_reason"] for c in row} == {"the field has no such harmonic"}
    h1, h2 = data["joint"]["harmonics"][:2]
    assert h1["median_db"] is None and h1["p5_db_reason"] == "the field has no such harmonic" and h2["median_db"] > 0
    # from Python the same: NaN in the arrays, the reason beside
    from dataclasses import replace

    d = render.load_design(BOBBIN)
    d = replace(d, hum=replace(d.hum, harmonics=(0.0, 0.5, 0.3)))
    m = render.hum_map(d, distances_m=(0.5,), bearings_deg=(0.0,))
    assert np.isnan(m.rejection_db[0, 0, 0]) and np.isfinite(m.rejection_db[0, 0, 1]) and m.absent == ("the field has no such harmonic", None, None)
    p = render.hum_positions(d, trials=20)
    assert np.all(np.isnan(p.rejection_db[:, 0])) and p.summary()[0]["absent"] == "the field has no such harmonic"


def test_the_map_plot_at_a_harmonic_the_room_lacks_says_so(tmp_path, monkeypatch):
    # the plot's cells are all empty there; the words the printed map uses go over them
    import matplotlib.figure

    texts = []
    real = matplotlib.figure.Figure.savefig

    def keep(fig, *a, **k):
        texts.extend(t.get_text() for ax in fig.axes for t in ax.texts)
        return real(fig, *a, **k)

    monkeypatch.setattr(matplotlib.figure.Figure, "savefig", keep)
    res = run("hum", BOBBIN, "--rig", rig(tmp_path, "[0, 0.5, 0.3]"), "--map-png", tmp_path / "m.png")
    assert res.exit_code == 0, res.output
    assert (tmp_path / "m.png").stat().st_size > 0
    assert "no field at this harmonic (the field has no such harmonic),\nso no hum to reject" in texts
    texts.clear()
    assert run("hum", BOBBIN, "--map-png", tmp_path / "m2.png").exit_code == 0  # a room with a fundamental: figures, no words
    assert texts and not any("no field" in t for t in texts)


def test_the_json_says_its_amplitudes_are_peak(tmp_path):
    res = run("hum", BOBBIN, "--json", tmp_path / "h.json")
    assert res.exit_code == 0
    data = json.loads((tmp_path / "h.json").read_text())
    for key in ("output_v", "coil_a_v", "coil_b_v"):
        assert data["units"][key].startswith("V peak") and key in data["harmonics"][0]
    assert data["units"]["total_v_rms"].startswith("V rms")
    # peak, checked: the total's rms is the harmonics' peaks over √2, summed in power (Parseval)
    peaks = np.array([h["output_v"] for h in data["harmonics"]])
    assert data["total_v_rms"] == pytest.approx(np.sqrt(np.sum(peaks**2) / 2), rel=1e-9)


def test_a_map_too_near_a_coil_names_what_the_command_line_has(tmp_path):
    # coils 0.3 m apart: each centre 0.15 m from the midpoint, so the map's 0.2 m ring passes 5 cm from each
    text = REF.read_text(encoding="utf-8").replace('position = "56mm"', 'position = "338mm"')
    wide = tmp_path / "wide.toml"
    wide.write_text(text, encoding="utf-8")
    res = run("hum", wide, "--map", "--json", tmp_path / "o.json")
    assert res.exit_code == 1 and not (tmp_path / "o.json").exists()
    line = res.output.strip().splitlines()[-1]
    assert "--map: the map's place at 0.2 m, bearing 0°, is 5 cm from coil_b's centre, closer than 10 cm" in line
    assert "render.hum_map(design, distances_m=[...]) with distances of 0.25 m or more" in line and "--distances" not in line


def test_a_map_place_inside_a_winding_names_coil_a_and_a_fix_that_exists():
    from render.magnetics.coil import CoilGeometry, coil_pair
    from render.magnetics.rejection import position_monte_carlo, rejection_map

    big = CoilGeometry(turns=1000, length=0.3, width=0.02, window_length=0.28, window_width=0.005, height=0.01)
    coils = coil_pair(big, big, position_a=0.045, position_b=0.055)
    g = np.ones(1, dtype=complex)
    with pytest.raises(render.InputError) as e:
        rejection_map(coils, from_a=g, from_b=g, frequency_hz=[50.0], distances_m=[0.12], bearings_deg=[90.0])
    assert "lies within coil_a's winding: larger distances keep it outside; from Python give render.hum_map(design, distances_m=[...])" in str(e.value)
    with pytest.raises(render.InputError) as e:
        position_monte_carlo(coils, from_a=g, from_b=g, frequency_hz=[50.0], trials=200, shell=(0.01, 0.05))
    assert "winding: give the random sources' shell a larger inner radius (--shell INNER OUTER" in str(e.value)


def test_a_source_of_no_strength_and_too_many_sources_say_what_to_do():
    with pytest.raises(render.InputError, match=r"^DipoleSource moment=0: a source of no strength makes no hum; give its moment \(e.g. moment=0.05, in A·m²\), or leave the source out$"):
        render.DipoleSource(moment=0, at=(0.5, 0, 0))
    with pytest.raises(render.InputError, match=r"^UniformSource field=0: .* leave the source out$"):
        render.UniformSource(field=0.0)
    d = render.load_design(REF)
    with pytest.raises(render.ArgumentError, match=r"^sources=65 sources: at most 64 sources are allowed; merge sources .* or leave out the weakest$"):
        render.hum(d, sources=[render.DipoleSource(moment=0.05, at=(1.0, 0, 0))] * 65)


def test_a_rig_with_65_sources_and_a_coil_without_turns_area(tmp_path):
    src = '[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = ["1m", "0m", "0m"]\n'
    p = tmp_path / "many.toml"
    p.write_text('[hum]\nmains = "50Hz"\n' + src * 65, encoding="utf-8")
    res = run("hum", REF, "--rig", p)
    assert res.exit_code == 1
    assert res.output.strip().endswith(
        "source: 65 [[hum.source]] tables; at most 64 sources are allowed; merge sources that sit close together into one (seen from afar, dipoles side by side act as one of their summed moment) or leave out the weakest"
    )
    lines = [ln for ln in REF.read_text(encoding="utf-8").splitlines(keepends=True) if not ln.startswith("turns_area")]
    bare = tmp_path / "bare.toml"
    bare.write_text("".join(lines), encoding="utf-8")
    res = run("hum", bare)
    assert res.exit_code == 1
    assert "missing required key 'turns_area'" in res.output and "or describe the coil's turns in a [coil_a.geometry] table instead" in res.output
