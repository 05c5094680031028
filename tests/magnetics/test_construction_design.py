"""The [construction] table of a design file: what it derives, and what it refuses."""

from __future__ import annotations

import copy
from pathlib import Path

import numpy as np
import pytest
from magnetics.reference import require_magpylib, require_material_response

from render.design import load_design, parse_design
from render.design.construction import sensing
from render.errors import InputError
from render.io.toml import read_toml

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "models" / "slipway-steel-poles.toml"


def _doc():
    data, _ = read_toml(DEMO)
    return data


def _refused(data, match):
    with pytest.raises(InputError, match=match) as info:
        parse_design(data, source="x.toml")
    assert "\n" not in str(info.value)  # one line


def test_demo_derives_sensitivity_polarity_and_aperture():
    require_magpylib()
    require_material_response()
    d = load_design(DEMO)
    r = sensing(d)
    assert d.construction is not None and r is not None
    for name in ("coil_a", "coil_b"):
        c = getattr(d, name)
        s = np.array([x.sensitivity_z for x in r.coil(name)])
        assert c.sensitivity == pytest.approx(np.abs(s).mean())  # the mean over the strings (render.design.construction)
        assert c.signal_polarity == int(np.sign(c.hum_polarity * s.sum()))
        assert 0.0 < c.aperture < 0.05
        # the geometry's sum of turns' areas, N·[W_w·L_w + (W_w·ΔL + L_w·ΔW)/2 + ΔW·ΔL/3] (render.magnetics.coil)
        ww, wl, dw, dl = 4.6e-3, 58e-3, 9.4e-3, 10e-3
        assert c.geometry.turns_area == pytest.approx(1200 * (ww * wl + (ww * dl + wl * dw) / 2 + dw * dl / 3), rel=1e-12)
        # the one-number room's turns_area adds the steel's moment per ampere (render.magnetics.coil_steel)
        assert c.turns_area == pytest.approx(c.geometry.turns_area + r.steel[0 if name == "coil_a" else 1].turns_area[2], rel=1e-12)
    # the demo's poles: coil_a's flux rises with an upward string (render.magnetics.construction), as the
    # default polarities of designs without a construction have it
    assert (d.coil_a.signal_polarity, d.coil_b.signal_polarity) == (1, -1)


def test_designs_without_a_construction_are_unchanged():
    d = load_design(ROOT / "models" / "studio-reference.toml")
    assert d.construction is None and sensing(d) is None
    assert d.coil_a.sensitivity == 0.045  # as typed in the file


@pytest.mark.parametrize(
    "change, match",
    [
        (lambda t: t["coil_a"].update(signal_polarity=1), "derived"),
        (lambda t: t["coil_b"].update(sensitivity=0.04), "derived"),
        (lambda t: t["coil_a"].update(aperture="8mm"), "derived"),
        (lambda t: t["coil_a"].pop("geometry"), r"needs \[coil_a.geometry\]"),
        (lambda t: t["construction"].update(kind="steel-rods"), "expected one of"),
        (lambda t: t["construction"].update(kind="steel-pole"), "expected one of .*; did you mean 'steel-poles'\\?$"),
        (lambda t: t["construction"].update(magnet_grade="unobtanium"), "expected one of"),
        (lambda t: t["construction"].pop("steel_width"), "needs steel_width"),
        (lambda t: t["construction"].update(steel_length="50mm"), "steel_length given for steel-poles"),
        (lambda t: t["construction"].update(string_diameters=["1mm"]), "1 values for 6 string_cores"),
        (lambda t: t["construction"].update(string_height=["3mm", "3mm"]), "2 values for 6 strings"),
        (lambda t: t["construction"].update(string_height="0.5mm"), "raise the strings"),
        (lambda t: t["construction"].update(string_diameters=["0.3mm"] * 6), "smaller than its core"),
        (lambda t: t["construction"].update(steel_width="8mm"), "do not fit"),
        (lambda t: t["construction"].update(kind="magnet-blades"), "magnet-blades has no steel"),
        (lambda t: (t["construction"].pop("magnet_grade"), None), "give magnet_grade"),
        (lambda t: t["construction"].update(colour="blue"), "unknown key"),
        # the strings' saturation polarisation: 0.1 to 2.5 T (iron–cobalt alloys, the highest, saturate near 2.45 T: from memory)
        (lambda t: t["construction"].update(string_saturation="3T"), r"string_saturation=.*3T.*expected"),
    ],
)
def test_refusals_are_one_line(change, match):
    data = copy.deepcopy(_doc())
    change(data)
    _refused(data, match)


