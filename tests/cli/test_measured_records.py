"""Every JSON record about a design names the design file's SHA-256 and each measured coil's file
and SHA-256 (``design_sha256``, ``coil_measurements``), the same keys as ``render clips``' records.

The expected digests are computed here with Python's hashlib (SHA-256 as FIPS 180-4 defines it)
over the files' bytes, independently of render.io.hashing.
"""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"
REF = ROOT / "models" / "studio-reference.toml"
SHIPPED = "coils/harbour-blade-coil.synthetic.csv"


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture()
def measured(tmp_path):
    """The demo measured design, its two coils from two files with the same data and different bytes."""
    folder = tmp_path / "designs"
    (folder / "coils").mkdir(parents=True)
    (folder / "coils" / "a.csv").write_bytes(CSV.read_bytes())
    (folder / "coils" / "b.csv").write_bytes(b"# the same sweep, saved again\n" + CSV.read_bytes())
    text = (ROOT / "models" / "measured-blade.toml").read_text(encoding="utf-8")
    text = text.replace(f'measured = "{SHIPPED}"   # relative to this file', 'measured = "coils/a.csv"', 1).replace(f'measured = "{SHIPPED}"', 'measured = "coils/b.csv"', 1)
    design = folder / "m.toml"
    design.write_text(text, encoding="utf-8")
    expected = [{"coil": "coil_a", "file": "coils/a.csv", "sha256": sha(folder / "coils" / "a.csv")}, {"coil": "coil_b", "file": "coils/b.csv", "sha256": sha(folder / "coils" / "b.csv")}]
    assert expected[0]["sha256"] != expected[1]["sha256"]
    return design, expected


def invoke(*args) -> str:
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exit_code == 0, res.output
    return res.stdout  # with --json -, the JSON alone (the table goes to standard error)


def test_bias_json_names_the_design_and_its_measurements(measured, tmp_path):
    design, expected = measured
    invoke("bias", design, "--ratios", "0.5", "--no-clips", "--json", tmp_path / "b.json")
    rec = json.loads((tmp_path / "b.json").read_text())
    assert rec["file"] == str(design) and rec["design_sha256"] == sha(design)
    assert rec["coil_measurements"] == expected


def test_blind_key_names_each_design_and_its_measurements(measured, tmp_path):
    design, expected = measured
    out = tmp_path / "s"
    invoke("blind", design, REF, "--dry", ROOT / "dry_signals" / "last_chord_2s.wav", "--trials", 2, "--seed", 1, "--out", out)
    key = json.loads((out / "private" / "key.json").read_text())
    a, b = key["designs"]
    assert a["path"] == str(design) and a["design_sha256"] == a["sha256"] == sha(design)
    assert a["coil_measurements"] == expected
    assert b["design_sha256"] == sha(REF) and b["coil_measurements"] == []


@pytest.mark.parametrize("command", ["check", "hum", "noise", "coil"])
def test_other_json_records_carry_the_same_keys(measured, command):
    design, expected = measured
    rec = json.loads(invoke(command, design, "--json", "-"))
    rec = rec["designs"][0] if "designs" in rec else rec
    assert rec["design_sha256"] == sha(design) and rec["coil_measurements"] == expected


def test_unvoice_record_names_the_measurements(measured, tmp_path):
    design, expected = measured
    di = tmp_path / "di.wav"
    sf.write(di, 0.01 * np.random.default_rng(0).standard_normal(48000), 48000, subtype="FLOAT")
    invoke("unvoice", di, design, "--out", tmp_path / "v.wav")
    rec = json.loads((tmp_path / "v.json").read_text())
    assert rec["design_file"] == str(design) and rec["design_sha256"] == sha(design) and rec["coil_measurements"] == expected


def test_sense_record_names_the_design():
    design = ROOT / "models" / "slipway-steel-poles.toml"  # a construction, typed coils: no measurement
    rec = json.loads(invoke("sense", design, "--json", "-"))
    assert rec["design_sha256"] == sha(design) and rec["coil_measurements"] == []


def test_fit_json_names_the_start_design_and_its_measurements(tmp_path):
    # the start's coils given by absolute paths: a result design written to the out folder must still find them
    text = (ROOT / "models" / "measured-blade.toml").read_text(encoding="utf-8").replace(f'"{SHIPPED}"', f'"{CSV.as_posix()}"')
    start = tmp_path / "m.toml"
    start.write_text(text, encoding="utf-8")
    fit = tmp_path / "f.toml"
    fit.write_text('from = "m.toml"\n[aim]\nlevel_1k_db = { min = -40 }\n[free]\n"feedback.r" = { min = "22k", max = "470k", series = "E24" }\n', encoding="utf-8")
    invoke("fit", fit, "--out", tmp_path / "o", "--top", 1)
    rec = json.loads((tmp_path / "o" / "fit.json").read_text())
    assert rec["start"] == str(start) and rec["design_sha256"] == sha(start)
    assert rec["coil_measurements"] == [{"coil": c, "file": CSV.as_posix(), "sha256": sha(CSV)} for c in ("coil_a", "coil_b")]
