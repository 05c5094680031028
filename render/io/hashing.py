"""SHA-256 of bytes and files: recorded in every render, so a result names exactly what it used."""

from __future__ import annotations

import hashlib
from pathlib import Path

CHUNK = 1 << 20  # bytes read at a time from a file


def sha256_bytes(data: bytes) -> str:
    """Hex SHA-256 of ``data``."""
    return hashlib.sha256(data).hexdigest()


def sha256_file(path: str | Path) -> str:
    """Hex SHA-256 of a file's bytes, read in chunks (any size)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(CHUNK), b""):
            h.update(chunk)
    return h.hexdigest()
