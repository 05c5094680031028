"""How bright a design is: band levels against 1 kHz, and the loudness-matched difference from a reference.

Band level (dB re the level at 1 kHz) of a band from f1 to f2:

    L_band = 10·log10( 1/ln(f2/f1) · ∫_{f1}^{f2} |H(f)|² d(ln f) ) − 20·log10|H(1 kHz)|

the mean of |H|² over the band on a logarithmic frequency axis (every
octave weighs the same), H the small-signal response from string velocity
to the amp input. The integral is evaluated on :data:`POINTS_PER_BAND`
log-spaced points with the trapezoid rule (error far under 0.01 dB for the
smooth responses of these circuits).

Loudness-matched difference of a design from a reference design, at a
frequency or over a band: what a listener hears after both clips are played
at the same integrated loudness (ITU-R BS.1770-4), as a blind session
matches them (:mod:`render.listening.loudness`):

    D = (L_design + g_design) − (L_reference + g_reference)

L the level in dB (a band's as above, before subtracting the 1 kHz level)
and g each clip's matching gain in dB. Matched to a common target, g = target
− loudness, so D = ΔL − Δloudness. Positive means brighter than the
reference in that band once both play equally loud. The bands are our
choice (common practice, no source): 2–4 kHz where a pickup's resonance and
a guitar's presence sit, 4–8 kHz the top of a pickup's range.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..units import shown
from .undefined import NO_LOUDNESS, NO_REFERENCE_LOUDNESS  # worded with the other reasons

BANDS_HZ: tuple[tuple[float, float], ...] = ((2000.0, 4000.0), (4000.0, 8000.0))
POINTS_PER_BAND = 256


def band_key(band: tuple[float, float]) -> str:
    """``(2000, 4000)`` -> ``"2k_4k"`` (for JSON keys)."""
    return "_".join(f"{x / 1000:g}k" for x in band)


def band_label(band: tuple[float, float]) -> str:
    """``(2000, 4000)`` -> ``"2–4 kHz"``."""
    return f"{band[0] / 1000:g}–{band[1] / 1000:g} kHz"


def band_power_db(response, band: tuple[float, float], *, points: int = POINTS_PER_BAND) -> np.ndarray:
    """10·log10 of the log-frequency mean of |H|² over ``band``.

    Parameters
    ----------
    response : callable
        ``response(frequency_hz)`` -> complex array [shape=(N, F)] (a batched
        :class:`~render.circuit.poly.Rational`, e.g. ``Responses.velocity()``).
    band : (f1, f2), Hz

    Returns
    -------
    np.ndarray [shape=(N,)], dB re (the response's unit)²
    """
    f1, f2 = band
    f = np.geomspace(f1, f2, points)
    p = np.abs(response(f)) ** 2
    lf = np.log(f)
    mean = np.sum(0.5 * (p[..., 1:] + p[..., :-1]) * np.diff(lf), axis=-1) / (lf[-1] - lf[0])  # trapezoid rule
    with np.errstate(divide="ignore"):
        return 10 * np.log10(mean)


def level_at_db(response, frequency_hz: float) -> np.ndarray:
    """20·log10|H(f)| at one frequency, shape (N,)."""
    with np.errstate(divide="ignore"):
        return 20 * np.log10(np.abs(response(frequency_hz))[:, 0])


def band_levels_re_1k(response, bands=BANDS_HZ) -> dict[str, np.ndarray]:
    """Each band's level re the level at 1 kHz (dB), keyed by :func:`band_key`; arrays of shape (N,)."""
    at_1k = level_at_db(response, 1000.0)
    with np.errstate(invalid="ignore"):  # NaN for a silent response
        return {band_key(b): band_power_db(response, b) - at_1k for b in bands}


def loudness_matched_difference_db(level_db, reference_level_db, *, gain_db, reference_gain_db):
    """(level + gain) − (reference level + reference gain), dB: the difference as heard after loudness matching.

    Any shapes that broadcast; ``gain_db`` the gain each was played at (for
    clips matched to one target, −loudness will do).
    """
    return (np.asarray(level_db) + gain_db) - (np.asarray(reference_level_db) + reference_gain_db)


@dataclass(frozen=True)
class OutsideReference:
    """A reference that is not one of the run's designs (the passive comparison pickup of ``--compare``).

    Attributes
    ----------
    name : str
    power_db : dict of str to float, dB re (1 V per m/s)²
        Its :func:`band_power_db` per :func:`band_key`.
    loudness_lufs : float or None, LUFS
        Its clip's loudness, on the designs' full scale (None: silent).
    """

    name: str
    power_db: dict
    loudness_lufs: float | None


def brightness_records(designs, loudness_lufs, *, reference: int | OutsideReference = 0, bands=BANDS_HZ) -> list[dict]:
    """For each design: band levels re 1 kHz and the loudness-matched band differences from ``designs[reference]``.

    Parameters
    ----------
    designs : sequence of Design
        With their rigs applied.
    loudness_lufs : sequence of float or None, LUFS
        Each design's clip loudness (BS.1770-4, at one full scale for all, e.g. re 1 V); None for a silent clip.
    reference : int or OutsideReference
        Index of the reference design, or a reference outside the designs (then no design reads ``reference``).

    Returns
    -------
    list of dict
        ``reference_design``, ``is_reference``, ``band_<key>_re_1k_db`` and
        ``matched_diff_<key>_db`` per band (None with a ``_reason`` where
        undefined), and ``bands_hz``.
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from . import undefined as U

    designs = list(designs)
    vel = responses(from_designs(designs)).velocity()
    power = {band_key(b): band_power_db(vel, b) for b in bands}
    at_1k = level_at_db(vel, 1000.0)
    if isinstance(reference, OutsideReference):
        ref_name, ref_loud, ref_power, ref_i = reference.name, reference.loudness_lufs, reference.power_db, -1
    else:
        ref_name, ref_loud, ref_i = designs[reference].name, loudness_lufs[reference], reference
        ref_power = {k: v[reference] for k, v in power.items()}
    out = []
    for i in range(len(designs)):
        row: dict = {"reference_design": ref_name, "is_reference": i == ref_i, "bands_hz": [list(b) for b in bands]}
        for b in bands:
            k = band_key(b)
            with np.errstate(invalid="ignore"):  # a silent response (−inf − −inf) becomes None with its reason
                U.put(row, f"band_{k}_re_1k_db", power[k][i] - at_1k[i], U.NO_SIGNAL)
            if i == ref_i:  # the reference against itself: 0 dB by definition, whatever its loudness
                U.put(row, f"matched_diff_{k}_db", 0.0 if np.isfinite(power[k][i]) else np.nan, U.NO_SIGNAL)
            elif ref_loud is None:
                U.mark(row, f"matched_diff_{k}_db", NO_REFERENCE_LOUDNESS)
            elif loudness_lufs[i] is None:
                U.mark(row, f"matched_diff_{k}_db", NO_LOUDNESS)
            else:
                with np.errstate(invalid="ignore"):
                    d = loudness_matched_difference_db(power[k][i], ref_power[k], gain_db=-loudness_lufs[i], reference_gain_db=-ref_loud)
                U.put(row, f"matched_diff_{k}_db", 0.0 if i == ref_i else d, U.NO_SIGNAL)
        out.append(row)
    return out


def other_record(response, loudness_lufs: float | None, *, reference_power_db: dict, reference_loudness_lufs: float | None, reference_name: str, is_reference: bool = False, bands=BANDS_HZ) -> dict:
    """The figures of :func:`brightness_records` for a pickup outside the run's designs (a passive comparison pickup).

    Parameters
    ----------
    response : callable
        ``response(frequency_hz)`` -> complex array [shape=(1, F)], V per m/s.
    loudness_lufs : float or None, LUFS
        Its clip's loudness, on the same full scale as the reference's.
    reference_power_db : dict
        The reference design's :func:`band_power_db` per :func:`band_key`, dB.
    reference_loudness_lufs : float or None, LUFS
    reference_name : str
    is_reference : bool
        Whether this pickup is itself the run's reference (its differences are then 0 dB).
    """
    from . import undefined as U

    at_1k = level_at_db(response, 1000.0)[0]
    row: dict = {"reference_design": reference_name, "is_reference": bool(is_reference), "bands_hz": [list(b) for b in bands]}
    for b in bands:
        k = band_key(b)
        power = band_power_db(response, b)[0]
        with np.errstate(invalid="ignore"):
            U.put(row, f"band_{k}_re_1k_db", power - at_1k, U.NO_SIGNAL)
        if is_reference:  # the reference against itself: 0 dB by definition, whatever its loudness
            U.put(row, f"matched_diff_{k}_db", 0.0 if np.isfinite(power) else np.nan, U.NO_SIGNAL)
        elif reference_loudness_lufs is None:
            U.mark(row, f"matched_diff_{k}_db", NO_REFERENCE_LOUDNESS)
        elif loudness_lufs is None:
            U.mark(row, f"matched_diff_{k}_db", NO_LOUDNESS)
        else:
            with np.errstate(invalid="ignore"):
                d = loudness_matched_difference_db(power, reference_power_db[k], gain_db=-loudness_lufs, reference_gain_db=-reference_loudness_lufs)
            U.put(row, f"matched_diff_{k}_db", 0.0 if is_reference else d, U.NO_SIGNAL)
    return row


def band_powers_db(designs, bands=BANDS_HZ) -> dict[str, np.ndarray]:
    """Each design's :func:`band_power_db` per band (keyed by :func:`band_key`), arrays of shape (N,), dB re (1 V per m/s)²."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    vel = responses(from_designs(list(designs))).velocity()
    return {band_key(b): band_power_db(vel, b) for b in bands}


def band_power_rows(designs, bands=BANDS_HZ) -> list[tuple[float, ...]]:
    """Each design's :func:`band_power_db` in the order of ``bands``, one tuple per design, dB re (1 V per m/s)²."""
    designs = list(designs)
    power = band_powers_db(designs, bands)
    return [tuple(float(power[band_key(b)][i]) for b in bands) for i in range(len(designs))]


def reference_index(designs, name: str | None, *, compare=None) -> int | None:
    """The index of the design called ``name`` (its name or its file's stem); 0 when ``name`` is None; None when
    ``name`` is the passive comparison pickup ``compare`` (``--compare``; its name or file stem)."""
    from pathlib import Path

    from ..errors import ArgumentError
    from ..validate import did_you_mean

    if name is None:
        return 0
    for i, d in enumerate(designs):
        if name in (d.name, d.stem):
            return i
    if compare is not None and name in (compare.name, Path(compare.source).stem):
        return None
    names = [d.name for d in designs] + ([compare.name] if compare is not None else [])
    what = "no design of this run nor its comparison pickup" if compare is not None else "no design of this run"
    raise ArgumentError("reference", shown(name), f"{what} has that name or file stem{did_you_mean(name, names).replace('known keys', 'the designs')}")
