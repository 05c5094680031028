"""A run folder's marker and its list of files, kept as each file is begun.

A run (:func:`render.io.folders.run_folder`) marks its folder ``INCOMPLETE.txt``
from its start to its end, the marker naming the run's process. Every writer
(:mod:`render.io.atomic`, :class:`render.io.wav.FloatWavWriter`) calls
:func:`note_output` before it makes its temporary file: a folder so marked by
this process (or by the parent of this forked worker) gets the file's name
appended to its ``.run-files``. A run stopped at any moment, SIGKILL included,
has therefore listed every file it wrote or began, and the folder's next
``--overwrite`` run removes them; a file no run of the folder began (a
listener's notes, another command's output after the stop) is never listed.
"""

from __future__ import annotations

import contextlib
import os
import re
from pathlib import Path

INCOMPLETE = "INCOMPLETE.txt"  # marks a run folder whose run has not finished (or was stopped)
INCOMPLETE_TEXT = (
    "This run has not finished: it is still running, or it was stopped (Ctrl-C, SIGTERM, SIGHUP, a kill).\n"
    "Every file in this folder is whole, but some may be missing. Run the command again with --overwrite.\n"
)
BY = "Run by process {pid}.\n"  # the marker's last line: the process whose files (its workers' too) the folder lists
_BY_PATTERN = re.compile(r"^Run by process (\d+)\.$", re.MULTILINE)
RUN_FILES = ".run-files"  # the files a run wrote in its folder, one relative path a line; its next --overwrite removes those it does not write again
TEMPORARY = ".tmp-"  # how every temporary file's name begins (render.io.atomic): never a run's output


def _marked_by_this_run(folder: str) -> bool:
    """Whether ``folder`` holds the marker of a run this process is, or works for (a forked worker's parent)."""
    try:
        with open(os.path.join(folder, INCOMPLETE), encoding="utf-8") as fh:
            found = _BY_PATTERN.search(fh.read(4096))
    except (OSError, UnicodeDecodeError):
        return False
    return found is not None and int(found.group(1)) in (os.getpid(), os.getppid())


def note_output(path: str | Path) -> None:
    """List ``path`` in the ``.run-files`` of each folder above it that a running run of this process marks.

    Called before the file (its temporary file) is made. The marker, the list and temporary files are never
    listed. A list that cannot be written is skipped: the file's own write then fails with its one-line
    refusal, or succeeds unlisted.
    """
    full = os.path.abspath(path)
    name = os.path.basename(full)
    if name in (INCOMPLETE, RUN_FILES) or name.startswith(TEMPORARY):
        return
    folder = os.path.dirname(full)
    while True:
        if _marked_by_this_run(folder):
            with contextlib.suppress(OSError), open(os.path.join(folder, RUN_FILES), "a", encoding="utf-8") as fh:
                fh.write(Path(os.path.relpath(full, folder)).as_posix() + "\n")  # one short appended line: whole beside a worker's
        up = os.path.dirname(folder)
        if up == folder:
            return
        folder = up
