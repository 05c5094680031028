"""`render hum` (and the library's `render.hum`, `hum_map`, `hum_positions`) with hum sources in space.

Outside references: the field of a point dipole (Jackson, *Classical
Electrodynamics*, 3rd ed., 1999, eq. 5.56; on its equator B = −µ0·m/(4π·ρ³)
along the moment, and its B_z changes sign where 3·cos²θ = 1, θ = 54.74° from
the axis); Faraday's law for a uniform field (flux linkage N·A·B, so a uniform
+z source is the one-number room); and, for the command's own figures, the
library calls the README documents (the command line is their face).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

import render
from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
ODD = ROOT / "models" / "odd-pair.toml"
BOBBIN = ROOT / "models" / "bobbins" / "studio-bobbin.toml"
NEAR = ROOT / "rigs" / "near-transformer.toml"
MU0_4PI = 1.25663706212e-6 / (4 * math.pi)  # T·m/A: CODATA 2018 µ0 (CODATA 2022 differs by 7e-10 of it)
SPACING = 0.056 - 0.038  # m, the demo designs' coil positions


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args], catch_exceptions=False)


def rig(tmp_path, body, name="rig.toml", head='[hum]\nmains = "50Hz"\n'):
    path = tmp_path / name
    path.write_text(head + body)
    return path


def dipole(at, moment=0.05, axis="[0, 0, 1]"):
    return f'[[hum.source]]\nkind = "dipole"\nmoment = {moment}\nat = [{", ".join(f"{x!r}" for x in at)}]\naxis = {axis}\n'


def hum_json(*args):
    res = run("hum", *args, "--json", "-")
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout), res


def equator_rejection(r, s=SPACING):
    """Rejection of two equal point coils at r ∓ s/2 on a z-dipole's equator, networks balanced: 1/ρ³ (Jackson eq. 5.56)."""
    return -20 * math.log10(1 - ((r - s / 2) / (r + s / 2)) ** 3)


# ----------------------------------------------------------------------------
# Without sources nothing changes; a uniform +z source is the one-number room


def test_uniform_z_source_reproduces_the_one_number_room(tmp_path):
    # Faraday's law for a uniform field: each coil links turns_area·B, so a uniform source along +z
    # of the room's field and profile is the same room, sign included; the printed table is identical
    plain = rig(tmp_path, 'field = "1uT"\n', "plain.toml")
    source = rig(tmp_path, '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [0, 0, 1]\n', "source.toml")
    a, ra = hum_json(ODD, "--rig", plain)
    b, rb = hum_json(ODD, "--rig", source)
    assert a["field_t"] == 1e-6 and b["field_t"] is None and b["sources"][0]["kind"] == "uniform"
    for x, y in zip(a["harmonics"], b["harmonics"]):
        for key in ("rejection_db", "output_v", "coil_a_v", "coil_b_v"):
            assert y[key] == pytest.approx(x[key], rel=1e-12, abs=0)
    assert b["total_v_rms"] == pytest.approx(a["total_v_rms"], rel=1e-12)
    assert b["passive"]["total_v_rms"] == pytest.approx(a["passive"]["total_v_rms"], rel=1e-12)
    ta = run("hum", ODD, "--rig", plain).output.splitlines()
    tb = run("hum", ODD, "--rig", source).output.splitlines()
    assert ta[2:] == [line for line in tb[3:]]  # after the header and the source's line, the same text


def test_without_sources_the_report_is_todays(tmp_path):
    # the design's own [hum] (no sources): the library's figures are the one-number room's, field_t set
    h = render.hum(render.load_design(ODD))
    assert h.field_t == 1e-6 and h.sources == () and h.warnings == ()
    assert h.harmonics[0].rejection_db == pytest.approx(28.0, abs=0.05)  # the README's worked example (render hum odd-pair)


