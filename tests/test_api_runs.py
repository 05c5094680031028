"""The library forms of ``render hum``, ``render noise`` and ``render bias`` do the commands' whole jobs.

The command line is the reference here (no outside source: these tests hold the
two faces of the package together). Each check runs a command with ``--json``
and the library call, and compares the JSON text byte for byte (the output
folder's path aside) and every WAV's bytes, on two shipped designs or more.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

import render
from render.cli import main
from render.io.atomic import json_text

ROOT = Path(__file__).resolve().parents[1]
REF = ROOT / "models" / "studio-reference.toml"
ODD = ROOT / "models" / "odd-pair.toml"
POLES = ROOT / "models" / "slipway-steel-poles.toml"
RIG = ROOT / "rigs" / "near-transformer.toml"
PASSIVE = ROOT / "models" / "compare" / "workshop-passive.toml"


def run(*args) -> None:
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exit_code == 0, res.output


def same_text(cli: Path, api_record: dict, folders: tuple[Path, Path] | None = None) -> None:
    """The command's JSON file and the library's record, written the one way every record is, are the same text."""
    text, mine = cli.read_text(encoding="utf-8"), json_text(api_record)
    if folders is not None:
        text, mine = text.replace(str(folders[0]), "OUT"), mine.replace(str(folders[1]), "OUT")
    assert mine == text


def same_wavs(a: Path, b: Path) -> int:
    """Every WAV under ``a`` has a twin of the same bytes under ``b`` (and no more): their count."""
    wa, wb = sorted(p.relative_to(a) for p in a.rglob("*.wav")), sorted(p.relative_to(b) for p in b.rglob("*.wav"))
    assert wa == wb and wa
    for rel in wa:
        assert (a / rel).read_bytes() == (b / rel).read_bytes(), rel
    return len(wa)


@pytest.mark.parametrize("model", [ODD, REF])
def test_hum_run_is_render_hum_out_with_its_wavs(tmp_path, model):
    run("hum", model, "--out", tmp_path / "cli", "--json", tmp_path / "cli.json")
    r = render.hum_run([model], out=tmp_path / "api")
    same_text(tmp_path / "cli.json", r.record, (tmp_path / "cli", tmp_path / "api"))
    assert same_wavs(tmp_path / "cli", tmp_path / "api") == 3  # the design and each coil alone
    (d,) = r.designs
    rec = json.loads((tmp_path / "cli.json").read_text())
    assert [s.as_dict() for s in d.scales] == rec["hum_and_noise"]  # the signal-to-hum figures the command prints
    assert d.scales[0].as_dict()["signal_to_hum_db"] == rec["hum_and_noise"][0]["signal_to_hum_db"]
    assert d.audio is not None and r.folder == tmp_path / "api"


def test_hum_run_with_every_part_is_render_hums_record(tmp_path):
    from render.design.passive import load_passive

    run("hum", REF, ODD, "--tolerance", "1%", "--trials", 40, "--map", "--positions", 20, "--compare", PASSIVE, "--json", tmp_path / "cli.json")
    r = render.hum_run([REF, ODD], tolerances={"resistor": 0.01, "capacitor": 0.01, "turns": 0.01}, trials=40, rejection_map=True, positions=20, compare=load_passive(PASSIVE))
    same_text(tmp_path / "cli.json", r.record)
    assert [x.design.name for x in r.designs] == ["studio-reference", "odd-pair"] and r.compare is not None
    assert all(x.tolerances is not None and x.rejection_map is not None and x.positions is not None for x in r.designs)


def test_hum_run_with_a_rigs_sources_and_joint_draws_is_render_hums_record(tmp_path):
    run("hum", POLES, "--rig", RIG, "--positions", 20, "--joint", "--shell", "0.5m", "1m", "--json", tmp_path / "cli.json")
    r = render.hum_run([POLES], rig=RIG, positions=20, joint=True, shell=(0.5, 1.0))
    same_text(tmp_path / "cli.json", r.record)
    assert "joint" in r.record and "positions" not in r.record


@pytest.mark.parametrize("model", [REF, ODD])
def test_bias_run_is_render_bias_with_its_clips(tmp_path, model):
    run("bias", model, "--ratios", "0.4,0.6", "--seconds", 1, "--out", tmp_path / "cli", "--json", tmp_path / "cli.json")
    r = render.bias_run(model, ratios=(0.4, 0.6), seconds=1.0, out=tmp_path / "api")
    same_text(tmp_path / "cli.json", r.record, (tmp_path / "cli", tmp_path / "api"))
    settings = len(r.sweep.rows)  # the design's own divider is added to the two ratios
    assert same_wavs(tmp_path / "cli", tmp_path / "api") == 2 * settings  # each setting's clip and its matched copy
    assert r.clips is not None and len(r.clips.clips) == settings


def test_bias_run_without_a_folder_measures_only(tmp_path):
    run("bias", ODD, "--ratios", "0.5", "--battery", "9,7", "--no-clips", "--json", tmp_path / "cli.json")
    r = render.bias_run(ODD, ratios=(0.5,), batteries=(9.0, 7.0))
    same_text(tmp_path / "cli.json", r.record)
    assert r.clips is None and r.folder is None


@pytest.mark.parametrize(("model", "rig", "compare"), [(REF, None, True), (ODD, RIG, True), (POLES, None, False)])
def test_noise_run_is_render_noises_record(tmp_path, model, rig, compare):
    from render.design.passive import load_passive

    args = [*(["--rig", rig] if rig else []), *(["--compare", PASSIVE] if compare else [])]
    run("noise", model, *args, "--temperature", 350, "--json", tmp_path / "cli.json")
    r = render.noise_run(model, rig=rig, temperature_k=350.0, compare=load_passive(PASSIVE) if compare else None)
    same_text(tmp_path / "cli.json", r.record)
    assert ("compare" in r.record) == compare and len(r.scales) == 2 + compare


@pytest.mark.parametrize(
    ("call", "words"),
    [
        (lambda tmp: render.hum_run([ODD], rejection_map="yes"), r"rejection_map='yes': got str; pass True or False"),
        (lambda tmp: render.hum_run([ODD], positions=5), r"positions=5: must be at least 10"),
        (lambda tmp: render.hum_run([ODD], histogram=tmp / "h.png"), r"histogram=.*h\.png: needs a Monte Carlo: give tolerances"),
        (lambda tmp: render.hum_run([ODD], shell=(0.5, 1.0)), r"shell=\(0\.5, 1\.0\): needs random sources: give positions"),
        (lambda tmp: render.bias_run(ODD, out=tmp / "b", dry=tmp / "none.toml"), r"dry=.*none\.toml: no such file"),
        (lambda tmp: render.noise_run(ODD, top=0), r"top=0: must be from 1 to 40"),
    ],
)
def test_the_runs_name_a_refused_argument_as_python_names_it(tmp_path, call, words):
    with pytest.raises(render.ArgumentError, match=words):
        call(tmp_path)
    assert not (tmp_path / "b").exists() and not (tmp_path / "h.png").exists()  # refused before any file


def test_a_design_changed_after_reading_is_refused_where_its_file_is_recorded():
    import dataclasses

    d = render.load_design(REF)
    changed = dataclasses.replace(d, feedback=dataclasses.replace(d.feedback, c=220e-12))
    for call in (lambda: render.hum_run([changed]), lambda: render.noise_run(changed), lambda: render.bias_run(changed, ratios=(0.5,))):
        with pytest.raises(render.ArgumentError, match=r"its values were changed after it was read .*render.with_values"):
            call()
