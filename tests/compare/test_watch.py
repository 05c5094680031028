"""``render watch``: what a save re-renders, what a broken file shows, the live server, and a clean stop.

The checks are of this project's own contract (README: "Hearing edits as you
save: render watch"); the clips it serves are checked against the same
design rendered by ``render.render_clip`` (the render the clips command
writes), and its files are watched through watchfiles on the real file
system. No outside numeric source is needed here.
"""

from __future__ import annotations

import contextlib
import http.client
import io
import json
import os
import re
import signal
import threading
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from render.clip import RenderSettings
from render.compare.server import LiveServer
from render.runs.watch import WatchRun, follow_changes

ROOT = Path(__file__).resolve().parents[2]
SETTINGS = RenderSettings(seconds=0.6, sample_rate=16000)


def copy_inputs(tmp_path: Path) -> dict[str, Path]:
    """Editable copies of two demo designs, a phrase and a rig file, in one folder."""
    paths = {}
    for name in ("studio-reference", "ember-dark"):
        paths[name] = tmp_path / f"{name}.toml"
        paths[name].write_text((ROOT / "models" / f"{name}.toml").read_text(encoding="utf-8"), encoding="utf-8")
    paths["phrase"] = tmp_path / "phrase.toml"
    paths["phrase"].write_text((ROOT / "dry_signals" / "chug_riff.toml").read_text(encoding="utf-8"), encoding="utf-8")
    paths["rig"] = tmp_path / "rig.toml"
    paths["rig"].write_text('[rig]\ncable_length = "6m"\n', encoding="utf-8")
    return paths


def set_value(path: Path, key: str, value: str) -> None:
    text = path.read_text(encoding="utf-8")
    new, n = re.subn(rf'(?m)^{key} = "[^"]*"', f'{key} = "{value}"', text, count=1)
    assert n == 1, key
    path.write_text(new, encoding="utf-8")


def versions(run: WatchRun) -> list[int]:
    return [s.now.number for s in run.slots]


@pytest.fixture()
def inputs(tmp_path):
    return copy_inputs(tmp_path)


@pytest.fixture()
def run(inputs):
    r = WatchRun([inputs["studio-reference"], inputs["ember-dark"]], dry=inputs["phrase"], rig=inputs["rig"], settings=SETTINGS)
    r.start()
    return r


def test_a_save_renders_what_it_touches(run, inputs):
    assert versions(run) == [1, 1] and run.board.version == 1
    set_value(inputs["studio-reference"], "load_c", "2.2nF")
    done = run.refresh([inputs["studio-reference"]])
    assert done.rendered == ("studio-reference",) and versions(run) == [2, 1]
    slot = run.slots[0]
    assert slot.before.number == 1 and ("input_a.load_c", "3.9 nF", "2.2 nF") in slot.changes
    # the clip it serves is the design's render, as the clips command makes it (within the 16-bit copy)
    from render import load_design, render_clip
    from render.compare.assets import PCM_FULL_SCALE, decoded
    from render.design import apply_rig, load_rig
    from render.dry import load_dry

    design = apply_rig(load_design(inputs["studio-reference"]), load_rig(inputs["rig"]))
    dry = load_dry(inputs["phrase"], sample_rate=16000, positions=(design.coil_a.position, design.coil_b.position), apertures=(design.coil_a.aperture, design.coil_b.aperture), seconds=0.6)
    volts = render_clip(design, dry).volts
    unit = slot.now.entry["unit_v"]
    assert np.max(np.abs(decoded(slot.now.wav) * unit - volts)) <= 1.5 * unit / PCM_FULL_SCALE
    # the rig and the phrase touch every design
    set_value(inputs["rig"], "cable_length", "3m")
    assert run.refresh([inputs["rig"]]).rendered == ("studio-reference", "ember-dark") and versions(run) == [3, 2]
    text = inputs["phrase"].read_text(encoding="utf-8")
    inputs["phrase"].write_text(text.replace("fret = 0", "fret = 1", 1), encoding="utf-8")
    assert len(run.refresh([inputs["phrase"]]).rendered) == 2 and versions(run) == [4, 3]
    # an unwatched file, a save of the same bytes, or one that changes no value, renders nothing
    assert run.refresh([inputs["rig"]]) is None
    with inputs["ember-dark"].open("a", encoding="utf-8") as fh:
        fh.write("# a comment\n")
    done = run.refresh([inputs["ember-dark"]])
    assert done.rendered == () and versions(run) == [4, 3] and "no value changed" in done.lines[0]
    assert run.refresh([inputs["rig"].parent / "elsewhere.toml"]) is None


