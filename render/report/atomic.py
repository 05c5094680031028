"""Atomic file output: write to a temporary name in the same folder, fsync, rename.

A file under its final name is therefore always complete: an interrupted
or failed command leaves at most a ``.tmp-*`` file, which is removed when
the failure is seen.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

from ..errors import InputError


@contextlib.contextmanager
def atomic_path(path: str | Path, *, overwrite: bool = False):
    """Yield a temporary path beside ``path``; on success rename it to ``path``.

    Raises InputError if ``path`` exists and ``overwrite`` is false, or if
    the folder cannot be written.
    """
    path = Path(path)
    if path.is_dir():
        raise InputError(f"{path}: is a folder; give a file name to write")
    if path.exists() and not overwrite:
        raise InputError(f"{path}: exists; pass --overwrite to replace it or choose another name")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{folder}: folder does not exist; create it first or choose another path")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".tmp-{path.name}.", dir=folder)
    except OSError as exc:
        raise InputError(f"{folder}: cannot write here ({exc.strerror}); choose another folder") from None
    os.close(fd)
    tmp = Path(tmp)
    try:
        yield tmp
        with open(tmp, "rb+") as fh:
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o644)  # mkstemp makes 0600; give the usual rw-r--r--
        os.replace(tmp, path)
    except OSError as exc:
        raise InputError(f"{path}: could not be written ({exc.strerror}); check free space and permissions") from None
    finally:
        with contextlib.suppress(FileNotFoundError):
            tmp.unlink()


def write_bytes(path: str | Path, data: bytes, *, overwrite: bool = False) -> Path:
    """Write ``data`` to ``path`` atomically."""
    with atomic_path(path, overwrite=overwrite) as tmp:
        tmp.write_bytes(data)
    return Path(path)


def write_text(path: str | Path, text: str, *, overwrite: bool = False) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically."""
    return write_bytes(path, text.encode("utf-8"), overwrite=overwrite)