def test_the_default_set_skips_constructions_where_the_magnetics_packages_are_missing(monkeypatch, tmp_path):
    # Python 3.10 has no magpylib-material-response: `render clips` with no designs named renders
    # the rest and says which it left out (a named design is refused instead)
    import importlib.util
    import shutil
    import warnings

    from render.design.loading import load_designs
    from render.errors import SkippedDesign

    models = tmp_path / "models"
    models.mkdir()
    root = Path(__file__).resolve().parents[2] / "models"
    for name in ("studio-reference.toml", "slipway-steel-poles.toml"):
        shutil.copy(root / name, models / name)
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == "magpylib_material_response" else real(name, *a))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        designs, _ = load_designs(models=models)
    assert [d.name for d in designs] == ["studio-reference"]
    assert [str(w.message) for w in caught if w.category is SkippedDesign] == [
        f"{models / 'slipway-steel-poles.toml'}: skipped: [construction] needs magpylib and magpylib-material-response (Python 3.11 or later)"
    ]


def test_a_named_construction_is_refused_where_the_packages_are_missing_even_when_its_solve_is_cached(monkeypatch):
    # the same design behaves the same on every machine with the same packages: a cached solve does not hide a missing solver
    require_magpylib()
    require_material_response()
    import importlib.util

    load_design(DEMO)  # the solve is now cached
    real = importlib.util.find_spec
    monkeypatch.setattr(importlib.util, "find_spec", lambda name, *a: None if name == "magpylib" else real(name, *a))
    with pytest.raises(InputError, match=r"needs the packages magpylib and magpylib-material-response") as info:
        load_design(DEMO)
    assert "\n" not in str(info.value)


def test_a_cached_solve_loads_without_importing_the_solver(tmp_path):
    # importing magpylib takes about 0.3 s: a design whose field solve is cached does not need it
    require_magpylib()
    require_material_response()
    import os
    import subprocess
    import sys

    env = {**os.environ, "RENDER_CACHE_DIR": str(tmp_path)}
    code = f"import sys; from render.design import load_design; load_design({str(DEMO)!r}); print('magpylib' in sys.modules)"
    first = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    again = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True)
    assert (first.stdout.strip(), again.stdout.strip()) == ("True", "False")


def test_a_construction_too_large_to_solve_is_refused_before_the_solve(tmp_path):
    # a bar magnet of 10 × 10 × 3 cm (centimetres where millimetres were meant) needs 12 560 cells (the magnet
    # cut in 2.5 × 4 × 2.5 mm cells, render.magnetics.construction.CELL_BODY: 40 × 25 × 12 = 12 000, and the
    # demo's two blades 560, as the solver counts them): the dense
    # interaction matrix (3n)² of float64 alone is 11 GB, so it is refused in one line before anything is built
    require_material_response()
    root = Path(__file__).resolve().parents[2]
    text = (root / "models" / "slipway-steel-blades.toml").read_text()
    for key, value in (("magnet_width", "10cm"), ("magnet_length", "10cm"), ("magnet_height", "3cm")):
        text = "\n".join(f'{key} = "{value}"' if line.startswith(f"{key} =") else line for line in text.splitlines())
    path = tmp_path / "huge.toml"
    path.write_text(text)
    with pytest.raises(InputError) as e:
        load_design(path)
    msg = str(e.value)
    assert "\n" not in msg and "need 12560 cells to solve, more than 4000" in msg and "bar magnet, 100 × 100 × 30 mm" in msg


def test_pole_pieces_that_do_not_fit_name_the_keys_that_size_them(tmp_path):
    # six screws 12 mm apart span 5 × 12 mm + their diameter, more than the 58 mm window (arithmetic)
    require_material_response()
    root = Path(__file__).resolve().parents[2]
    text = (root / "models" / "slipway-steel-poles.toml").read_text().replace('pole_spacing = "10.4mm"', 'pole_spacing = "12mm"', 1)
    path = tmp_path / "wide.toml"
    path.write_text(text)
    with pytest.raises(InputError, match=r"from steel_width \(the screws' diameter\), poles and pole_spacing\) do not fit in coil_a's window"):
        load_design(path)


@pytest.mark.parametrize(
    "line, fix",
    [
        ("string_height = 3", 'plain numbers are in metres: for 3 mm write "3mm"'),  # SI: a bare length is metres
        ('remanence = "3900G"', 'for gauss write "0.39T": 1 G = 0.1 mT'),  # 1 G = 1e-4 T (SI Brochure, 9th ed., table 9)
    ],
)
def test_construction_slips_get_their_fix(tmp_path, line, fix):
    root = Path(__file__).resolve().parents[2]
    key = line.split(" =")[0]
    text = (root / "models" / "slipway-steel-poles.toml").read_text()
    text = "\n".join(line if raw.startswith(f"{key} =") or (key == "remanence" and raw.startswith("magnet_grade =")) else raw for raw in text.splitlines())
    path = tmp_path / "slip.toml"
    path.write_text(text)
    with pytest.raises(InputError) as e:
        load_design(path)
    assert fix in str(e.value) and "\n" not in str(e.value)


