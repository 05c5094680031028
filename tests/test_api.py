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
    assert n.active.total_v == data["total_v"] and n.active.snr_db == data["snr_db"]


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
        render.synthesize(phrase, positions=(0.04,), apertures=(0.02, 0.03), sample_rate=8000, seconds=0.2)
