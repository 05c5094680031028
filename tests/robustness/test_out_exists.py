"""An output that exists: refused without --overwrite before any work, and then
nothing in it is touched (names, contents and modification times all kept).

No check values that need a source here: loopback addresses, durations, exit codes and
message text only.
"""

from __future__ import annotations

import os

from .conftest import ODD, PHRASE, REF, assert_refused, check_outputs, run


def snapshot(folder):
    """Every entry below ``folder`` with its modification time (ns) and bytes; the folder's own mtime."""
    entries = {}
    for p in sorted(folder.rglob("*")):
        st = p.stat()
        entries[str(p.relative_to(folder))] = (st.st_mtime_ns, p.read_bytes() if p.is_file() else None)
    return folder.stat().st_mtime_ns, entries


def clips(out, *extra):
    return run("clips", REF, ODD, "--dry", PHRASE, "--seconds", 0.2, "--out", out, "--no-plots", "--jobs", 1, *extra)


def aged(folder):
    """Set every mtime an hour back, so that any rewrite would show."""
    for p in [*folder.rglob("*"), folder]:
        st = p.stat()
        os.utime(p, ns=(st.st_atime_ns - 3600 * 10**9, st.st_mtime_ns - 3600 * 10**9))


def test_a_folder_of_an_earlier_run_is_refused_and_left_alone(tmp_path):
    out = tmp_path / "run"
    assert clips(out).exit_code == 0
    (out / "notes.txt").write_text("my listening notes\n", encoding="utf-8")
    (out / "sub").mkdir()
    (out / "sub" / "keep.wav").write_bytes(b"RIFF not mine to judge")
    aged(out)
    before = snapshot(out)
    for extra in ((), ("--passive",), ("--seconds", 0.3)):
        assert_refused(clips(out, *extra), f"--out={out}: folder exists and is not empty; pass --overwrite to replace its files or choose another folder")
        assert snapshot(out) == before


def test_overwrite_replaces_the_runs_own_files_only(tmp_path):
    out = tmp_path / "run"
    assert clips(out).exit_code == 0
    (out / "notes.txt").write_text("my listening notes\n", encoding="utf-8")
    aged(out)
    before = snapshot(out)[1]
    res = clips(out, "--overwrite", "--seconds", 0.3)
    assert res.exit_code == 0, res.output
    after = snapshot(out)[1]
    assert after["notes.txt"] == before["notes.txt"]  # not the run's: untouched
    assert after["studio-reference.wav"][0] > before["studio-reference.wav"][0]
    check_outputs(out, frames=14400)
    assert not [p for p in out.iterdir() if p.name.startswith(".tmp-")]


def test_an_empty_folder_is_used_and_a_file_is_refused(tmp_path):
    empty = tmp_path / "empty"
    empty.mkdir()
    assert clips(empty).exit_code == 0
    a_file = tmp_path / "taken"
    a_file.write_bytes(b"something else")
    aged(tmp_path)
    before = snapshot(tmp_path)
    assert_refused(clips(a_file), f"--out={a_file}: is a file; give a folder")
    assert_refused(clips(a_file, "--overwrite"), "is a file; give a folder")
    assert snapshot(tmp_path) == before


def test_single_file_outputs_are_refused_without_overwrite(tmp_path):
    """The commands that write named files refuse an existing one before any work."""
    wav, csv, js = tmp_path / "dry.wav", tmp_path / "resp.csv", tmp_path / "check.json"
    for p in (wav, csv, js):
        p.write_bytes(b"an earlier result")
    aged(tmp_path)
    before = snapshot(tmp_path)
    assert_refused(run("dry", PHRASE, "--out", wav, "--seconds", 0.2), f"{wav}: exists; pass --overwrite to replace it or choose another name")
    assert_refused(run("response", REF, "--csv", csv), f"{csv}: exists; pass --overwrite")
    assert_refused(run("check", REF, "--json", js), f"{js}: exists; pass --overwrite")
    assert snapshot(tmp_path) == before
