"""A damaged private/key.json: one line naming what is wrong, exit 1, never a traceback (the project's rule for bad input).

Each case edits the key of a finished session the way a hand edit or a cut-short copy might, then runs
`render score SESSION --no-plot` (exit 1, one line) and asks the running server for the result (a 500 whose
JSON names the damage, not a dropped connection).
"""

from __future__ import annotations

import json
import re

import pytest
from click.testing import CliRunner

from render.cli.score import score_command
from render.listening.answers import AnswerLog
from render.listening.layout import DAMAGED_KEY, load_plan

from .test_server_http import request


def _finished(make_session):
    paths = make_session(method="abx", trials=2)
    plan = load_plan(paths)
    key = json.loads(paths.key.read_text())
    with AnswerLog(paths, plan) as log:
        for t in key["trials"]:
            log.record({"trial": t["index"], "answer": t["x"], "comment": ""})
    return paths, key


def _drop(key, *where):
    *parents, last = where
    for p in parents:
        key = key[p]
    del key[last]


def _set(value, *where):
    def edit(key):
        *parents, last = where
        for p in parents:
            key = key[p]
        key[last] = value

    return edit


RIG_TOML = '[rig]\nname = "bench"\n'
DAMAGES = [
    ("designs removed", lambda k: _drop(k, "designs"), r"designs: missing, expected two \(MODEL_A and MODEL_B\)"),
    ("one design", lambda k: k["designs"].pop(), r"designs: 1 entry, expected two"),
    ("designs not a list", _set({"name": "x"}, "designs"), r"designs: a dict, expected two"),
    ("a design without its name", lambda k: _drop(k, "designs", 1, "name"), r"designs\[1\]\.name: missing or not text"),
    ("a design without its TOML", lambda k: _drop(k, "designs", 0, "toml"), r"designs\[0\]\.toml: missing or not text"),
    ("invalid TOML text", _set("[coil_a\nturns = ", "designs", 0, "toml"), r"designs\[0\]\.toml: not valid TOML \(.*\)"),
    ("a rig with invalid TOML", _set({"path": "rig.toml", "sha256": "0" * 64, "toml": "= 1"}, "rig"), r"rig\.toml: not valid TOML"),
    ("a rig without its path", _set({"sha256": "0" * 64, "toml": RIG_TOML}, "rig"), r"rig\.path: missing or not text"),
    ("measured coils malformed", _set([{"coil": "coil_a"}], "designs", 0, "coil_measurements"), r"designs\[0\]\.coil_measurements: expected a list"),
    ("changes not an object", _set(["coil_a.turns"], "designs", 1, "design_changes"), r"designs\[1\]\.design_changes: a list, expected an object"),
    ("both designs named alike", lambda k: k["designs"][1].update(name=k["designs"][0]["name"]), r"designs: both named"),
    ("one loudness gain", lambda k: k["loudness"]["gains_db"].pop(), r"loudness\.gains_db: expected two finite numbers"),
    ("no loudness", lambda k: _drop(k, "loudness"), r"loudness\.gains_db: expected two finite numbers"),
    ("a gain as text", _set(["-3", 0.0], "loudness", "gains_db"), r"loudness\.gains_db: expected two finite numbers"),
    ("a trial's index changed", _set(5, "trials", 1, "index"), r"trials\[1\] does not match the plan"),
]


@pytest.mark.parametrize("edit, message", [d[1:] for d in DAMAGES], ids=[d[0] for d in DAMAGES])
def test_a_damaged_key_is_one_line_and_exit_1(make_session, serve, edit, message):
    paths, key = _finished(make_session)
    edit(key)
    paths.key.write_text(json.dumps(key))
    result = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert result.exit_code == 1 and isinstance(result.exception, SystemExit), result.exc_info  # friendly's exit, not an error raised through
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in result.output, result.output
    assert lines[0].startswith(f"Error: {paths.key}: ") and lines[0].endswith(f"; {DAMAGED_KEY}")
    assert re.search(message, lines[0]), lines[0]
    assert not (paths.root / "results").exists()
    # the listening page asks for the result once every trial is answered: a 500 that names the damage, not a dropped connection
    server = serve(paths.root)
    status, _, body = request(server.port, path="/api/result")
    assert status == 500 and DAMAGED_KEY in json.loads(body)["error"]


def test_a_sound_key_passes_the_same_checks(make_session):
    # the cases above are damage, not a check that refuses every key: the untouched session scores
    paths, _ = _finished(make_session)
    result = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert result.exit_code == 0 and "2 of 2 correct" in result.output, result.output