def test_uniform_z_source_renders_the_same_hum_only_wavs(tmp_path):
    # the time-domain hum-only render through the source path: the same samples to float rounding (Faraday, as above)
    import soundfile as sf

    plain = rig(tmp_path, 'field = "1uT"\n', "plain.toml")
    source = rig(tmp_path, '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\n', "source.toml")
    for name, r in (("a", plain), ("b", source)):
        assert run("hum", ODD, "--rig", r, "--out", tmp_path / name).exit_code == 0
    for suffix in ("hum", "hum-coil_a", "hum-coil_b"):
        x, _ = sf.read(tmp_path / "a" / f"odd-pair-{suffix}.wav")
        y, _ = sf.read(tmp_path / "b" / f"odd-pair-{suffix}.wav")
        assert np.max(np.abs(x - y)) < 1e-6 * np.max(np.abs(x))  # float32 files at one full scale


# ----------------------------------------------------------------------------
# Near a dipole: the gradient bounds the rejection


@pytest.mark.parametrize("r", [0.5, 1.0, 2.0])
def test_matched_design_near_an_in_line_dipole_is_bounded_by_the_gradient(tmp_path, r):
    # A z-dipole on the strings' line (x axis) is on its own equator: B_z = −µ0 m/(4π ρ³) (Jackson eq. 5.56).
    # The coils 18 mm apart then differ by about 3s/r, so a matched design rejects about 20·log10(r/3s),
    # 19 dB at 0.5 m, not the 71 dB of a uniform field.
    data, res = hum_json(BOBBIN, "--rig", rig(tmp_path, dipole([f"{r}m", "0m", "0m"])))
    rej = data["harmonics"][0]["rejection_db"]
    assert rej == pytest.approx(equator_rejection(r), abs=0.1)  # the windings' size changes it by far less
    assert 0 < rej - 20 * math.log10(r / (3 * SPACING)) < 0.5  # first-order gradient estimate, its next term ≤ 0.47 dB from 0.5 m out
    assert rej < 40
    printed = run("hum", BOBBIN, "--rig", rig(tmp_path, dipole([f"{r}m", "0m", "0m"]), "again.toml")).output
    assert f"{rej:6.1f} dB" in printed.splitlines()[3] and "71.1 dB" not in printed


def test_point_coils_see_the_dipole_at_their_centres_and_warn(tmp_path):
    # Without geometry each coil links turns_area·B_z at its centre: with B_z = −µ0 m/(4π ρ³) on the
    # dipole's equator (Jackson eq. 5.56), exactly; and a one-line warning says it is an approximation
    r, m = 0.5, 0.05
    data, res = hum_json(REF, "--rig", rig(tmp_path, dipole([f"{r}m", "0m", "0m"], moment=m)))
    d = render.load_design(REF)
    link = data["sources"][0]["linkage_wb"]
    assert link["coil_a"] == pytest.approx(-d.coil_a.turns_area * MU0_4PI * m / (r + SPACING / 2) ** 3, rel=2e-9)
    assert link["coil_b"] == pytest.approx(-d.coil_b.turns_area * MU0_4PI * m / (r - SPACING / 2) ** 3, rel=2e-9)
    assert data["harmonics"][0]["rejection_db"] == pytest.approx(equator_rejection(r), abs=0.05)
    warnings = [line for line in res.stderr.splitlines() if line.startswith("warning:")]
    assert len(warnings) == 1 and "no geometry" in warnings[0] and data["warnings"] == [warnings[0][len("warning: ") :]]


