"""Output folders and files: refuse before any work what would replace or mix with earlier results.

Every command checks its outputs here before it computes anything, so a
refused run touches nothing.
"""

from __future__ import annotations

import contextlib
import os
import time
from collections.abc import Iterable, Iterator
from pathlib import Path

from ..errors import ArgumentError, InputError
from .runlist import BY, INCOMPLETE, INCOMPLETE_TEXT, RUN_FILES, TEMPORARY

OUTPUTS = Path("outputs")  # where a run's folder goes when none is given


def refuse_existing(paths: Iterable[str | Path | None], *, overwrite: bool, argument: str | None = None) -> None:
    """InputError for the first of ``paths`` that exists, unless ``overwrite`` ('-' and None are skipped).

    With ``argument`` (a library function's, whose outputs are ``paths``), an :class:`ArgumentError` naming it
    and ``overwrite=True`` for a Python caller; the command line's words stay ``PATH: exists; pass --overwrite ...``.
    """
    for p in paths:
        if p and p != "-" and Path(p).exists() and not overwrite:
            cli = f"{p}: exists; pass --overwrite to replace it or choose another name"
            if argument is None:
                raise InputError(cli)
            raise ArgumentError(
                argument, f"{p}", "exists; pass --overwrite to replace it or choose another name", python_why="exists; pass overwrite=True to replace it or choose another name", cli=cli
            )


def same_file(a: str | Path, b: str | Path) -> bool:
    """Whether paths ``a`` and ``b`` name one file: the same inode when both exist (links, ``./`` and case-blind file systems included), else the same resolved path."""
    pa, pb = Path(a), Path(b)
    try:
        if pa.exists() and pb.exists():
            return pa.samefile(pb)
        return pa.resolve() == pb.resolve()
    except OSError:
        return False


def refuse_inputs(outputs: Iterable[tuple[str, str | Path | None]], inputs: Iterable[tuple[str, str | Path | None]]) -> None:
    """InputError, before any work, for the first output that is one of the inputs: writing it would destroy what is read.

    ``outputs`` and ``inputs`` are (how the command line names it, path) pairs, such as ``("--out", "m.csv")``
    and ``("MEASUREMENT", "m.csv")``; '-' and None are skipped. One line naming both, with the fix.
    """
    ins = [(name, p) for name, p in inputs if p and p != "-"]
    for out_name, out in outputs:
        if not out or out == "-":
            continue
        for in_name, src in ins:
            if same_file(out, src):
                raise InputError(f"{out_name} {out} is the same file as {in_name} {src}: writing it would destroy the input (--overwrite does not allow that); choose another name")


def make_folder(path: str | Path) -> Path:
    """Create an output folder (and its parents); an OSError becomes one line."""
    p = Path(path)
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise ArgumentError("out", f"{p}", f"cannot create it ({e.strerror}); choose another folder") from None
    return p


@contextlib.contextmanager
def folder_kept_on_success(path: str | Path) -> Iterator[Path]:
    """Create ``path`` (and its missing parents); if the body raises, remove each one made here that is still empty.

    So a refusal after the folder was made leaves nothing behind.
    """
    p = Path(path)
    missing = [q for q in (p, *p.parents) if not q.exists()]
    folder = make_folder(p)
    try:
        yield folder
    except BaseException:
        _remove_empty(missing)
        raise


def _remove_empty(made: list[Path]) -> None:
    """Remove each of the folders ``made`` (deepest first) that is empty."""
    for q in made:
        with contextlib.suppress(OSError):
            q.rmdir()  # only an empty folder goes


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
        raise ArgumentError("out", f"{out}", "is a file; give a folder")
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise ArgumentError(
            "out",
            f"{out}",
            "folder exists and is not empty; pass --overwrite to replace its files or choose another folder",
            python_why="folder exists and is not empty; pass overwrite=True to replace its files or choose another folder",
        )
    return out