@pytest.mark.parametrize(
    "old, new, fragment",
    [
        # the bar magnet's top at z = 0 − 5 mm lies above the 9 mm coils' bottoms (z = −9 mm): inside the windings
        ('steel_height = "11mm"', 'steel_height = "5mm"', "the bar magnet's top (z = -5 mm, from top and steel_height) reaches into coil_a's winding"),
        # centres 7 mm apart, 13.4 mm wide bobbins: they would overlap (arithmetic)
        ('position = "56mm"', 'position = "45mm"', "put the coils' centres 7 mm apart, less than half their widths together (13.4 mm)"),
        # a 10 mm bar centred between coils 18 mm apart ends 5 mm each side, short of the 2.5 mm blades' inner faces at 9 − 1.25 = 7.75 mm (arithmetic)
        ('magnet_width = "20mm"', 'magnet_width = "10mm"', "the bar magnet (10 mm along the string, from magnet_width) does not reach under the pole pieces, whose nearest edges lie 7.75 mm"),
        # a string of μr = 1 carries no magnetisation: every flux and sensitivity would be zero (0/0 in the harmonics)
        ("\n[construction]\n", "\n[construction]\nstring_permeability = 1.0\n", "string_permeability=1.0 (1): expected a plausible value, above 1"),
    ],
)
def test_parts_that_would_overlap_are_refused(tmp_path, old, new, fragment):
    require_material_response()
    root = Path(__file__).resolve().parents[2]
    text = (root / "models" / "slipway-steel-blades.toml").read_text()
    assert old in text
    path = tmp_path / "overlap.toml"
    path.write_text(text.replace(old, new, 1))
    with pytest.raises(InputError) as e:
        load_design(path)
    assert fragment in str(e.value) and "\n" not in str(e.value)


@pytest.mark.parametrize(
    "demo, top, fragment",
    [
        # an 8 mm blade with its top at +10 mm spans z = 2 … 10 mm; the 9 mm winding spans −9 … 0 mm (arithmetic)
        ("slipway-magnet-blades", "10mm", "coil_a's magnet blade (magnet_height 8 mm) stands wholly above its winding (z = -9 mm to 0); give top above -9 mm and below 8 mm"),
        ("slipway-magnet-blades", "-10mm", "coil_a's magnet blade (magnet_height 8 mm) stands wholly below its winding"),
        # 11 mm blades from −21 to −10 mm (arithmetic)
        ("slipway-steel-blades", "-10mm", "coil_a's steel blade (steel_height 11 mm) stands wholly below its winding (z = -9 mm to 0); give top above -9 mm and below 11 mm"),
    ],
)
def test_pole_pieces_outside_their_coils_height_are_refused(tmp_path, demo, top, fragment):
    root = Path(__file__).resolve().parents[2]
    lines = (root / "models" / f"{demo}.toml").read_text().splitlines()
    # strings raised clear of the highest pole piece, so that the placement is what is refused
    text = "\n".join('string_height = "12mm"' if line.startswith("string_height =") else line for line in lines) + f'\ntop = "{top}"\n'
    path = tmp_path / "placed.toml"
    path.write_text(text)
    with pytest.raises(InputError) as e:
        load_design(path)
    assert fragment in str(e.value) and "\n" not in str(e.value)


def test_the_strings_saturation_is_read_and_keys_the_cache():
    # string_saturation sets the strings' µ0·Ms (default 2.0 T, render.magnetics.construction.STRING_SATURATION);
    # it is part of the construction's digest, so a cached solve made with another value (or before the
    # steel saturated: render.magnetics.construction.MODEL_VERSION) is not reused
    from render.design.construction import read_construction
    from render.magnetics.construction import MODEL_VERSION, STRING_SATURATION

    data = copy.deepcopy(_doc())
    default = read_construction(data["construction"], source="<test>")
    data["construction"]["string_saturation"] = "1.6T"
    lower = read_construction(data["construction"], source="<test>")
    assert default.strings.saturation == STRING_SATURATION == 2.0 and lower.strings.saturation == pytest.approx(1.6)
    d = load_design(ROOT / "models" / "slipway-steel-poles.toml")
    g = (d.coil_a.geometry, d.coil_b.geometry, 0.038, 0.056)
    assert default.digest(*g) != lower.digest(*g)
    assert MODEL_VERSION >= 5


def test_the_highest_string_permeability_accepted_is_solved(monkeypatch, tmp_path):
    # string_permeability is accepted up to 1e4 (soft irons reach some thousands, from memory): the strings'
    # nonlinear solve must find its answer there, uncached, and one above it is refused in one line
    require_magpylib()
    require_material_response()
    monkeypatch.setenv("RENDER_CACHE_DIR", str(tmp_path / "cache"))
    data = copy.deepcopy(_doc())
    data["construction"]["string_permeability"] = 1e4
    d = parse_design(data, source="x.toml")
    assert d.coil_a.sensitivity > 0 and np.isfinite(d.coil_a.sensitivity)
    data["construction"]["string_permeability"] = 3e4
    _refused(data, r"string_permeability=30000.* \(30000\): expected a plausible value, above 1 and at most 10000")
