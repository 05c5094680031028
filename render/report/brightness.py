"""The brightness figures of a clips run in its records and tables (:mod:`render.analysis.brightness`)."""

from __future__ import annotations

from ..analysis.brightness import BANDS_HZ, OutsideReference, band_key, band_label, brightness_records

COLUMNS = (*(f"{band_label(b)} re 1 kHz" for b in BANDS_HZ), f"vs reference, loudness-matched ({' / '.join(band_label(b) for b in BANDS_HZ)})")
NOTE = (
    "Band levels: mean of |H|² over the band on a log-frequency axis, dB re |H(1 kHz)|²;"
    " vs reference: the band's level difference from the reference design once both clips play at the same BS.1770-4 loudness"
    " (positive: brighter than the reference)."
)


def add_brightness(records, designs, *, reference: int | OutsideReference = 0) -> None:
    """Put each design's band levels and loudness-matched differences from ``designs[reference]`` (or a reference
    outside the designs, the comparison pickup) into its record's ``measurements``."""
    loud = [r["measurements"]["loudness_lufs_1v_full_scale"] for r in records]
    for rec, row in zip(records, brightness_records(designs, loud, reference=reference)):
        rec["measurements"].update(row)


def brightness_cells(m: dict) -> tuple[str, ...]:
    """The :data:`COLUMNS` cells of a record's ``measurements`` ("not computed" for a record without them)."""
    from ..analysis.undefined import cell

    if "reference_design" not in m:
        return ("not computed",) * len(COLUMNS)
    bands = tuple(cell(m, f"band_{band_key(b)}_re_1k_db", "+.1f", " dB") for b in BANDS_HZ)
    keys = [f"matched_diff_{band_key(b)}_db" for b in BANDS_HZ]
    if m.get("is_reference"):
        return (*bands, "reference")
    diffs = [cell(m, k, "+.1f", " dB") for k in keys]
    if all(m.get(k) is not None for k in keys):
        return (*bands, " / ".join(cell(m, k, "+.1f") for k in keys) + " dB")  # one unit for the pair: "+1.3 / -3.1 dB"
    return (*bands, diffs[0] if len(set(diffs)) == 1 else " / ".join(diffs))  # words, once when both bands share them