def _files(folder: Path) -> dict[str, tuple[int, int, int]]:
    """Every file below ``folder`` (but the run's own list and marker): relative path -> (inode, mtime ns, size)."""
    out = {}
    for p in folder.rglob("*"):
        if p.is_file() and p.name not in (RUN_FILES, INCOMPLETE) and not p.name.startswith(TEMPORARY):
            st = p.stat()
            out[p.relative_to(folder).as_posix()] = (st.st_ino, st.st_mtime_ns, st.st_size)
    return out


def _listed(folder: Path) -> set[str]:
    """The files an earlier run listed in ``folder`` (:data:`RUN_FILES`; none without a list)."""
    try:
        text = (folder / RUN_FILES).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return set()
    return {line for line in text.splitlines() if line and not line.startswith("/") and ".." not in Path(line).parts}


def _remove_temporary(folder: Path) -> None:
    """Remove the ``.tmp-*`` files (:mod:`render.io.atomic`'s temporary names) in ``folder`` and below."""
    for leftover in folder.rglob(f"{TEMPORARY}*"):
        with contextlib.suppress(OSError):
            if leftover.is_file() and not leftover.is_symlink():
                leftover.unlink()


def _remove_stale(folder: Path, stale: set[str]) -> None:
    """Remove an earlier run's files this run did not write again, and the sub-folders they leave empty."""
    for rel in sorted(stale, key=lambda r: -r.count("/")):
        p = folder / rel
        with contextlib.suppress(OSError):
            if p.is_file() and not p.is_symlink():
                p.unlink()
            for q in p.parents:
                if q == folder or folder not in q.parents:
                    break
                q.rmdir()  # an OSError (not empty) ends the climb


@contextlib.contextmanager
def run_folder(path: str | Path) -> Iterator[Path]:
    """Create a run's folder, marked incomplete (``INCOMPLETE.txt``) until the body finishes.

    The marker is written first and removed last, so a folder without it holds
    a finished run, whatever stopped the process (even SIGKILL). When the body
    is left by an exception (a refusal, a stop), the ``.tmp-*`` files that
    stopped workers left behind are removed; a folder with nothing else in it
    goes too (the marker, and the folder and its parents if this run made them),
    otherwise the marker stays.

    The run lists the files it writes in :data:`RUN_FILES`: each name as the
    file is begun (:func:`render.io.runlist.note_output`), and the whole list again when it
    finishes. Run again into the folder (``--overwrite``), it removes the
    ``.tmp-*`` files left there and the files an earlier run listed and it did
    not write again, so the folder holds this run's outputs only, also after a
    run stopped or killed part-way; files no run listed (a listener's notes)
    are left alone.
    """
    from .atomic import fsync_folder, write_text

    made = [q for q in (Path(path), *Path(path).parents) if not q.exists()]
    folder = make_folder(path)
    _remove_temporary(folder)  # a killed run's: never under a final name, never a user's
    earlier = _listed(folder)
    before = _files(folder)
    marker = folder / INCOMPLETE
    write_text(marker, INCOMPLETE_TEXT + BY.format(pid=os.getpid()), overwrite=True)

    def written() -> set[str]:
        now = _files(folder)
        return {rel for rel, st in now.items() if before.get(rel) != st}

    try:
        yield folder
    except BaseException:
        _remove_temporary(folder)
        if not [p for p in folder.iterdir() if p.name not in (INCOMPLETE, RUN_FILES)]:
            with contextlib.suppress(OSError):
                marker.unlink()
                (folder / RUN_FILES).unlink(missing_ok=True)
            _remove_empty(made)  # the folder and the parents this run made, if nothing is left in them
        raise
    mine = written()
    _remove_stale(folder, earlier - mine)
    write_text(folder / RUN_FILES, "".join(f"{r}\n" for r in sorted(mine)), overwrite=True)
    marker.unlink()
    fsync_folder(folder)
