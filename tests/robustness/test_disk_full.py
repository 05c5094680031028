"""A full disk, a refused permission, a crash in the middle of a write: one clear
line, exit 1, and no partial file under a final name.

No check values that need a source here: loopback addresses, durations, exit codes and
message text only.

The faults are made in-process by monkeypatching the file calls, not by filling
a disk or by chmod: tests run as root in CI, where a read-only folder is still
writable, and a tiny file system needs mount rights.
"""

from __future__ import annotations

import errno
import subprocess
import sys
import textwrap

import pytest

from render.errors import InputError
from render.io import atomic
from render.io.atomic import atomic_path, write_bytes

from .conftest import ODD, PHRASE, REF, ROOT, assert_refused, check_outputs, run

FRAMES = 14400  # 0.3 s at 48 kHz


def clips(out, *extra):
    return run("clips", REF, ODD, "--dry", PHRASE, "--seconds", 0.3, "--out", out, "--jobs", 1, *extra)


def fail_on_write(monkeypatch, nth, err=errno.ENOSPC):
    """The ``nth`` atomic write (counted from 1) writes half its bytes, then fails with ``err``."""
    real = atomic.Path.write_bytes
    calls = []

    def write_bytes(self, data):
        calls.append(self.name)
        if len(calls) == nth:
            real(self, bytes(data[: len(data) // 2]))
            raise OSError(err, __import__("os").strerror(err))
        return real(self, data)

    monkeypatch.setattr(atomic.Path, "write_bytes", write_bytes)
    return calls


def no_temporary_files(folder):
    assert not [p.name for p in folder.rglob(".tmp-*")]


@pytest.mark.parametrize("nth", [1, 4, 8])
def test_a_full_disk_gives_one_line_and_no_partial_file(tmp_path, monkeypatch, nth):
    out = tmp_path / "run"
    calls = fail_on_write(monkeypatch, nth)
    res = clips(out)
    line = assert_refused(res, "could not be written (No space left on device); free some disk space or choose another folder")
    assert len(calls) == nth  # nothing more is written after the failure
    failed = calls[-1].split(".tmp-", 1)[1].rsplit(".", 1)[0]  # the final name the failed write was for
    assert line.startswith(f"Error: {out / failed}: ")
    no_temporary_files(out)
    names = check_outputs(out, frames=FRAMES)  # what was written before is whole
    assert failed not in names and len(names) == nth - 1
    monkeypatch.undo()
    res = clips(out, "--overwrite")  # space again: a rerun completes
    assert res.exit_code == 0, res.output
    assert len(check_outputs(out, frames=FRAMES)) == 2 * 5 + 2 + 2  # per design 5, the summary and overlay, the page and its clips


@pytest.mark.parametrize(
    "target, err, fragment",
    [
        ("fsync", errno.EIO, "could not be written (Input/output error); check free space and permissions"),
        ("replace", errno.EACCES, "could not be written (Permission denied); check the folder's permissions or choose another folder"),
        ("replace", errno.EROFS, "could not be written (Read-only file system); the file system is read-only"),
    ],
)
def test_a_failure_after_the_data_is_written_leaves_nothing(tmp_path, monkeypatch, target, err, fragment):
    import os

    def refuse(*args, **kwargs):
        raise OSError(err, os.strerror(err))

    monkeypatch.setattr(atomic.os, target, refuse)
    out = tmp_path / "run"
    assert_refused(clips(out, "--overwrite"), fragment)
    monkeypatch.undo()
    if out.exists():
        assert check_outputs(out) == []
    no_temporary_files(tmp_path)


def test_a_folder_that_refuses_new_files(tmp_path, monkeypatch):
    """As a user without write permission sees it (mkstemp fails with EACCES)."""
    import os

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(atomic.tempfile, "mkstemp", refuse)
    out = tmp_path / "run"
    assert_refused(clips(out), f"Error: {out}: cannot write here (Permission denied); check the folder's permissions or choose another folder")
    assert not out.exists() or list(out.iterdir()) == []
    # the other commands that write files say the same, and leave nothing
    assert_refused(run("check", REF, "--json", tmp_path / "c.json"), "cannot write here (Permission denied)")
    assert_refused(run("response", REF, "--csv", tmp_path / "r.csv"), "cannot write here (Permission denied)")
    assert_refused(run("dry", PHRASE, "--out", tmp_path / "d.wav", "--seconds", 0.2, "--no-spectrogram"), "cannot write here (Permission denied)")
    assert [p.name for p in tmp_path.iterdir()] in ([], ["run"])


def test_a_name_taken_while_writing_is_not_replaced(tmp_path):
    target = tmp_path / "clip.json"
    with pytest.raises(InputError, match=r"clip.json: exists; pass --overwrite to replace it or choose another name$"):
        with atomic_path(target) as tmp:
            tmp.write_bytes(b'{"mine": false}')
            target.write_bytes(b'{"theirs": true}')  # another program took the name meanwhile
    assert target.read_bytes() == b'{"theirs": true}'
    assert [p.name for p in tmp_path.iterdir()] == ["clip.json"]


def test_an_error_inside_the_write_removes_the_temporary_file(tmp_path):
    target = tmp_path / "out.wav"
    for exc in (KeyboardInterrupt, ValueError):
        with pytest.raises(exc):
            with atomic_path(target) as tmp:
                tmp.write_bytes(b"RIFF half")
                raise exc()
        assert list(tmp_path.iterdir()) == []


def test_a_process_killed_in_the_middle_of_a_write_leaves_no_final_name(tmp_path):
    """SIGKILL half-way through writing the bytes: the final name never appears."""
    code = textwrap.dedent(
        """
        import os, signal, sys
        from pathlib import Path
        from render.io import atomic

        real = Path.write_bytes
        def half_then_die(self, data):
            real(self, data[: len(data) // 2])
            os.kill(os.getpid(), signal.SIGKILL)
        Path.write_bytes = half_then_die
        atomic.write_bytes(sys.argv[1], b"x" * 100000)
        """
    )
    target = tmp_path / "S.wav"
    proc = subprocess.run([sys.executable, "-c", code, str(target)], cwd=ROOT, capture_output=True, timeout=60)
    assert proc.returncode == -9
    assert not target.exists()
    (left,) = tmp_path.iterdir()  # only the temporary file, under a name that says what it is
    assert left.name.startswith(".tmp-S.wav.") and left.stat().st_size == 50000
    write_bytes(target, b"whole", overwrite=False)  # and the next write is not disturbed by it
    assert target.read_bytes() == b"whole"


def test_an_output_folder_that_cannot_be_made(tmp_path, monkeypatch):
    import os

    def refuse(self, *args, **kwargs):
        raise PermissionError(errno.EACCES, os.strerror(errno.EACCES))

    monkeypatch.setattr(atomic.Path, "mkdir", refuse)
    assert_refused(clips(tmp_path / "new" / "run"), "Permission denied")
