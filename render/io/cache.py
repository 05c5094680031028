"""A cache of computed arrays on disk, keyed by a content hash.

Where: ``$RENDER_CACHE_DIR`` if set, else ``$XDG_CACHE_HOME/render``, else
``~/.cache/render`` (the XDG base directory convention). Set
``RENDER_CACHE_DIR=off`` to keep nothing on disk. Each entry is one ``.npz``
file named by its key (a SHA-256 of everything the result depends on,
including the model's version), written atomically, so a half-written
file is never read and stale entries are never matched; deleting the folder
is always safe.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path

import numpy as np

OFF = "off"


def cache_dir() -> Path | None:
    """The cache folder, or None when caching on disk is off."""
    env = os.environ.get("RENDER_CACHE_DIR")
    if env is not None:
        return None if env.strip().lower() == OFF or not env.strip() else Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "render"


def load(kind: str, key: str) -> dict | None:
    """The arrays stored under ``kind``/``key``, or None (missing, off, or unreadable)."""
    folder = cache_dir()
    if folder is None:
        return None
    path = folder / kind / f"{key}.npz"
    try:
        with np.load(path, allow_pickle=False) as data:
            return {k: data[k] for k in data.files}
    except (OSError, ValueError, KeyError):
        return None


def store(kind: str, key: str, arrays: dict) -> None:
    """Keep ``arrays`` under ``kind``/``key`` (silently skipped when the folder cannot be written)."""
    folder = cache_dir()
    if folder is None:
        return
    target = folder / kind
    try:
        target.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=target, suffix=".tmp")
    except OSError:
        return
    try:
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, **arrays)
        os.replace(tmp, target / f"{key}.npz")
    except OSError:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