def test_json_has_each_coil_and_each_source_per_harmonic(tmp_path):
    # two sources: the shares add as phasors (linear superposition), the coil voltages are the shares' sums
    body = dipole(["0.5m", "0.1m", "0.05m"]) + '[[hum.source]]\nkind = "uniform"\nfield = "0.1uT"\naxis = [0, 0, 1]\nphase = 40\n'
    data, _ = hum_json(BOBBIN, "--rig", rig(tmp_path, body))
    assert len(data["harmonics"]) == 9 and [s["kind"] for s in data["sources"]] == ["dipole", "uniform"]
    for row in data["harmonics"]:
        assert {"rejection_db", "coil_a_v", "coil_b_v", "output_v", "sources"} <= set(row)
        assert row["rejection_db"] == pytest.approx(20 * math.log10(max(row["coil_a_v"], row["coil_b_v"]) / row["output_v"]), abs=1e-9)
        shares = row["sources"]
        assert len(shares) == 2 and all({"rejection_db", "coil_a_v", "coil_b_v", "output_v"} <= set(s) for s in shares)
        assert row["coil_a_v"] <= shares[0]["coil_a_v"] + shares[1]["coil_a_v"] + 1e-18  # the triangle inequality of phasors
    lib = render.hum(render.load_design(BOBBIN), sources=[render.DipoleSource(moment=0.05, at=(0.5, 0.1, 0.05)), render.UniformSource(field=1e-7, phase=40)])
    assert [h.coil_b_v for h in lib.harmonics] == pytest.approx([row["coil_b_v"] for row in data["harmonics"]], rel=1e-12)


def test_undefined_figures_are_words_and_null_with_a_reason(tmp_path):
    # a uniform field across the coils' axes (along x) links no turn (flux = N·A·B·cos 90° = 0): no hum at all
    data, _ = hum_json(BOBBIN, "--rig", rig(tmp_path, '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [1, 0, 0]\n'))
    row = data["harmonics"][0]
    assert row["rejection_db"] is None and row["rejection_db_reason"].startswith("no hum") and row["output_v"] == 0
    assert data["note_to_hum_db"] is None and data["note_to_hum_db_reason"] == "no hum: no source links either coil"
    scale = {s["circuit"]: s for s in data["hum_and_noise"]}
    assert scale["active"]["hum_over_noise_db"] is None and scale["active"]["hum_over_noise_db_reason"] == "no hum: no source links either coil"
    text = run("hum", BOBBIN, "--rig", rig(tmp_path, '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [1, 0, 0]\n', "x.toml")).output
    assert "no hum" in text.splitlines()[3] and "total hum none (no hum: no source links either coil)" in text
    assert "cancel" not in text and "noise (no source links the coils)" in text
    # render check's one figure says the same, not "cancels exactly"
    res = run("check", BOBBIN, "--rig", rig(tmp_path, '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [1, 0, 0]\n', "c.toml"), "--json", "-")
    assert res.exit_code == 0, res.output
    fig = json.loads(res.stdout)["designs"][0]["figures"]
    assert fig["hum_rejection_db"] is None and fig["hum_rejection_db_reason"] == "no hum: no source links either coil"
    assert fig["hum_rejection_harmonic"] is None


def test_check_quotes_a_source_profile_without_fundamental_at_its_lowest_harmonic_as_hum_does(tmp_path):
    # a dipole with only a third harmonic: none to reject at the fundamental, so check quotes H3, the
    # harmonic render hum's Monte Carlo quotes (render.analysis.hum.quoted_harmonic), with hum's own figure there
    path = rig(tmp_path, "harmonics = [0, 0, 1]\n" + dipole(["0.5m", "0m", "0m"], axis="[1, 0, 0]"), "c.toml")
    res = run("check", BOBBIN, "--rig", path, "--json", "-")
    assert res.exit_code == 0, res.output
    fig = json.loads(res.stdout)["designs"][0]["figures"]
    hum, _ = hum_json(BOBBIN, "--rig", path)
    assert fig["hum_rejection_harmonic"] == 3 and hum["harmonics"][0]["rejection_db"] is None
    assert fig["hum_rejection_db"] == pytest.approx(hum["harmonics"][2]["rejection_db"], abs=1e-9)
    text = run("check", BOBBIN, "--rig", path).output
    assert f"hum rejection     {fig['hum_rejection_db']:.1f} dB at H3, 150 Hz, the lowest harmonic with hum" in text


MATCHED = ROOT / "tests" / "smoke" / "designs" / "edge-matched-coils.toml"
SYMMETRIC_SOURCES = {
    "uniform along z": '[[hum.source]]\nkind = "uniform"\nfield = "1uT"\naxis = [0, 0, 1]\n',
    "dipole broadside": dipole(["0m", "0.5m", "0m"]),
    "dipole straight above": dipole(["0m", "0m", "0.5m"]),
}