def test_a_save_with_an_unlikely_value_renders_and_says_its_warning(run, inputs):
    # "22n" for the feedback capacitor is legal but puts the feedback corner inside the band: the save
    # renders, and the warning render clips and render check give for that file (render.plausible) is
    # one terminal line and stays with the design's row on the page
    from render import load_design
    from render.design import apply_rig, load_rig
    from render.plausible import design_warnings

    assert not any(x.startswith("warning: ") for x in run.start().lines)  # the two demo designs have none
    set_value(inputs["studio-reference"], "c", "22n")
    done = run.refresh([inputs["studio-reference"]])
    expected = design_warnings(apply_rig(load_design(inputs["studio-reference"]), load_rig(inputs["rig"])))
    assert done.rendered == ("studio-reference",) and expected and any('did you mean "22p"' in w for w in expected)
    assert [x for x in done.lines if x.startswith("warning: ")] == [f"warning: studio-reference: {w}" for w in expected]
    state = json.loads(run.board.state())
    assert state["designs"][0]["warnings"] == list(expected) and state["designs"][1]["warnings"] == []


def test_a_broken_save_shows_its_line_and_keeps_the_last_good_clip(run, inputs):
    good = run.slots[1].now
    text = inputs["ember-dark"].read_text(encoding="utf-8")
    inputs["ember-dark"].write_text(text.replace("[feedback]", "[feedbak]"), encoding="utf-8")
    done = run.refresh([inputs["ember-dark"]])
    assert done.rendered == () and len(done.problems) == 1
    line = done.problems[0]
    assert line.startswith(str(inputs["ember-dark"])) and "feedbak" in line and "\n" not in line
    assert any(x.startswith("Error: ") and "keeping version 1" in x for x in done.lines)
    assert run.slots[1].now is good and run.slots[1].error == line
    state = json.loads(run.board.state())
    assert state["problems"] == [line] and state["designs"][1]["error"] == line and state["designs"][1]["clip"] == "/clip/1-1.wav"
    # a broken phrase: every design keeps its clip; fixing it renders them all again
    phrase = inputs["phrase"].read_text(encoding="utf-8")
    inputs["phrase"].write_text(phrase.replace("[playing]", "[plaing]"), encoding="utf-8")
    done = run.refresh([inputs["phrase"]])
    assert done.rendered == () and any("plaing" in p for p in done.problems)
    inputs["ember-dark"].write_text(text, encoding="utf-8")
    inputs["phrase"].write_text(phrase, encoding="utf-8")
    done = run.refresh([inputs["ember-dark"], inputs["phrase"]])
    assert done.problems == () and set(done.rendered) == {"studio-reference", "ember-dark"}
    assert json.loads(run.board.state())["problems"] == []


def test_a_broken_save_put_back_keeps_the_pair_before_and_after(run, inputs):
    # project rule, no outside source (README: B flips between the latest version and the one before): a save that
    # does not load, then the file put back as it was, is no new version; the render before the last good one
    # stays "before", and a real change after it makes the last good one "before"
    set_value(inputs["studio-reference"], "load_c", "2.2nF")
    run.refresh([inputs["studio-reference"]])
    slot = run.slots[0]
    first, good = slot.before, slot.now
    assert (first.number, good.number) == (1, 2)
    text = inputs["studio-reference"].read_text(encoding="utf-8")
    inputs["studio-reference"].write_text(text.replace("[feedback]", "[feedbak]"), encoding="utf-8")
    assert run.refresh([inputs["studio-reference"]]).problems
    inputs["studio-reference"].write_text(text, encoding="utf-8")
    done = run.refresh([inputs["studio-reference"]])
    assert done.rendered == () and done.problems == () and slot.error is None
    assert slot.before is first and slot.now is good and "loads again, as version 2 plays on" in done.lines[0]
    state = json.loads(run.board.state())
    assert state["problems"] == [] and state["designs"][0]["clip"] == "/clip/0-2.wav" and state["designs"][0]["before"]["clip"] == "/clip/0-1.wav"
    set_value(inputs["studio-reference"], "load_c", "1.5nF")
    done = run.refresh([inputs["studio-reference"]])
    assert done.rendered == ("studio-reference",) and slot.before is good and slot.now.number == 3
    assert slot.changes == [("input_a.load_c", "2.2 nF", "1.5 nF")]


