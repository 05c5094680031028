"""Output folders and files: refuse before any work what would replace or mix with earlier results.

Every command checks its outputs here before it computes anything, so a
refused run touches nothing.
"""

from __future__ import annotations

import contextlib
import time
from collections.abc import Iterable, Iterator
from pathlib import Path

from ..errors import InputError

OUTPUTS = Path("outputs")  # where a run's folder goes when none is given


def refuse_existing(paths: Iterable[str | Path | None], *, overwrite: bool) -> None:
    """InputError for the first of ``paths`` that exists, unless ``overwrite`` ('-' and None are skipped)."""
    for p in paths:
        if p and p != "-" and Path(p).exists() and not overwrite:
            raise InputError(f"{p}: exists; pass --overwrite to replace it or choose another name")


def make_folder(path: str | Path) -> Path:
    """Create an output folder (and its parents); an OSError becomes one line."""
    p = Path(path)
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise InputError(f"--out={p}: cannot create it ({e.strerror}); choose another folder") from None
    return p


def new_run_folder(root: Path = OUTPUTS, prefix: str = "clips") -> Path:
    """A fresh ``root/<prefix>-<date>-<time>`` name (not created), never one that exists."""
    stamp = time.strftime("%Y%m%d-%H%M%S")
    out = root / f"{prefix}-{stamp}"
    k = 2
    while out.exists():
        out = root / f"{prefix}-{stamp}-{k}"
        k += 1
    return out


def output_folder(out_dir: str | Path | None, *, overwrite: bool, prefix: str = "clips") -> Path:
    """The folder a run writes to (not yet created): ``out_dir``, or a new one under ``outputs/``.

    Refused if ``out_dir`` is a file, or a folder that holds files and ``overwrite`` is false.
    """
    if out_dir is None:
        return new_run_folder(OUTPUTS, prefix)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InputError(f"--out={out}: is a file; give a folder")
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise InputError(f"--out={out}: folder exists and is not empty; pass --overwrite to replace its files or choose another folder")
    return out


INCOMPLETE = "INCOMPLETE.txt"  # marks a run folder whose run has not finished (or was stopped)
INCOMPLETE_TEXT = (
    "This run has not finished: it is still running, or it was stopped (Ctrl-C, SIGTERM, SIGHUP, a kill).\n"
    "Every file in this folder is whole, but some may be missing. Run the command again with --overwrite.\n"
)


@contextlib.contextmanager
def run_folder(path: str | Path) -> Iterator[Path]:
    """Create a run's folder, marked incomplete (``INCOMPLETE.txt``) until the body finishes.

    The marker is written first and removed last, so a folder without it holds
    a finished run, whatever stopped the process (even SIGKILL). When the body
    is left by an exception (a refusal, a stop), the ``.tmp-*`` files that
    stopped workers left behind are removed; a folder with nothing else in it
    goes too (the marker, and the folder if this run made it), otherwise the
    marker stays.
    """
    from .atomic import fsync_folder, write_text

    made = not Path(path).exists()
    folder = make_folder(path)
    marker = folder / INCOMPLETE
    write_text(marker, INCOMPLETE_TEXT, overwrite=True)
    try:
        yield folder
    except BaseException:
        for leftover in folder.glob(".tmp-*"):
            with contextlib.suppress(OSError):
                leftover.unlink()
        if not [p for p in folder.iterdir() if p.name != INCOMPLETE]:
            with contextlib.suppress(OSError):
                marker.unlink()
                if made:
                    folder.rmdir()
        raise
    marker.unlink()
    fsync_folder(folder)