@pytest.mark.parametrize("body", SYMMETRIC_SOURCES.values(), ids=SYMMETRIC_SOURCES.keys())
def test_exact_cancellation_prints_words_for_every_source_kind(tmp_path, body):
    # Symmetry: the mirror x → −x swaps the two coils (placed at ±s/2 on x). A uniform field, and a z-dipole on the
    # plane x = 0 (its field is even in x, Jackson eq. 5.56), link both coils alike, so a pair whose two paths are
    # equal (the passive reference of equal coils; a matched design) sums to zero. Quadrature leaves rounding
    # (about 1e-17 of each coil's part): that is zero, in words and as null plus a reason, for every kind alike.
    path = rig(tmp_path, body)
    data, _ = hum_json(BOBBIN, "--rig", path)
    assert data["passive"]["total_v_rms"] == 0.0
    assert data["passive"]["note_to_hum_db"] is None and data["passive"]["note_to_hum_db_reason"].startswith("no hum")
    passive = [s for s in data["hum_and_noise"] if s["circuit"] == "passive reference"][0]
    assert passive["hum_v_rms"] == 0.0 and passive["signal_to_hum_db"] is None and passive["signal_to_hum_db_reason"].startswith("no hum")
    text = run("hum", BOBBIN, "--rig", path).output
    assert "passive reference none (no hum: the coils cancel exactly)" in text
    scale = {line.split("  ")[1].strip(): line for line in text.splitlines() if line.startswith("  ") and not line.startswith("   ")}
    assert scale["hum"].rstrip().endswith("none: it cancels exactly") and scale["signal to hum"].rstrip().endswith("no hum")
    matched, _ = hum_json(MATCHED, "--rig", path)
    for row in matched["harmonics"]:
        assert row["rejection_db"] is None and row["rejection_db_reason"] == "infinite: the coils' hum cancels exactly" and row["output_v"] == 0.0
    assert matched["total_v_rms"] == 0.0 and matched["note_to_hum_db"] is None


# ----------------------------------------------------------------------------
# The map and the random places


def test_map_table_json_and_plot(tmp_path):
    png = tmp_path / "map.png"
    data, res = hum_json(BOBBIN, "--map-png", png)
    m = data["map"]
    assert m["plane"] == "xy" and m["distance_m"][0] == 0.2 and m["distance_m"][-1] == 3.0 and m["bearing_deg"][6] == 90.0
    rej = np.array(m["rejection_db"], dtype=float)  # [distance][bearing][harmonic]
    uniform = data["harmonics"][0]["rejection_db"]
    # in line (0° and 180°): the equator's 1/ρ³ law; broadside (90°): both coils equidistant, as a uniform field
    for i, r in enumerate(m["distance_m"]):
        if r >= 0.5:
            assert rej[i, 0, 0] == pytest.approx(equator_rejection(r), abs=0.1)
            assert rej[i, -1, 0] == pytest.approx(rej[i, 0, 0], abs=0.05)  # mirror images of one another
        assert rej[i, 6, 0] == pytest.approx(uniform, abs=0.05)
    lib = render.hum_map(render.load_design(BOBBIN))
    np.testing.assert_allclose(lib.rejection_db, rej, rtol=1e-12)
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    printed = run("hum", BOBBIN, "--map").output
    assert "0.50 m   19.8" in printed and "rejection (dB) at 50 Hz of a dipole (axis z) in the x–y plane" in printed


def test_map_of_a_matched_pair_has_words_where_it_cancels_exactly():
    # broadside (90° in the x–y plane) both coils lie at the same distance from a z-dipole and link the same flux
    # (mirror symmetry x → −x, Jackson eq. 5.56): a matched pair cancels exactly there, at every distance
    data, _ = hum_json(MATCHED, "--map")
    m = data["map"]
    for i in range(len(m["distance_m"])):
        assert m["rejection_db"][i][6][0] is None and m["rejection_db_reason"][i][6][0] == "infinite: the coils' hum cancels exactly"
        assert m["rejection_db"][i][0][0] is not None and m["rejection_db_reason"][i][0][0] is None
    printed = run("hum", MATCHED, "--map").output
    rows = [line for line in printed.splitlines() if line.strip().endswith(tuple("0123456789")) and " m " in line]
    assert len(rows) == 8 and all(line.split()[8] == "exact" for line in rows) and "200.0" not in printed
    assert "exact: infinite: the coils' hum cancels exactly" in printed