def _get(server: LiveServer, path: str, host: str | None = None, method: str = "GET"):
    conn = http.client.HTTPConnection("127.0.0.1", server.port, timeout=30)
    try:
        conn.request(method, path, headers={"Host": host or f"127.0.0.1:{server.port}"})
        r = conn.getresponse()
        return r.status, r.getheader("Content-Type"), r.read()
    finally:
        conn.close()


def test_on_port_80_the_server_answers_the_host_without_its_port(run):
    # render watch shares render listen's Host rule (render.loopback.own_authorities): a client leaves http's
    # default port out of Host (RFC 9110 §4.2.1, §4.2.3 and §7.2), so on port 80 "127.0.0.1" is this server
    from render.errors import InputError

    try:
        server = LiveServer(run.board, page=run.page(), port=80, wait_s=0.3).start_thread()
    except InputError as exc:  # port 80 taken or privileged here
        pytest.skip(f"cannot listen on 127.0.0.1:80 here ({exc})")
    try:
        assert _get(server, "/", host="127.0.0.1")[0] == 200
        assert _get(server, "/api/state", host="localhost")[0] == 200
        assert _get(server, "/", host="evil.example")[0] == 421
    finally:
        server.stop()


def test_the_server_serves_the_state_its_clips_and_waits_for_changes(run, inputs):
    server = LiveServer(run.board, page=run.page(), port=0, wait_s=0.3).start_thread()
    try:
        status, ctype, body = _get(server, "/")
        assert status == 200 and ctype.startswith("text/html") and b'"live":true' in body
        status, _, body = _get(server, "/api/state")
        state = json.loads(body)
        assert status == 200 and state["version"] == 1 and [d["clip"] for d in state["designs"]] == ["/clip/0-1.wav", "/clip/1-1.wav"]
        status, ctype, body = _get(server, "/clip/0-1.wav")
        assert status == 200 and ctype == "audio/wav" and sf.info(io.BytesIO(body)).frames == int(0.6 * 16000)
        assert _get(server, "/clip/0-9.wav")[0] == 404
        assert _get(server, "/clip/../../etc/passwd")[0] == 404
        assert _get(server, "/", host="evil.example:80")[0] == 421
        assert _get(server, "/", host="127.0.0.1")[0] == 421  # the bare address only on port 80
        assert _get(server, "/api/state", method="POST")[0] == 405
        assert _get(server, "/api/changes?after=1")[0] == 204  # nothing new within wait_s
        assert _get(server, "/api/changes?after=x")[0] == 400
        # a request that waits is answered the moment a save publishes
        got = {}
        waiter = threading.Thread(target=lambda: got.update(r=_get(server, "/api/changes?after=1")))
        server.wait_s = 20.0
        waiter.start()
        time.sleep(0.2)
        set_value(inputs["studio-reference"], "load_c", "2.2nF")
        run.refresh([inputs["studio-reference"]])
        waiter.join(timeout=20)
        status, _, body = got["r"]
        assert status == 200 and json.loads(body)["version"] == 2
        # and a stop wakes one that is still waiting
        late = threading.Thread(target=lambda: got.update(late=_get(server, "/api/changes?after=2")))
        late.start()
        _wait(lambda: run.board.waiting == 1, 10.0)  # it waits on the board (a fixed sleep lost this race on a loaded machine)
    finally:
        server.stop()
    late.join(timeout=5)
    assert not late.is_alive() and got["late"][0] in (204, 200)
    assert not [t for t in threading.enumerate() if t.name.startswith("render-watch")]


def _wait(condition, seconds: float) -> None:
    end = time.monotonic() + seconds
    while not condition() and time.monotonic() < end:
        time.sleep(0.05)


