"""Reading a measured coil's CSV file: its size checked, its bytes read and hashed, then parsed.

The parsing is pure and lives with the physics (:mod:`render.impedance.measurement_csv`);
this module is the file's side of it.
"""

from __future__ import annotations

from pathlib import Path

from ..errors import InputError
from ..impedance.measurement_csv import MAX_BYTES, Measurement, decode_measurement
from .hashing import sha256_bytes


def read_measurement(path: str | Path) -> Measurement:
    """Read a measured coil's CSV file (format: :mod:`render.impedance.measurement_csv`), with its SHA-256."""
    p = Path(path)
    try:
        size = p.stat().st_size
    except OSError:
        raise InputError(f"{p}: measurement file not found; check the path") from None
    if size > MAX_BYTES:
        raise InputError(f"{p}: {size} bytes, more than {MAX_BYTES} for a measurement; export fewer points")
    raw = p.read_bytes()
    return decode_measurement(raw, source=str(p), sha256=sha256_bytes(raw))