def test_map_in_the_vertical_plane_dips_where_the_dipoles_bz_changes_sign():
    # Jackson eq. 5.56: a z-dipole's B_z ∝ 3cos²θ − 1 vanishes at θ = 54.74° from its axis, i.e. 35.26° above the
    # plane of the top faces. There the common flux is gone and the coils' difference wins: the rejection dips
    # below 0 dB within a degree of that bearing.
    m = render.hum_map(render.load_design(BOBBIN), plane="xz", distances_m=[1.0], bearings_deg=np.arange(33.0, 38.0, 0.02))
    r = m.rejection_db[0, :, 0]
    where = m.bearing_deg[np.argmin(r)]
    assert r.min() < 0 and abs(where - math.degrees(math.atan(1 / math.sqrt(2)))) < 1.0
    printed = run("hum", BOBBIN, "--map", "--map-plane", "xz").output
    assert "x–z plane" in printed and "90° straight above" in printed
    assert run("hum", BOBBIN, "--map-plane", "xz").output == printed  # the plane alone asks for the map
    assert "x–y plane" in run("hum", BOBBIN, "--map-plane", "xy").output


def test_map_bearings_reach_below_the_pickup():
    # --map-bearings takes a list or start:stop:step. Below the top faces the z-dipole's B_z changes sign at
    # the mirror bearing, -35.26° (Jackson eq. 5.56: B_z ∝ 3cos²θ − 1 is even in z), so the rejection dips
    # there too. The figures printed are the library's map at those bearings.
    m = render.hum_map(render.load_design(BOBBIN), plane="xz", distances_m=[1.0], bearings_deg=np.arange(-38.0, -33.0, 0.02))
    r = m.rejection_db[0, :, 0]
    assert r.min() < 0 and abs(m.bearing_deg[np.argmin(r)] + math.degrees(math.atan(1 / math.sqrt(2)))) < 1.0
    data, _ = hum_json(BOBBIN, "--map-plane", "xz", "--map-bearings=-90:90:30")
    assert data["map"]["bearing_deg"] == [-90.0, -60.0, -30.0, 0.0, 30.0, 60.0, 90.0]
    lib = render.hum_map(render.load_design(BOBBIN), plane="xz", bearings_deg=[-90.0, -60.0, -30.0, 0.0, 30.0, 60.0, 90.0])
    assert np.allclose(np.array(data["map"]["rejection_db"], dtype=float)[:, :, 0], lib.rejection_db[:, :, 0], rtol=1e-12)
    listed, _ = hum_json(BOBBIN, "--map-bearings", "0,45,90")  # the bearings alone ask for the map
    assert listed["map"]["bearing_deg"] == [0.0, 45.0, 90.0] and listed["map"]["plane"] == "xy"
    for bad in ("abc", "0:10:-1", "0:400:5"):
        res = run("hum", BOBBIN, f"--map-bearings={bad}")
        assert res.exit_code == 1 and res.output.count("\n") == 1 and "--map-bearings" in res.output