def test_the_watcher_follows_saves_on_disk(run, inputs):
    stop = threading.Event()
    lines: list[str] = []
    follower = threading.Thread(target=follow_changes, args=(run,), kwargs={"notify": lines.append, "stop": stop}, daemon=True)
    follower.start()
    try:
        # one save, whether the watcher is armed yet or not (test_a_save_during_the_first_render_is_rendered_once_watching)
        set_value(inputs["ember-dark"], "load_c", "5.6nF")
        _wait(lambda: run.board.version >= 2, 30.0)
        # the lines are printed just after the version is published
        _wait(lambda: any("ember-dark.toml: version 2" in x for x in lines), 10.0)
        assert versions(run) == [1, 2], lines
        assert any("ember-dark.toml: version 2" in x for x in lines)
        # an editor's save: write a new file and rename it over the old one
        tmp = inputs["studio-reference"].with_suffix(".swp")
        tmp.write_text(inputs["studio-reference"].read_text(encoding="utf-8").replace('load_c = "3n9"', 'load_c = "4n7"', 1), encoding="utf-8")
        tmp.replace(inputs["studio-reference"])
        _wait(lambda: run.board.version >= 3, 30.0)
        assert versions(run) == [2, 2], lines
    finally:
        stop.set()
        follower.join(timeout=10)
    assert not follower.is_alive()


def _save_while_rendering(monkeypatch, path: Path, key: str, value: str) -> list[str]:
    """Make the first render of ``path``'s design save ``key = value`` into that file, mid-render (after its file was
    read, before the watcher exists); the list returned gets the design's name when the save is made."""
    original = WatchRun._render
    saved: list[str] = []

    def render_and_save(self, design):
        if not saved and design.source == str(path):
            set_value(path, key, value)
            saved.append(design.name)
        return original(self, design)

    monkeypatch.setattr(WatchRun, "_render", render_and_save)
    return saved


def test_a_save_during_the_first_render_is_rendered_once_watching(inputs, monkeypatch):
    # the command renders everything, then arms the watcher: a save in between raises no event the watcher sees,
    # so once armed it compares every file with the bytes rendered, and renders the one that differs (one save)
    saved = _save_while_rendering(monkeypatch, inputs["studio-reference"], "load_c", "1n5")
    run = WatchRun([inputs["studio-reference"], inputs["ember-dark"]], dry=inputs["phrase"], settings=SETTINGS)
    run.start()
    assert saved == ["studio-reference"] and versions(run) == [1, 1]
    assert ["input_a.load_c", "3.9 nF"] in run.state()[0]["designs"][0]["values"]  # what was read before the save
    stop = threading.Event()
    lines: list[str] = []
    follower = threading.Thread(target=follow_changes, args=(run,), kwargs={"notify": lines.append, "stop": stop}, daemon=True)
    follower.start()
    try:
        _wait(lambda: any("studio-reference.toml: version 2" in x for x in lines), 20.0)
    finally:
        stop.set()
        follower.join(timeout=10)
    assert not follower.is_alive()
    assert versions(run) == [2, 1] and run.board.version == 2, lines
    state = run.state()[0]
    assert ["input_a.load_c", "1.5 nF"] in state["designs"][0]["values"] and state["designs"][0]["before"]["version"] == 1
    assert [x for x in lines if "version" in x] == [x for x in lines if "studio-reference.toml: version 2 rendered" in x] and len(lines) == 1, lines


def test_the_hash_recorded_is_of_the_bytes_rendered(inputs, monkeypatch):
    # a save between hashing a file and reading it, then put back: had the hash been taken before the read,
    # the file would match it again while the page plays the save's render
    original_text = inputs["studio-reference"].read_text(encoding="utf-8")
    import render.design

    loads = render.design.load_design

    def save_then_load(path, **kwargs):  # the save lands just before the design's file is read
        if Path(path) == inputs["studio-reference"] and "1n5" not in inputs["studio-reference"].read_text(encoding="utf-8"):
            set_value(inputs["studio-reference"], "load_c", "1n5")
        return loads(path, **kwargs)

    monkeypatch.setattr(render.design, "load_design", save_then_load)
    run = WatchRun([inputs["studio-reference"]], dry=inputs["phrase"], settings=SETTINGS)
    run.start()
    assert ["input_a.load_c", "1.5 nF"] in run.state()[0]["designs"][0]["values"]
    monkeypatch.setattr(render.design, "load_design", loads)
    inputs["studio-reference"].write_text(original_text, encoding="utf-8")  # put back
    done = run.refresh([inputs["studio-reference"]])
    assert done is not None and done.rendered == ("studio-reference",) and versions(run) == [2]
    assert ["input_a.load_c", "3.9 nF"] in run.state()[0]["designs"][0]["values"]


