"""Atomic file output: write to a temporary name in the same folder, fsync, rename.

A file under its final name is therefore always complete: an interrupted
or failed command leaves at most a ``.tmp-*`` file, which is removed when
the failure is seen (a killed process cannot remove it; the name shows
what it was, and it is never mistaken for an output).

Without ``overwrite`` the temporary file is hard-linked to the final name,
which fails if a file of that name appeared meanwhile, so nothing is ever
replaced unasked; where the file system has no hard links it falls back to
a rename after a second look. After the rename the folder itself is
fsynced, so the new name survives a power cut as well as the data.
"""

from __future__ import annotations

import contextlib
import errno
import os
import tempfile
from pathlib import Path

from ..errors import InputError
from .runlist import note_output

# What to do about a failed write, by errno.
_FIXES = {
    errno.ENOSPC: "free some disk space or choose another folder",
    errno.EDQUOT: "free some space within your disk quota or choose another folder",
    errno.EFBIG: "the file is too large for this file system; choose another folder",
    errno.EACCES: "check the folder's permissions or choose another folder",
    errno.EPERM: "check the folder's permissions or choose another folder",
    errno.EROFS: "the file system is read-only; choose another folder",
}
_DEFAULT_FIX = "check free space and permissions"


def _failure(path, exc: OSError) -> InputError:
    reason = exc.strerror or type(exc).__name__
    return InputError(f"{path}: could not be written ({reason}); {_FIXES.get(exc.errno or 0, _DEFAULT_FIX)}")


def _exists(path: Path) -> InputError:
    return InputError(f"{path}: exists; pass --overwrite to replace it or choose another name")


def fsync_folder(folder: Path) -> None:
    """Make a new name in ``folder`` (a rename, a created file) durable; some file systems refuse, which changes nothing here."""
    with contextlib.suppress(OSError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _publish(tmp: Path, path: Path, *, overwrite: bool) -> None:
    """Give the complete temporary file its final name."""
    if overwrite:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)  # fails with EEXIST if the name was taken meanwhile: never replaces
    except FileExistsError:
        raise _exists(path) from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK, errno.ENOSYS):
            raise
        if path.exists():  # no hard links here: look again, then rename
            raise _exists(path) from None
        os.replace(tmp, path)


def _temporary_in(folder: Path, name: str) -> Path:
    """A new empty temporary file in ``folder`` (``.tmp-<name>.…``), or the one-line refusal of a folder that cannot be written."""
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".tmp-{name}.", dir=folder)
    except OSError as exc:
        raise _unwritable(folder, exc.errno, exc.strerror) from None
    os.close(fd)
    return Path(tmp_name)


def refuse_unwritable(folder: str | Path) -> None:
    """Refuse, before any work, an existing folder that no file can be written into (no permission, read-only).

    Tried where the system can without touching the folder: an unnamed temporary file (Linux's ``O_TMPFILE``) is
    opened there and closed, which adds no entry and leaves the folder's modification time alone. Where that is not
    supported (other systems; file systems without it, such as /sys) the permission bits decide, and a folder that
    passes them but refuses the file is still refused, in one line, when the file is written (:func:`atomic_path`).
    """
    folder = Path(folder)
    flag = getattr(os, "O_TMPFILE", None)
    if flag is not None:
        try:
            os.close(os.open(folder, flag | os.O_WRONLY, 0o600))
            return
        except OSError as exc:
            if exc.errno not in _NO_TMPFILE:
                raise _unwritable(folder, exc.errno, exc.strerror) from None
    if not os.access(folder, os.W_OK | os.X_OK):
        raise _unwritable(folder, errno.EACCES, os.strerror(errno.EACCES))


def _unwritable(folder: Path, code: int | None, reason: str | None) -> InputError:
    """The one-line refusal of a folder no file can be made in, with the fix for its error."""
    return InputError(f"{folder}: cannot write here ({reason}); {_FIXES.get(code or 0, 'choose another folder')}")


# what an open with O_TMPFILE fails with where the file system (or an old kernel) does not support it
_NO_TMPFILE = {errno.EOPNOTSUPP, errno.ENOTSUP, errno.EINVAL, errno.EISDIR}


@contextlib.contextmanager
def atomic_path(path: str | Path, *, overwrite: bool = False):
    """Yield a temporary path beside ``path``; on success rename it to ``path``.

    Raises InputError if ``path`` exists and ``overwrite`` is false, or if
    the folder cannot be written; an OSError while the body writes the
    temporary file (a full disk, say) becomes an InputError too, and the
    temporary file is removed in every case.
    """
    path = Path(path)
    if path.is_dir():
        raise InputError(f"{path}: is a folder; give a file name to write")
    if path.exists() and not overwrite:
        raise _exists(path)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{folder}: folder does not exist; create it first or choose another path")
    note_output(path)  # listed in its run's folder before it exists: a killed run's next --overwrite removes it
    tmp = _temporary_in(folder, path.name)
    try:
        yield tmp
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o644)  # mkstemp makes 0600; give the usual rw-r--r--
        _publish(tmp, path, overwrite=overwrite)
        fsync_folder(folder)
    except OSError as exc:
        raise _failure(path, exc) from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()


def write_bytes(path: str | Path, data: bytes, *, overwrite: bool = False) -> Path:
    """Write ``data`` to ``path`` atomically."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        tmp.write_bytes(data)
    return Path(path)


def write_text(path: str | Path, text: str, *, overwrite: bool = False) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically."""
    return write_bytes(path, text.encode("utf-8"), overwrite=overwrite)


def json_text(payload: object) -> str:
    """The JSON form every record is written in: indented, NaN and infinity refused."""
    import json

    return json.dumps(payload, indent=2, allow_nan=False) + "\n"


def write_json(path: str | Path, payload: object, *, overwrite: bool = False) -> Path:
    """Write ``payload`` as JSON to ``path`` atomically."""
    return write_text(path, json_text(payload), overwrite=overwrite)
