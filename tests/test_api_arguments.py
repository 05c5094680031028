"""Python callers meet the command line's rules, worded for Python, before any work.

No outside source: these tests hold the library to the project's own rules
(DEVELOPERS.md, "Files" and "Errors"): a refused argument is one short line
naming it, nothing is written before the refusal, and what a file may not give
(a hum source inside the pickup, two designs writing one clip) a script may not
give either.
"""

from __future__ import annotations

import dataclasses
import shutil
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

import render
from render.cli import main

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"


def _refused(call, argument: str) -> str:
    """The one-line ArgumentError ``call`` raises, naming ``argument`` and no command-line option; its text."""
    with pytest.raises(render.ArgumentError) as e:
        call()
    text = str(e.value)
    assert e.value.argument == argument and text.startswith(f"{argument}=") and "\n" not in text and " --" not in text, text
    return text


def test_designs_sharing_a_file_name_are_refused_before_any_file(tmp_path):
    for folder in ("models", "alt"):
        (tmp_path / folder).mkdir()
        shutil.copy(REF, tmp_path / folder / REF.name)
    pair = [tmp_path / "models" / REF.name, tmp_path / "alt" / REF.name]
    why = "two design files share a name; their clips would overwrite each other: rename one"
    text = _refused(lambda: render.render_clips(pair, PHRASE, settings=render.RenderSettings(seconds=0.5), out=tmp_path / "run", plots=False), "designs")
    assert text.endswith(why) and str(pair[1]) in text
    res = CliRunner().invoke(main, ["clips", *map(str, pair), "--out", str(tmp_path / "cli"), "--no-plots", "--seconds", "0.5"])
    assert res.exit_code == 1 and res.stderr.strip() == f"Error: {pair[0]}, {pair[1]}: {why}"  # the same rule, one wording
    assert not (tmp_path / "run").exists() and not (tmp_path / "cli").exists()


def test_a_design_file_given_twice_is_refused_as_such(tmp_path, monkeypatch):
    # the same file by two spellings is one file given twice, not two files sharing a name
    monkeypatch.chdir(REF.parent)
    res = CliRunner().invoke(main, ["clips", REF.name, f"./{REF.name}", "--out", str(tmp_path / "cli"), "--no-plots", "--seconds", "0.5"])
    assert res.exit_code == 1 and res.stderr.strip() == f"Error: ./{REF.name}: this design file is given twice; give each design once"
    assert not (tmp_path / "cli").exists()


def test_a_design_named_as_anothers_passive_clip_is_refused_before_any_file(tmp_path):
    """``S-passive.wav`` is the passive reference of design S: a design file named ``S-passive`` would overwrite it."""
    pair = [tmp_path / REF.name, tmp_path / f"{REF.stem}-passive.toml"]
    for p in pair:
        shutil.copy(REF, p)
    text = _refused(lambda: render.render_clips(pair, PHRASE, settings=render.RenderSettings(seconds=0.5, passive=True), out=tmp_path / "run", plots=False), "designs")
    assert "passive reference clip" in text and not (tmp_path / "run").exists()


def test_a_comparison_pickup_sharing_a_design_file_name_is_refused_before_any_file(tmp_path):
    from render.design.passive import load_passive

    passive = ROOT / "models" / "compare" / "workshop-passive.toml"
    (tmp_path / "m").mkdir()
    same = tmp_path / "m" / passive.name  # a design file named as the comparison pickup's
    shutil.copy(REF, same)
    text = _refused(lambda: render.render_clips([same], PHRASE, settings=render.RenderSettings(seconds=0.5), out=tmp_path / "run", compare=load_passive(passive)), "compare")
    assert str(same) in text and "overwrite each other" in text
    res = CliRunner().invoke(main, ["clips", str(same), "--compare", str(passive), "--out", str(tmp_path / "cli"), "--no-plots"])
    assert res.exit_code == 1 and res.stderr.startswith(f"Error: --compare={passive}: the design {same} has the same file name")
    assert not (tmp_path / "run").exists() and not (tmp_path / "cli").exists()


def test_a_hum_source_from_python_is_refused_where_a_rig_file_would_be(tmp_path):
    # one dipole at the origin, 0.9 cm from coil_a's centre: refused in a rig file, and so from Python
    rig = tmp_path / "near.toml"
    rig.write_text('[hum]\nmains = "50Hz"\n\n[[hum.source]]\nkind = "dipole"\nmoment = 0.05\nat = [0, 0, 0]\n', encoding="utf-8")
    with pytest.raises(render.InputError) as from_file:
        render.hum(REF, rig=rig)
    why = str(from_file.value).split(" m: ", 1)[1]
    assert why.startswith("0.9 cm from coil_a's centre, closer than 10 cm")
    d = render.load_design(REF)
    near = render.DipoleSource(moment=0.05, at=(0, 0, 0))
    text = _refused(lambda: render.hum(d, sources=[render.UniformSource(field=1e-6), near]), "sources[1]")
    assert text == f"sources[1]=DipoleSource(at=[0, 0, 0] m): {why}"
    far = render.hum(d, sources=[render.DipoleSource(moment=0.05, at=(0.5, 0, 0))])  # the near-transformer rig's place: accepted
    assert far.total_v_rms > 0