def test_the_page_title_counts_designs_in_words(inputs):
    one = WatchRun([inputs["studio-reference"]], dry=inputs["phrase"], settings=SETTINGS).page()
    two = WatchRun([inputs["studio-reference"], inputs["ember-dark"]], dry=inputs["phrase"], settings=SETTINGS).page()
    assert b"<title>render watch: 1 design</title>" in one and b"<title>render watch: 2 designs</title>" in two


def test_watch_refuses_a_missing_file_in_one_line(tmp_path):
    from render.cli import main

    res = CliRunner().invoke(main, ["watch", str(tmp_path / "nope.toml"), "--no-browser"])
    assert res.exit_code == 1 and res.output.strip().splitlines()[-1].startswith("Error: ") and "nope.toml" in res.output
    assert CliRunner().invoke(main, ["watch"]).exit_code == 1  # a design is required


@pytest.mark.parametrize(("sig", "way"), [(signal.SIGTERM, "parent"), (signal.SIGHUP, "group"), (signal.SIGINT, "group")], ids=["SIGTERM-parent", "SIGHUP-group", "SIGINT-group"])
def test_a_stopped_watch_leaves_no_process(inputs, sig, way):
    from tests.robustness.test_stops import GRACE_S, _kill_group, _start, _stop_and_watch

    proc = _start(["watch", inputs["studio-reference"], "--dry", inputs["phrase"], "--seconds", "0.4", "--sample-rate", "16000", "--no-browser"])
    try:
        seen = []
        for line in proc.stdout:
            seen.append(line)
            if "serving the comparison page at http://127.0.0.1:" in line:
                break
        assert any("serving" in x for x in seen), seen
        time.sleep(0.3)  # watching
        left, code, err = _stop_and_watch(proc, sig, way)
    finally:
        with contextlib.suppress(Exception):
            _kill_group(proc.pid)
    assert not left, f"`render watch` still alive {GRACE_S} s after {sig.name} to the {way}"
    assert code == 0 and "Traceback" not in err, (code, err)


def test_a_watch_stopped_in_its_first_render_exits_as_a_stopped_run(inputs):
    # project rule, no outside source (README: "Stopping a run"): a run stopped before it is done says "Aborted!"
    # and exits 1, as render clips does (tests/robustness/test_stops.py); watch has served nothing yet, so it has
    # not begun its watching, which only a stop ends (exit 0). A phrase long enough that its first render is
    # still going a moment after the start; stopped by SIGTERM to the parent as a supervisor does
    from tests.robustness.test_stops import GRACE_S, _kill_group, _start, _stop_and_watch

    proc = _start(["watch", inputs["studio-reference"], inputs["ember-dark"], "--dry", inputs["phrase"], "--seconds", "60", "--no-browser", "--port", "0"])
    try:
        _wait(lambda: _rendering(proc.pid), 60.0)
        assert _rendering(proc.pid), "render watch did not reach its first render within 60 s"
        left, code, err = _stop_and_watch(proc, signal.SIGTERM, "parent")
    finally:
        with contextlib.suppress(Exception):
            _kill_group(proc.pid)
    assert not left, f"`render watch` still alive {GRACE_S} s after SIGTERM"
    assert code == 1 and "Aborted!" in err and "Traceback" not in err, (code, err)
    assert sorted(p.name for p in inputs["phrase"].parent.iterdir()) == sorted(p.name for p in inputs.values())  # nothing written beside the inputs


def _rendering(pid: int) -> bool:
    """Whether the watch process has bound its port (a socket among its open files): the command binds it just
    before the first render, so that render is then under way (it takes seconds for a 60 s phrase)."""
    fds = Path(f"/proc/{pid}/fd")
    try:
        return any(os.readlink(fd).startswith("socket:") for fd in fds.iterdir())
    except OSError:
        return False


def test_a_stop_in_the_first_render_is_a_stopped_run_in_process(inputs, monkeypatch):
    # the same contract as above, without timing: the first render raises KeyboardInterrupt (what Ctrl-C, or the
    # SIGTERM and SIGHUP the command turns into one, does), and the command reports a stopped run and frees its port
    from render.cli import main

    bound = []
    original = LiveServer.__init__

    def spy(self, *args, **kwargs):
        original(self, *args, **kwargs)
        bound.append(self)

    def stopped(self):
        raise KeyboardInterrupt

    monkeypatch.setattr(LiveServer, "__init__", spy)
    monkeypatch.setattr(WatchRun, "start", stopped)
    res = CliRunner().invoke(main, ["watch", str(inputs["studio-reference"]), "--dry", str(inputs["phrase"]), "--no-browser"])
    assert res.exit_code == 1 and "Aborted!" in res.output and "serving" not in res.output, res.output
    assert len(bound) == 1 and bound[0].socket.fileno() == -1  # its socket closed


