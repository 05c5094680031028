"""``--compare`` on every design, and passive pickups at the edges: no traceback.

The passive demo (``models/compare/``) is not in ``models/*.toml`` on purpose:
it has no preamp, so it is not a design the commands render; it is named with
``--compare``, and named as a design it is refused with that fix. The edge
passive pickups here (``tests/smoke/compare/``, invented values) cancel their
hum exactly, and cancel the string's signal exactly with both knobs at zero.

The expectations are the README's own contract (no outside source), as in
test_smoke_matrix.py.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner
from smoke.test_smoke_matrix import EDGES, PASSIVES, REFERENCE, RIGS, ROOT, SHIPPED, Runner, check_outputs

from render.cli import main

DEMO = ROOT / "models" / "compare" / "workshop-passive.toml"
PASSIVE_EDGES = sorted((Path(__file__).parent / "compare").glob("*.toml"))


@pytest.mark.parametrize("design", SHIPPED + EDGES, ids=lambda p: p.stem)
def test_compare_beside_every_design(design, tmp_path):
    run = Runner(design.stem)
    run("response", design, "--compare", DEMO, "--csv", tmp_path / "response.csv")
    run("noise", design, "--compare", DEMO, "--json", tmp_path / "noise.json")
    check_outputs(run, tmp_path)


def test_compare_with_every_design_together(tmp_path):
    run = Runner("all")
    every = SHIPPED + EDGES
    run("check", *every, "--compare", DEMO, "--json", tmp_path / "check.json")
    run("hum", *every, "--compare", DEMO, "--json", tmp_path / "hum.json")
    run("clips", *SHIPPED, "--seconds", 1, "--no-plots", "--noise", "--jobs", 2, "--compare", DEMO, "--out", tmp_path / "clips")
    check_outputs(run, tmp_path)


@pytest.mark.parametrize("passive", PASSIVE_EDGES, ids=lambda p: p.stem)
def test_passive_edges(passive, tmp_path):
    run = Runner(passive.stem)
    run("check", REFERENCE, "--compare", passive, "--json", tmp_path / "check.json")
    run("response", REFERENCE, "--compare", passive, "--csv", tmp_path / "response.csv", "--png", tmp_path / "response.png")
    run("noise", REFERENCE, "--compare", passive, "--json", tmp_path / "noise.json")
    run("hum", REFERENCE, "--compare", passive, "--json", tmp_path / "hum.json")
    run("clips", REFERENCE, "--seconds", 1, "--no-plots", "--compare", passive, "--out", tmp_path / "clips")
    check_outputs(run, tmp_path)


@pytest.mark.parametrize("passive", PASSIVES, ids=lambda p: p.stem)
def test_every_shipped_passive_pickup_with_and_without_each_rig(passive, tmp_path):
    # every comparison pickup shipped under models/ (subfolders included), beside the reference, in the
    # default room and in each shipped rig (its sources then reach the pickup's coils too)
    run = Runner(passive.stem)
    for rig in [None, *RIGS]:
        tag, with_rig = ("default", ()) if rig is None else (rig.stem, ("--rig", rig))
        run("check", REFERENCE, "--compare", passive, *with_rig, "--json", tmp_path / f"check-{tag}.json")
        run("response", REFERENCE, "--compare", passive, *with_rig, "--csv", tmp_path / f"response-{tag}.csv")
        run("noise", REFERENCE, "--compare", passive, *with_rig, "--json", tmp_path / f"noise-{tag}.json")
        run("hum", REFERENCE, "--compare", passive, *with_rig, "--json", tmp_path / f"hum-{tag}.json")
    run("clips", REFERENCE, "--seconds", 1, "--no-plots", "--compare", passive, *(("--rig", RIGS[0]) if RIGS else ()), "--out", tmp_path / "clips")
    check_outputs(run, tmp_path)


@pytest.mark.parametrize("passive", PASSIVES, ids=lambda p: p.stem)
def test_the_passive_demo_named_as_a_design_is_refused_with_the_fix(passive):
    res = CliRunner().invoke(main, ["check", str(passive)])
    assert res.exit_code == 1 and "Error: " in res.output and f"--compare {passive}" in res.output


def test_compare_output_carries_the_pickup(tmp_path):
    cli = CliRunner()
    res = cli.invoke(main, ["check", str(REFERENCE), "--compare", str(DEMO), "--json", "-"])
    rec = json.loads(res.stdout)
    assert rec["compare"]["design"] == "workshop-passive" and rec["compare"]["kind"] == "passive"
    res = cli.invoke(main, ["response", str(REFERENCE), "--compare", str(DEMO), "--csv", "-"])
    assert res.output.splitlines()[0].endswith(",compare_magnitude_db,compare_phase_deg")
    res = cli.invoke(main, ["hum", str(REFERENCE), "--compare", str(DEMO)])
    assert "workshop-passive: hum by" in res.output and "(amplitudes: peak)" in res.output and "hum at amp input (peak)" in res.output
    res = cli.invoke(main, ["clips", str(REFERENCE), "--seconds", "1", "--no-plots", "--compare", str(DEMO), "--out", str(tmp_path / "c")])
    assert res.exit_code == 0, res.output
    assert (tmp_path / "c" / "workshop-passive.wav").exists() and (tmp_path / "c" / "workshop-passive.json").exists()
