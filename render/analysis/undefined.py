"""Figures with no finite value: ``None`` plus a reason, one way for every command.

Some figures are undefined or would be infinite for a legitimate design: two
matched coils cancel their hum exactly (infinite rejection, zero hum, no
signal-to-hum ratio), a coil wired in reverse cancels the string signal
(no level, no peak, no SNR), a response with no 3 dB peak has no Q. Such a
figure is ``None`` in a result, and every JSON record writes it as

    "rejection_db": null, "rejection_db_reason": "infinite: the coils' hum cancels exactly"

(the figure's key with ``null``, and beside it the same key with ``_reason``
appended, holding one line of words). A printed report shows the words (or,
in a table cell, the short form :func:`cell` gives) where the number would
be. No NaN or infinity is ever written: JSON is written with
``allow_nan=False``. This module holds the reasons' wording and the helpers;
it does no I/O.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np

REJECTION_CAP_DB = 200.0  # reported for a numerically exact balance (the sum is zero to rounding)

# The reasons, worded once (each figure's docstring says which ones it can carry).
HUM_CANCELS = "infinite: the coils' hum cancels exactly"
NO_HUM = "no hum: the coils cancel exactly"
NO_FIELD = "the field has no such harmonic"
NO_LINKAGE = "no hum: no source has this harmonic, or none links either coil at it"
NOTHING_LINKS = "no hum: no source links either coil"
NO_DIPOLE_LINKAGE = "no hum at this harmonic: neither coil links the dipole there"
NO_SIGNAL = "no signal: the coils cancel the string signal exactly (a coil wired in reverse? check signal_polarity)"
VOLUME_ZERO = "no signal: the volume is at 0 (rig.volume = 0)"  # decided by the setting, not by a level
PASSIVE_NO_SIGNAL = "no passive signal: the passive reference's coils cancel the string signal exactly"
NO_PEAK = "no peak of 3 dB or more above the 1 kHz level"
NO_PEAK_IN_BAND = "no peak from 1 kHz to 20 kHz (none with a prominence of 0.5 dB or more)"
PEAK_EDGES = "the peak's -3 dB points lie outside 5 Hz to 40 kHz"
Q_SPANS_HIGHER = "not defined: the response rises above this peak before falling 3 dB under it, so its -3 dB width would take in a higher peak"
NO_BASS_CORNER = "within 3 dB of the 1 kHz level down to 5 Hz"
NO_TREBLE_CORNER = "beyond 20 kHz"
NO_TREBLE_DIP = "no dip: the response falls 3 dB under the 1 kHz level once, at its treble corner, or not at all"
SILENT = "silent, or shorter than one 400 ms block of ITU-R BS.1770-4"
NOMINAL_CANCELS = "the design itself cancels its hum exactly, so a change has no finite size"
PART_CANCELS = "with +1 % on this part the hum cancels exactly"
ALL_CANCEL = "every trial cancels the hum exactly"
NO_OUTPUT = "no output: the test sine does not move the op-amp's output off its limit"
SOURCE_NO_HUM = "no hum at this harmonic: no source has it, or no coil links it"  # one source's share (render.analysis.hum_sources)
SOURCE_EXACT = f"the two coils' hum cancels exactly (at the {REJECTION_CAP_DB:g} dB cap)"
NO_REFERENCE_LOUDNESS = "the reference's clip has no integrated loudness (silent, or shorter than one 400 ms block), so there is no loudness to match"
NO_LOUDNESS = "this clip has no integrated loudness (silent, or shorter than one 400 ms block), so there is no loudness to match"
NOT_SENSED = "not sensed: more than 60 dB below the coil's loudest string"  # render.analysis.sense
BELOW_RESOLUTION = "below the flux table's resolution: the table's vertical slope and the sensing function disagree by more than 10 %"

# what a table cell shows instead of the number
SHORT = {
    HUM_CANCELS: "exact",
    NO_HUM: "no hum",
    NO_FIELD: "no field",
    NO_LINKAGE: "no hum",
    NOTHING_LINKS: "no hum",
    NO_DIPOLE_LINKAGE: "no hum",
    NO_SIGNAL: "no signal",
    PASSIVE_NO_SIGNAL: "no passive signal",
    VOLUME_ZERO: "volume 0",
    NO_PEAK: "none",
    PEAK_EDGES: "none",
    Q_SPANS_HIGHER: "not defined",
    NO_PEAK_IN_BAND: "no peak",
    NO_BASS_CORNER: "below 5 Hz",
    NO_TREBLE_CORNER: "beyond 20 kHz",
    NO_TREBLE_DIP: "no dip",
    SILENT: "silent",
    ALL_CANCEL: "exact",
    NO_OUTPUT: "no output",
    SOURCE_NO_HUM: "no hum",
    SOURCE_EXACT: "exact",
    NO_REFERENCE_LOUDNESS: "reference silent",
    NO_LOUDNESS: "silent",
    NOT_SENSED: "not sensed",
    BELOW_RESOLUTION: "below resolution",
}


def finite(x: Any) -> float | None:
    """``x`` as a float, or None when it is None, NaN or infinite."""
    if x is None:
        return None
    v = float(x)
    return v if math.isfinite(v) else None


def put(record: dict, key: str, value: Any, reason: str) -> dict:
    """Set ``record[key]`` to ``value`` if finite; else to None with ``record[key + "_reason"] = reason``.

    A reason already in the record (set by an earlier step that knew better)
    is kept. Returns ``record``.
    """
    v = finite(value)
    record[key] = v
    if v is None:
        record.setdefault(f"{key}_reason", reason)
    else:
        record.pop(f"{key}_reason", None)
    return record


def mark(record: dict, key: str, reason: str) -> dict:
    """Make ``record[key]`` None with this reason (the reason replaces any earlier one)."""
    record[key] = None
    record[f"{key}_reason"] = reason
    return record


def reason(record: dict, key: str, default: str = "undefined") -> str:
    """The words standing for ``record[key]`` when it is None."""
    return str(record.get(f"{key}_reason") or default)


def figure_or_reason(record: dict, key: str, spec: str, unit: str = "") -> str:
    """``record[key]`` formatted with ``spec`` and ``unit``, or its reason in words when it is None."""
    v = record.get(key)
    if v is None:
        return reason(record, key)
    return format(v, spec) + unit


def unlinked(emf_a: complex, emf_b: complex) -> str | None:
    """Why there is no hum at a harmonic when sources in space bring none to either coil (:data:`NO_LINKAGE`), else None.

    Each coil's EMF at that harmonic; the one rule :func:`render.analysis.hum_harmonics.absent_harmonics` and the
    figures' rejection share.
    """
    return NO_LINKAGE if emf_a == 0 and emf_b == 0 else None


def cell(record: dict, key: str, spec: str, unit: str = "") -> str:
    """As :func:`figure_or_reason`, with the reason's short form (for a table cell): :data:`SHORT`'s, else the reason's
    first clause ("no feedback.c, so ..." -> "no feedback.c"), else "undefined" (words, never a bare dash)."""
    v = record.get(key)
    if v is None:
        text = reason(record, key, "")
        return SHORT.get(text) or re.split(r"[:;,(]", text, maxsplit=1)[0].strip() or "undefined"
    return format(v, spec) + unit


def spread(value: Any, reason_text: str, spec: str, unit: str = "") -> str:
    """A bare value formatted, or the words when it is None (for results that are not records)."""
    v = finite(value)
    return reason_text if v is None else format(v, spec) + unit


def cancels(va, vb) -> np.ndarray:
    """Whether the two coils' parts cancel exactly: |V_A + V_B| ≤ max(|V_A|, |V_B|)·10^(−REJECTION_CAP_DB/20).

    The floor, 1e-10 of the larger part, lies six orders above double
    precision's rounding (2.2e-16) and far below any balance parts can hold
    (a 0.1 % mismatch leaves 1e-3), so a sum under it is rounding noise, and
    a pair that is exactly zero counts as cancelled. The one test for every
    hum source kind (uniform field, dipole) and every circuit (active,
    passive reference). Any shapes, broadcast.
    """
    big = np.maximum(np.abs(va), np.abs(vb))
    return np.abs(np.asarray(va) + np.asarray(vb)) <= big * 10 ** (-REJECTION_CAP_DB / 20)


def net_hum(va, vb) -> np.ndarray:
    """V_A + V_B, or exactly zero where the two parts cancel to rounding (:func:`cancels`)."""
    total = np.asarray(va) + np.asarray(vb)
    return np.where(cancels(va, vb), np.zeros_like(total), total)