def test_fit_takes_a_loaded_start_design(tmp_path):
    by_path = render.fit(FIT, out=tmp_path / "path", start_path=str(REF), top=1)
    loaded = render.fit(FIT, out=tmp_path / "loaded", start_path=render.load_design(REF), top=1)
    assert loaded.start_file == by_path.start_file == REF
    assert [p.read_bytes() for p in loaded.files] == [p.read_bytes() for p in by_path.files]


def test_fit_refuses_a_design_that_is_not_its_file_in_one_short_line(tmp_path):
    copy = tmp_path / "bench.toml"
    shutil.copy(REF, copy)
    d = render.load_design(copy)
    for start in (dataclasses.replace(d, source="", sha256=""), dataclasses.replace(d, notes="changed in memory")):
        text = _refused(lambda: render.fit(FIT, out=tmp_path / "f", start_path=start, top=1), "start_path")
        assert text.startswith(f"start_path=Design({d.name!r}): ") and "pass the design's file (a path) as start_path" in text and len(text.replace(str(copy), "")) < 200
    copy.write_text(copy.read_text(encoding="utf-8") + "\n# edited after loading\n", encoding="utf-8")
    text = _refused(lambda: render.fit_and_render(FIT, out=tmp_path / "g", start_path=d, top=1), "start_path")
    assert f"is not {copy} as it stands" in text and len(text.replace(str(copy), "")) < 200
    _refused(lambda: render.fit(FIT, out=tmp_path / "h", start_path=5, top=1), "start_path")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bench.toml"]  # refused before any folder was made


@pytest.mark.parametrize(
    "call",
    [
        lambda d, big: render.response(d, big),
        lambda d, big: render.hum_positions(d, trials=10, shell=big),
        lambda d, big: render.hum_map(d, plane=big),
        lambda d, big: render.DipoleSource(moment=0.05, at=big),
        lambda d, big: render.synthesize(PHRASE, positions=(0.1, 0.05), apertures=big, sample_rate=48000, seconds=0.1),
        lambda d, big: render.synthesize(PHRASE, positions=big, apertures=0.01, sample_rate=48000, seconds=0.1),
        lambda d, big: render.render_clip(d, np.zeros(480), sample_rate=48000, hum=big),
        lambda d, big: render.BlindSettings(trials=big),
    ],
)
def test_a_refused_value_is_never_shown_whole(call):
    # a huge value (a long list, a whole Design) is cut in the message, which stays one short line
    d = render.load_design(REF)
    for big in (["x"] * 5000, d):
        with pytest.raises(render.InputError) as e:
            call(d, big)
        text = str(e.value)
        assert len(text) < 300 and "\n" not in text and repr(big)[-40:] not in text, text[:400]  # cut before its end


def test_render_clip_checks_its_arguments(tmp_path):
    d = render.load_design(REF)
    v = np.zeros(480)
    assert "pass True or False" in _refused(lambda: render.render_clip(d, v, sample_rate=48000, hum="no"), "hum")
    _refused(lambda: render.render_clip(d, v, sample_rate=48000, noise="yes"), "noise")
    _refused(lambda: render.render_clip(d, v, sample_rate=48000, passive=None), "passive")
    assert render.render_clip(d, v, sample_rate=48000, hum=np.bool_(False)).volts.size == 480  # a numpy bool is a bool
    for empty in (np.zeros(0), np.zeros((2, 0)), render.Dry(velocity=np.zeros((2, 0)), sample_rate=48000)):
        assert "no samples" in _refused(lambda: render.render_clip(d, empty, sample_rate=None if isinstance(empty, render.Dry) else 48000), "velocity")
    for path in (str(PHRASE), PHRASE):
        text = _refused(lambda: render.render_clip(d, path), "velocity")
        assert "not a velocity" in text and "render.load_dry" in text and "render.synthesize" in text
    assert "at least 0.05 s" in _refused(lambda: render.RenderSettings(seconds=1e-6), "seconds")  # the shortest phrase or recording
    assert "coil_a's and coil_b's" in _refused(lambda: render.synthesize(PHRASE, positions=0.1, apertures=(0.01, 0.01), sample_rate=48000), "positions")
    _refused(lambda: render.synthesize(PHRASE, positions=(0.1,), apertures=0.01, sample_rate=48000), "positions")
