"""The public API (``import render``) gives the same figures as the command line.

The command line is the reference here: each check runs a command and the
library call that the README documents, and compares the numbers they give
(no outside source: these tests hold the two faces of the package together).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

import render
from render.cli import main

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
ODD = ROOT / "models" / "odd-pair.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"


def run(*args):
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return res


def test_import_is_light_and_lists_its_names():
    code = "import sys, render; print('scipy.signal' in sys.modules, 'click' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.split()
    assert out == ["False", "False"]
    for name in ("load_design", "load_rig", "load_phrase", "response", "render_clip", "synthesize", "hum", "noise", "bias_sweep", "fit", "unvoice", "Dry"):
        assert name in render.__all__ and getattr(render, name) is not None


def test_response_equals_the_csv(tmp_path):
    csv = tmp_path / "r.csv"
    run("response", REF, "--csv", csv, "--points", 50)
    table = np.genfromtxt(csv, delimiter=",", names=True)
    r = render.response(render.load_design(REF), np.geomspace(20, 20000, 50))  # the command's grid
    assert np.allclose(r.frequency_hz, table["frequency_hz"], rtol=1e-5)  # the CSV keeps 6 digits
    assert np.allclose(r.magnitude_db, table["magnitude_db"], atol=1e-6)  # the CSV keeps 6 decimals
    wrapped = (np.degrees(np.angle(r.velocity)) - table["phase_deg"] + 180.0) % 360.0 - 180.0  # ±180° is one phase
    assert np.max(np.abs(wrapped)) < 1e-4  # the CSV keeps 4 decimals
    assert np.allclose(r.passive_magnitude_db, table["passive_magnitude_db"], atol=1e-6)
    assert abs(r.output_impedance).shape == (50,)


def test_render_clip_equals_the_main_jobs_wav(tmp_path):
    run("clips", REF, "--out", tmp_path / "c", "--no-plots", "--seconds", 1)
    rec = json.loads((tmp_path / "c" / "studio-reference.json").read_text())
    wav, fs = sf.read(tmp_path / "c" / "studio-reference.wav", dtype="float32")
    d = render.load_design(REF)
    dry = render.synthesize(render.load_phrase(PHRASE), positions=(d.coil_a.position, d.coil_b.position), apertures=(d.coil_a.aperture, d.coil_b.aperture), sample_rate=fs, seconds=1.0)
    clip = render.render_clip(d, dry)
    assert clip.sample_rate == fs == rec["sample_rate"]
    assert np.array_equal((clip.volts / rec["volts_full_scale"]).astype(np.float32), wav)
    assert clip.stats["peak_v"] == rec["measurements"]["peak_v"]


def test_render_clip_takes_a_bare_array():
    d = render.load_design(REF)
    v = 0.1 * np.sin(2 * np.pi * 220 * np.arange(4800) / 48000)
    a = render.render_clip(d, v, sample_rate=48000, hum=False)
    b = render.render_clip(d, np.stack([v, v]), sample_rate=48000, hum=False)
    assert a.volts.shape == (4800,) and np.array_equal(a.volts, b.volts) and a.amp_out is not None


def test_hum_equals_the_json(tmp_path):
    js = tmp_path / "h.json"
    run("hum", ODD, "--json", js)
    data = json.loads(js.read_text())
    h = render.hum(render.load_design(ODD))
    assert [x.rejection_db for x in h.harmonics] == [x["rejection_db"] for x in data["harmonics"]]
    assert h.total_v_rms == data["total_v_rms"] and h.note_to_hum_db == data["note_to_hum_db"]


def test_noise_equals_the_json(tmp_path):
    js = tmp_path / "n.json"
    run("noise", REF, "--json", js)
    data = json.loads(js.read_text())
    n = render.noise(render.load_design(REF))
    assert n.active.total_v == data["noise_v_rms"] and n.active.snr_db == data["snr_db"]


def test_bias_sweep_equals_the_json(tmp_path):
    js = tmp_path / "b.json"
    run("bias", REF, "--ratios", "0.4,0.6", "--no-clips", "--json", js)
    data = json.loads(js.read_text())
    sw = render.bias_sweep(render.load_design(REF), ratios=(0.4, 0.6))
    assert [dict(r) for r in sw.rows] == data["settings"]


def test_unvoice_writes_the_commands_bytes(tmp_path):
    from scipy.signal import lfilter

    di = tmp_path / "di.wav"
    noise = lfilter([1.0], [1.0, -0.95], np.random.default_rng(3).standard_normal(48000)) * 0.01
    sf.write(di, noise, 48000, subtype="FLOAT")
    run("unvoice", di, REF, "--out", tmp_path / "cli.wav", "--no-plot")
    result = render.unvoice(di, REF, out=tmp_path / "api.wav", plot=False)
    assert (tmp_path / "cli.wav").read_bytes() == (tmp_path / "api.wav").read_bytes()
    cli = json.loads((tmp_path / "cli.json").read_text())
    api = json.loads((tmp_path / "api.json").read_text())
    assert cli["trusted_band_hz"] == api["trusted_band_hz"] and result.wav == tmp_path / "api.wav"


def test_every_public_name_is_in_the_api_reference():
    text = (ROOT / "docs" / "api" / "index.rst").read_text(encoding="utf-8")
    missing = [n for n in render.__all__ if n != "__version__" and f"render.{n}\n" not in text]
    assert not missing, f"not in docs/api/index.rst: {missing}"


def test_synthesis_bits_do_not_depend_on_the_blas_threads():
    # the main job sums with one BLAS thread in every process; the API's synthesis must too, or a
    # multi-threaded BLAS sums the modes in another order and render_clip no longer equals the WAV
    from threadpoolctl import threadpool_limits

    d = render.load_design(REF)
    kw = dict(positions=(d.coil_a.position, d.coil_b.position), apertures=(d.coil_a.aperture, d.coil_b.aperture), sample_rate=48000, seconds=1.0)
    with threadpool_limits(2):
        many = render.synthesize(render.load_phrase(PHRASE), **kw).velocity
    with threadpool_limits(1):
        one = render.synthesize(render.load_phrase(PHRASE), **kw).velocity
    assert np.array_equal(many, one)


@pytest.mark.parametrize(
    "call, words",
    [
        (lambda d: render.render_clip(d, np.full(480, np.nan), sample_rate=48000), "NaN or infinite"),
        (lambda d: render.render_clip(d, np.zeros((3, 100)), sample_rate=48000), "shape (3, 100)"),
        (lambda d: render.render_clip(d, np.zeros((100, 2)), sample_rate=48000), "shape (100, 2)"),
        (lambda d: render.response(d, [-1.0, 100.0]), "each > 0"),
        (lambda d: render.response(d, 0.0), "each > 0"),
        (lambda d: render.response(d, [np.nan]), "NaN among the frequencies"),
        (lambda d: render.response(d, []), "one or more frequencies"),
        (lambda d: render.response(d, np.zeros((0, 3))), "shape (0, 3)"),
    ],
)
def test_the_api_refuses_bad_arrays_in_one_line(call, words):
    # bad input is an InputError naming what was wrong (the project's rule for every entry point), not numpy's
    with pytest.raises(render.InputError) as e:
        call(render.load_design(ROOT / "models" / "studio-reference.toml"))
    assert words in str(e.value) and "\n" not in str(e.value)


def test_synthesize_reads_lengths_as_the_files_do():
    # "40mm" is read as in a design file (render.units); a bare number is metres; widths broadcast or match
    phrase = render.load_phrase(ROOT / "dry_signals" / "default.toml")
    a = render.synthesize(phrase, positions=("40mm", "58mm"), apertures="20mm", sample_rate=8000, seconds=0.2)
    b = render.synthesize(phrase, positions=(0.04, 0.058), apertures=(0.02, 0.02), sample_rate=8000, seconds=0.2)
    assert np.array_equal(a.velocity, b.velocity)
    with pytest.raises(render.InputError, match="one per point"):
        render.synthesize(phrase, positions=(0.04, 0.058), apertures=(0.02, 0.03, 0.01), sample_rate=8000, seconds=0.2)


RIG = ROOT / "rigs" / "near-transformer.toml"


@pytest.fixture
def rig(tmp_path):
    """The near-transformer rig with a turned-down volume and a longer cable, so both of its tables change the figures."""
    p = tmp_path / "bench.toml"
    p.write_text(RIG.read_text(encoding="utf-8") + '\n[rig]\nvolume = 0.5\ncable_length = "10m"\n', encoding="utf-8")
    return p


@pytest.mark.parametrize(
    "call",
    [
        lambda d, rig: render.response(d, [100.0, 1000.0], rig=rig).velocity,
        lambda d, rig: [h.rejection_db for h in render.hum(d, rig=rig).harmonics],
        lambda d, rig: render.noise(d, rig=rig).active.total_v,
        lambda d, rig: render.hum_map(d, rig=rig, distances_m=(0.5,), bearings_deg=(0.0,)).rejection_db,
        lambda d, rig: render.hum_positions(d, rig=rig, trials=20).summary(),
        lambda d, rig: render.render_clip(d, np.full(480, 0.01), sample_rate=48000, rig=rig).volts,
        lambda d, rig: render.load_designs([d], rig=rig)[0][0].rig,
    ],
)
def test_a_design_and_a_rig_are_taken_as_paths_or_loaded(call, rig):
    # one rule for the whole face: a design is a path or a Design, a rig a path, a RigFile or None;
    # both forms give the same numbers (no outside source: the two forms of one call agree)
    by_path = call(REF, rig)
    loaded = call(render.load_design(REF), render.load_rig(rig))
    mixed = call(str(REF), str(rig))
    assert np.array_equal(np.asarray(by_path), np.asarray(loaded)) and np.array_equal(np.asarray(by_path), np.asarray(mixed))
    assert not np.array_equal(np.asarray(call(REF, None)), np.asarray(by_path))  # the rig is played into, not ignored


@pytest.mark.parametrize("call", [lambda d: render.bias_sweep(d, ratios=(0.5,)).rows, lambda d: render.hum_tolerances(d, trials=20).summary(), lambda d: render.figures([d])])
def test_a_design_without_a_rig_is_taken_as_a_path_or_loaded(call):
    assert repr(call(REF)) == repr(call(render.load_design(REF)))


def _public_functions_taking(argument):
    import inspect

    return [n for n in render.__all__ if inspect.isfunction(getattr(render, n)) and argument in inspect.signature(getattr(render, n)).parameters]


@pytest.mark.parametrize("argument, good", [("design", REF), ("designs", [REF, ODD]), ("rig", None)])
def test_a_wrong_design_or_rig_is_refused_in_one_line_naming_the_argument(argument, good):
    import inspect

    names = _public_functions_taking(argument)
    assert len(names) >= {"design": 8, "designs": 3, "rig": 10}[argument], names  # the face's functions, as listed in render/__init__.py
    for name in names:
        func = getattr(render, name)
        params = inspect.signature(func).parameters
        # every required argument gets a stand-in; the wrong one is refused before any of them is used
        kwargs = {p.name: good if p.name == argument else (REF if p.name == "design" else [REF, ODD] if p.name == "designs" else None) for p in params.values() if p.default is p.empty}
        for wrong in (42, render.load_phrase(PHRASE), ["models/odd-pair.toml"] if argument != "designs" else "models/odd-pair.toml"):
            kwargs[argument] = wrong
            with pytest.raises(render.InputError) as e:
                func(**kwargs)
            msg = str(e.value)
            assert msg.startswith(f"{argument}: got ") and "pass " in msg and "\n" not in msg, (name, msg)
    if argument == "designs":
        with pytest.raises(render.InputError, match=r"^designs\[1\]: got int; pass a design file's path"):
            render.figures([REF, 1])


def test_load_design_and_load_rig_take_what_they_return():
    d, r = render.load_design(REF), render.load_rig(RIG)
    assert render.load_design(d) is d and render.load_rig(r) is r
    with pytest.raises(render.InputError, match=r"^path: got int; pass a design file's path \(str or Path\) or a render.Design"):
        render.load_design(3)
    with pytest.raises(render.InputError, match=r"^path: got Design; pass a rig file's path"):
        render.load_rig(d)


def test_unvoice_takes_a_loaded_design_and_rig(tmp_path, rig):
    di = tmp_path / "di.wav"
    sf.write(di, 0.01 * np.sin(2 * np.pi * 220 * np.arange(24000) / 48000), 48000, subtype="FLOAT")
    render.unvoice(di, REF, out=tmp_path / "paths.wav", rig=rig, plot=False)
    render.unvoice(di, render.load_design(REF), out=tmp_path / "loaded.wav", rig=render.load_rig(rig), plot=False)
    assert (tmp_path / "paths.wav").read_bytes() == (tmp_path / "loaded.wav").read_bytes()


def test_fit_then_render_from_a_script_is_the_commands_run(tmp_path):
    # render.fit_and_render is what `render fit --render` runs: the same designs and the same clips
    fitfile = ROOT / "models" / "fits" / "brighter-reference.toml"
    rig = tmp_path / "desk.toml"  # a short cable (the near-transformer room puts the fit's hum aim out of reach)
    rig.write_text('[rig]\ncable_length = "3m"\n', encoding="utf-8")
    run("fit", fitfile, "--top", 1, "--rig", rig, "--out", tmp_path / "cli", "--render")
    made = render.fit_and_render(fitfile, top=1, rig=render.load_rig(rig), out=tmp_path / "api")
    assert made.folder == tmp_path / "api" and not (made.folder / "INCOMPLETE.txt").exists() and made.blind is None
    assert [p.name for p in made.fit.files] == ["studio-reference-fit-1.toml"]
    assert [r["design"] for r in made.clips.records] == ["studio-reference", "studio-reference-fit-1"]
    for name in ("studio-reference.wav", "studio-reference-fit-1.wav"):
        assert (tmp_path / "cli" / "clips" / name).read_bytes() == (made.clips.folder / name).read_bytes()
    assert made.clips.records[0]["rig"]["file"] == str(rig)


def test_a_bad_python_argument_is_named_as_in_python_and_the_command_keeps_its_option():
    with pytest.raises(render.InputError, match=r"^temperature_k=0 K: expected an absolute temperature"):
        render.noise(REF, temperature_k=0)
    res = CliRunner().invoke(main, ["noise", str(REF), "--temperature", "0"])
    assert res.exit_code == 1 and res.output.startswith("Error: --temperature=0: ")  # the option type refuses it first


def test_a_refused_argument_is_named_as_python_names_it_and_the_command_as_it_does(tmp_path):
    # one refusal, two readers: render.bias_sweep(ratios=…) names its argument, render bias its option
    from render.errors import ArgumentError

    with pytest.raises(ArgumentError) as caught:
        render.bias_sweep(render.load_design(REF), ratios=(0.5, 1.2))
    assert str(caught.value) == "ratios=0.5,1.2: each ratio bottom/(top+bottom) must be from 0.02 to 0.98"
    res = CliRunner().invoke(main, ["bias", str(REF), "--ratios", "0.5,1.2", "--no-clips"])
    assert res.exit_code == 1 and res.stderr.strip() == "Error: --ratios=0.5,1.2: each ratio bottom/(top+bottom) must be from 0.02 to 0.98"
    with pytest.raises(ArgumentError, match=r"^batteries=70: each battery voltage must be from 1.5 V to 60 V$"):
        render.bias_sweep(render.load_design(REF), batteries=(70,))
    with pytest.raises(ArgumentError, match=r"^sample_rate=1000: must be from 8000"):
        render.BlindSettings(sample_rate=1000)


def test_a_construction_design_renders_from_the_library_as_from_the_command_line(tmp_path):
    """The same phrase, design and seed give the same clip from ``render clips`` and from
    ``synthesize(pickup=pickup_for(design))`` + ``render_clip``; a phrase synthesised at two points without the
    pickup is refused for such a design (it would skip the construction's per-string sensing)."""
    if sys.version_info < (3, 11):  # the lowest-version run: no magpylib-material-response there (pyproject.toml)
        pytest.skip("a [construction] needs magpylib-material-response, which needs Python 3.11 or later")
    design_path = ROOT / "models" / "slipway-steel-poles.toml"
    phrase = ROOT / "dry_signals" / "default.toml"
    run("clips", design_path, "--dry", phrase, "--seconds", "2", "--no-plots", "--no-hum", "--out", tmp_path / "cli")
    cli = json.loads((tmp_path / "cli" / "slipway-steel-poles.json").read_text())
    d = render.load_design(design_path)
    dry = render.synthesize(phrase, pickup=render.pickup_for(d), sample_rate=48000, seconds=2.0)
    clip = render.render_clip(d, dry, hum=False)
    assert float(np.abs(clip.volts).max()) == pytest.approx(cli["measurements"]["peak_v"], rel=1e-9)
    plain = render.synthesize(phrase, positions=(d.coil_a.position, d.coil_b.position), apertures=(d.coil_a.aperture, d.coil_b.aperture), sample_rate=48000, seconds=2.0)
    with pytest.raises(render.ArgumentError, match=r"has a \[construction\], which senses each string itself: synthesize the phrase with pickup=render.pickup_for\(design\)"):
        render.render_clip(d, plain)