def test_the_watch_page_carries_the_figures_render_clips_gives_the_same_designs(run, inputs, tmp_path):
    # project rule, no outside source (README: watch serves the same page as render clips): every column of the
    # summary, the brightness columns among them, and the band levels the page matches loudness from, equal those
    # of a clips run of the same designs, phrase, rig and settings
    from render.compare.folders import CLIPS_COLUMNS
    from render.design import apply_rig, load_designs, load_rig
    from render.runs.clips import render_clips

    from .test_page_build import page_of

    designs = [apply_rig(d, load_rig(inputs["rig"])) for d in load_designs([inputs["studio-reference"], inputs["ember-dark"]])[0]]
    render_clips(designs, inputs["phrase"], settings=SETTINGS, out=tmp_path / "clips", rig=load_rig(inputs["rig"]), plots=False)
    clips_page, _ = page_of(tmp_path / "clips")
    state = json.loads(run.board.state())
    assert state["matched_column"] == clips_page["matched_column"] == len(CLIPS_COLUMNS) - 1
    for got, want in zip(state["designs"], clips_page["designs"], strict=True):
        assert got["cells"] == want["cells"], (got["name"], got["cells"], want["cells"])
        assert got["matched_level_db"] == want["matched_level_db"] and None not in got["matched_level_db"]
        assert got["values"] == want["values"]
    assert "not computed" not in state["designs"][1]["cells"] and state["designs"][0]["cells"][-1] == "reference"


def test_a_change_below_four_figures_is_named(run, inputs):
    # project rule, no outside source: the values are compared exactly; the page and the terminal show them to
    # four figures, or as many as tell the two apart
    set_value(inputs["studio-reference"], "r", "110.04k")
    done = run.refresh([inputs["studio-reference"]])
    assert done.rendered == ("studio-reference",)
    assert run.slots[0].changes == [("feedback.r", "110 kΩ", "110.04 kΩ")]
    assert "feedback.r 110 kΩ → 110.04 kΩ" in done.lines[0] and "no value changed" not in done.lines[0]
    state = json.loads(run.board.state())
    assert state["designs"][0]["changes"] == [["feedback.r", "110 kΩ", "110.04 kΩ"]]


def test_a_save_of_a_file_a_design_reads_renders_it_again(tmp_path):
    # project rule, no outside source: a measured coil's CSV (measured = "coils/...csv", in a folder of its own) is
    # watched as the design file is; saving it renders the design again, saving the same bytes does not
    (tmp_path / "coils").mkdir()
    csv = tmp_path / "coils" / "harbour-blade-coil.synthetic.csv"
    csv.write_bytes((ROOT / "models" / "coils" / csv.name).read_bytes())
    design = tmp_path / "measured-blade.toml"
    design.write_text((ROOT / "models" / "measured-blade.toml").read_text(encoding="utf-8"), encoding="utf-8")
    phrase = tmp_path / "phrase.toml"
    phrase.write_text((ROOT / "dry_signals" / "chug_riff.toml").read_text(encoding="utf-8"), encoding="utf-8")
    run = WatchRun([design], dry=phrase, settings=SETTINGS)
    run.start()
    assert csv in run.files
    assert run.refresh([csv]) is None  # the bytes the design read
    stop = threading.Event()
    lines: list[str] = []
    follower = threading.Thread(target=follow_changes, args=(run,), kwargs={"notify": lines.append, "stop": stop}, daemon=True)
    follower.start()
    text = csv.read_text(encoding="utf-8")
    assert "\n20,4077.24,3.64979\n" in text
    try:
        deadline = time.monotonic() + 60  # repeated until the watcher, starting, sees it (as above)
        while run.board.version < 2 and time.monotonic() < deadline:
            csv.write_text(text.replace("\n20,4077.24,3.64979\n", "\n20,4177.24,3.64979\n"), encoding="utf-8")
            _wait(lambda: run.board.version >= 2, 2.0)
    finally:
        stop.set()
        follower.join(timeout=10)
    assert versions(run) == [2], lines
    changed = {k for k, _, _ in run.slots[0].changes}
    assert {"coil_a.impedance_from.sha256", "coil_b.impedance_from.sha256"} <= changed