def test_positions_and_joint_are_reported_apart_from_the_tolerances(tmp_path):
    d = render.load_design(BOBBIN)
    data, _ = hum_json(BOBBIN, "--positions", 400, "--tolerance", "1%", "--trials", 400, "--seed", 3)
    lib = render.hum_positions(d, trials=400, seed=3)
    assert [r["median_db"] for r in data["positions"]["harmonics"]] == pytest.approx([r["median_db"] for r in lib.summary()], rel=1e-12)
    assert data["positions"]["shell_m"] == [0.3, 2.0] and "monte_carlo" in data and "tolerances" not in data["positions"]
    joint, _ = hum_json(BOBBIN, "--positions", 400, "--joint", "--tolerance", "1%", "--seed", 3, "--shell", "0.5m", "1m")
    lj = render.hum_positions(d, trials=400, seed=3, joint=True, tolerances={"resistor": 0.01, "capacitor": 0.01, "turns": 0.01}, shell=(0.5, 1.0))
    assert joint["joint"]["harmonics"][0]["p5_db"] == pytest.approx(lj.summary()[0]["p5_db"], rel=1e-12)
    assert joint["joint"]["tolerances"]["capacitor"] == 0.01 and joint["joint"]["shell_m"] == [0.5, 1.0]
    # every random place lies in the shell (the draws' definition)
    r = np.linalg.norm(lj.places_m, axis=1)
    assert r.min() >= 0.5 and r.max() <= 1.0


def test_tolerances_with_sources_use_each_coils_own_flux(tmp_path):
    # with zero tolerances every trial is the nominal design: the Monte Carlo reads the table's figure, not
    # the one-number room's 71 dB
    near = rig(tmp_path, dipole(["0.5m", "0m", "0m"]))
    data, _ = hum_json(BOBBIN, "--rig", near, "--tolerance", "0%", "--trials", 20)
    assert data["monte_carlo"]["harmonics"][0]["median_db"] == pytest.approx(data["harmonics"][0]["rejection_db"], abs=1e-9)


# ----------------------------------------------------------------------------
# Renders in time use the sources


def test_hum_only_render_measures_the_exact_rejection(tmp_path):
    near = rig(tmp_path, dipole(["0.5m", "0m", "0m"]))
    data, _ = hum_json(BOBBIN, "--rig", near, "--out", tmp_path / "h")
    for exact, measured in zip(data["harmonics"], data["measured"]["harmonics"]):
        assert measured["rejection_db"] == pytest.approx(exact["rejection_db"], abs=0.01)
        assert measured["output_v"] == pytest.approx(exact["output_v"], rel=1e-3)


def test_clips_hum_uses_the_rigs_sources(tmp_path):
    # the clip's steady hum at each mains harmonic (string at rest) is the table's, through the same networks
    from render.analysis.harmonics import harmonic_amplitudes

    d = render.load_design(BOBBIN)
    near = render.load_rig(NEAR)
    fs = 48000
    clip = render.render_clip(d, np.zeros(2 * fs), sample_rate=fs, rig=near, passive=True)
    table = render.hum(d, rig=near)
    f = [h.frequency_hz for h in table.harmonics]
    got = np.abs(harmonic_amplitudes(clip.volts[fs:], sample_rate=fs, frequencies_hz=f))
    np.testing.assert_allclose(got, [h.output_v for h in table.harmonics], rtol=1e-3)  # the output network's start-up is under 0.1 % after 1 s
    passive = np.abs(harmonic_amplitudes(clip.passive_volts[fs:], sample_rate=fs, frequencies_hz=f))
    assert np.sqrt(np.sum(passive**2) / 2) == pytest.approx(table.passive_total_v_rms, rel=1e-3)
    res = run("clips", REF, "--rig", NEAR, "--seconds", 1, "--no-plots", "--out", tmp_path / "c")
    assert res.exit_code == 0 and "no geometry" in res.stderr
    # the clip's record says, as render hum does (field_t null), that no uniform field is in the room beside the sources
    rec = json.loads((tmp_path / "c" / "studio-reference.json").read_text())
    hum, _ = hum_json(REF, "--rig", NEAR)
    assert hum["field_t"] is None and rec["hum"]["field"] is None and rec["design_values"]["hum"]["field"] is None
    assert "whole field" in rec["hum"]["field_reason"] and rec["hum"]["sources"][0]["kind"] == "dipole"


def test_check_and_figures_read_the_sources(tmp_path):
    res = run("check", BOBBIN, "--rig", NEAR)
    assert "hum rejection     19.8 dB at the mains fundamental" in res.output
    assert "turns_area 0.615 m² (entered 0.36 m²), mean turn 142 mm" in res.output


@pytest.mark.parametrize(
    "command",
    [
        "render hum models/bobbins/studio-bobbin.toml --rig rigs/near-transformer.toml",
        "render check models/bobbins/studio-bobbin.toml",
        "render hum models/bobbins/studio-bobbin.toml --map --map-png outputs/bobbin-map.png --positions 20000",
    ],
)
def test_the_readmes_hum_source_examples_print_what_it_shows(tmp_path, monkeypatch, command):
    # a contract between the README and the tool (no outside source): every line it shows, except "...", is printed
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    block = text[text.index("$ " + command + "\n") :].split("```")[0].splitlines()[1:]
    monkeypatch.chdir(ROOT)
    args = [a if not a.startswith("outputs/") else str(tmp_path / Path(a).name) for a in command.split()[1:]]
    out = run(*args).output.splitlines()
    shown = [line for line in block if line.strip() != "..."]
    assert shown and all(line in out for line in shown), [line for line in shown if line not in out]


def test_turns_sweep_moves_each_coils_flux_with_its_turns():
    # Faraday: the flux linkage adds over the turns, so ±5 % turns on coil_b scales its linkage by 1 ± 0.05. On the
    # in-line dipole's equator the coils link in the ratio ((r + s/2)/(r − s/2))³ (Jackson eq. 5.56), so with balanced
    # networks the rejection is 20·log10(k/|k − 1|), k that ratio times the turns factor (coil_b is the nearer)
    res = run("check", BOBBIN, "--rig", NEAR, "--turns-sweep", 5, "--json", "-")
    rows = json.loads(res.stdout)["designs"][0]["turns_sweep"]
    r, s = 0.5, SPACING
    for row in rows:
        k = ((r + s / 2) / (r - s / 2)) ** 3 * (1 + row["turns_percent"] / 100 if row["coils"] == "coil_b" else 1.0)
        assert row["hum_rejection_db"] == pytest.approx(20 * math.log10(k / abs(k - 1)), abs=0.15)


def test_the_readmes_transformer_table_is_what_render_hum_writes(tmp_path):
    from render.units import microvolts

    # the README's table of studio-bobbin near a small transformer: each row a `render hum --json` with that one
    # dipole (the near-transformer rig with its `at` moved; the first row without a rig), printed as the table does
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    table = text[text.index("| source | rejection at 50 Hz (dB) |") :].split("\n\n")[0].splitlines()[2:]
    c = math.sqrt(0.5)
    places = {
        "0.5 m, in line (neck side)": (0.5, 0, 0),
        "0.5 m, 45° below, neck side": (0.5 * c, 0, -0.5 * c),
        "0.5 m, broadside (treble side)": (0, 0.5, 0),
        "0.5 m, straight above": (0, 0, 0.5),
        "2 m, in line (neck side)": (2, 0, 0),
        "2 m, 45° below, neck side": (2 * c, 0, -2 * c),
        "2 m, broadside": (0, 2, 0),
    }
    base = NEAR.read_text(encoding="utf-8")
    assert len(table) == len(places) + 1
    for i, row in enumerate(table):
        cells = [x.strip() for x in row.strip("|").split("|")]
        if i == 0:
            data, _ = hum_json(BOBBIN)
        else:
            at = ", ".join(f'"{x!r}m"' for x in places[cells[0]])
            path = tmp_path / f"{i}.toml"
            path.write_text("\n".join(f"at = [{at}]" if line.startswith("at = ") else line for line in base.splitlines()))
            data, _ = hum_json(BOBBIN, "--rig", path)
        h = data["harmonics"][0]
        uv = lambda v: microvolts(v, 0, 3).removesuffix(" µV")  # noqa: E731 - in µV, another prefix where µV would read 0.000
        ours = [f"{h['rejection_db']:.1f}", f"{h['coil_a_v'] * 1e6:.2f}", uv(h["output_v"]), uv(data["total_v_rms"]), f"{data['hum_and_noise'][0]['signal_to_hum_db']:.0f}"]
        assert cells[1:] == ours, cells[0]
