"""The comparison page's data and files: ``index.html`` and ``index-clips.js``.

:func:`page_data` turns the designs of a run (:class:`PageClip`) into the
page's JSON-ready data and each clip's 16-bit copy; :func:`page_html` puts
that data, the page's CSS and its JavaScript (package data in
``render/compare/static/``) into one HTML file; :func:`clips_script` writes
the copies as base64 strings in a script the page loads beside it. Nothing
depends on the time, the machine or the folder, so the same run gives the
same bytes.

The page matches loudness itself, from each clip's BS.1770 integrated
loudness (``loudness_lufs_1v_full_scale``, as the run measured it) and the
true peak of its copy: see ``compare.js``.
"""

from __future__ import annotations

import base64
import json
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from importlib import resources
from pathlib import Path
from typing import Any

import numpy as np

from ..analysis.loudness import ceiling_record
from ..errors import InputError
from .assets import PAGE_SECONDS, PageCopy, page_copy, png_rgb, shade, spectrogram_levels, spectrum_curve

STATIC_FOLDER = "static"
STATIC_NAMES = ("compare.html", "compare.css", "compare.js")
PAGE_FILE = "index.html"
CLIPS_FILE = "index-clips.js"
RESPONSE_POINTS = 200
# The loudness match's window, LU under the loudest clip: only clips within it are matched (turned down to the
# quietest of them). A clip further down plays at its true level, the page saying so, rather than set every clip's
# level. Project rule, no outside source: it bounds how far matching pulls the loudest clip down. Measured across
# dry_signals/*.toml, the lowest-output designs in models/ (the slipway ones, about -30.5 to -34.6 LUFS) sit 18.7 to
# 26.2 LU under high-rail-18v, so the window leaves them matched on every shipped phrase with 13 LU to spare. A design
# whose coils cancel the strings (tests/smoke's edge-reversed-same-point: only its hum, -59.0 LUFS, 45 to 52 LU under
# the others on the default phrase) is left out of the match by its response instead (``strings_cancel``), however
# loud its hum.
MATCH_WINDOW_LU = 40.0
MARKERS = ("<!--page:title-->", "/*page:style*/", "/*page:data*/", "<!--page:clips-->", "/*page:script*/")


@dataclass(frozen=True)
class PageClip:
    """One design (or setting) as the page shows it.

    Attributes
    ----------
    key : str
        Unique on the page (the file stem).
    name : str
        Shown beside its clip.
    volts : np.ndarray [shape=(n,)], V
        The clip at the amp input (at least its first :data:`~render.compare.assets.PAGE_SECONDS`).
    sample_rate : int, Hz
    loudness_lufs_1v_full_scale : float or None, LUFS
        BS.1770-4 integrated loudness of the clip in volts (re 1 V full scale), as its run recorded it.
    cells : tuple of str
        The summary table's cells for this clip, one per column of the page.
    values : tuple of (str, str)
        The design's values as (name, shown value), for the reference comparison.
    file : str
        The design file, as given.
    full_samples : int or None
        The clip's whole length when ``volts`` holds only its start.
    warnings : tuple of str
    response : (np.ndarray, np.ndarray) or None
        (frequency Hz, level dB re 1 V per m/s), string velocity to the amp input.
    passive : (np.ndarray, np.ndarray) or None
        The same for its passive reference.
    role : str
        ``"design"``, or ``"compare"`` for a passive comparison pickup (``--compare``), shown as such.
    band_power_db : tuple of (float or None), dB re (1 V per m/s)²
        The response's level in each of the page's bands (:func:`render.analysis.brightness.band_power_db`),
        from which the page takes loudness-matched differences against whichever clip is its reference.
    numbers : tuple of (str, number, list, dict or None)
        The same keys as ``values``, each as its number (:func:`design_numbers`): the page tells the values
        that differ from the reference's by these, within :data:`VALUE_RTOL`, not by the figures shown.
    """

    key: str
    name: str
    volts: np.ndarray
    sample_rate: int
    loudness_lufs_1v_full_scale: float | None
    cells: tuple[str, ...] = ()
    values: tuple[tuple[str, str], ...] = ()
    file: str = ""
    full_samples: int | None = None
    warnings: tuple[str, ...] = ()
    response: tuple[np.ndarray, np.ndarray] | None = None
    passive: tuple[np.ndarray, np.ndarray] | None = None
    role: str = "design"
    band_power_db: tuple[float | None, ...] = ()
    numbers: tuple[tuple[str, Any], ...] = ()


@dataclass(frozen=True)
class PageText:
    """What the page says about its run.

    Attributes
    ----------
    title : str
    lede : str
        One line: what was rendered (dry signal, rig, settings).
    columns : tuple of str
        Headings of the summary table after the design's name.
    notes : tuple of str
        Lines under the table (what the columns mean).
    matched_column : int or None
        The column (index into ``columns``) the page fills itself with each clip's loudness-matched band
        differences against the reference chosen on the page (from ``band_power_db`` and the loudness).
    reference : int
        The clip the page opens with as its reference (the run's ``--reference``); the listener may choose another.
    """

    title: str
    lede: str = ""
    columns: tuple[str, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)
    matched_column: int | None = None
    reference: int = 0


@dataclass(frozen=True)
class DesignAssets:
    """One clip's entry in the page data and its copy (see :func:`design_assets`)."""

    entry: dict
    copy: PageCopy
    levels: np.ndarray  # the strip's spectrogram levels, dB re 1 V²/Hz, before shading


def _r(x: float, digits: int) -> float:
    return float(round(float(x), digits))


def _curve(f: np.ndarray, db: np.ndarray) -> list[list[float | None]]:
    """A curve's two rows, to 0.01; a level that is no number (a response exactly zero: NaN) is null, a gap in the curve."""
    return [[_r(v, 2) for v in f], [_r(v, 2) if np.isfinite(v) else None for v in db]]


def design_assets(clip: PageClip) -> DesignAssets:
    """The page's copy of ``clip`` and its entry (the strip is added by :func:`finish_entry`)."""
    x = np.asarray(clip.volts, dtype=float)
    fs = int(clip.sample_rate)
    copy = page_copy(x, sample_rate=fs, max_seconds=PAGE_SECONDS, full_samples=clip.full_samples if clip.full_samples is not None else x.size)
    head = x[: int(round(PAGE_SECONDS * fs))]
    f, db = spectrum_curve(head, sample_rate=fs)
    loud = clip.loudness_lufs_1v_full_scale
    entry = {
        "key": clip.key,
        "clip": clip.key,
        "name": clip.name,
        "file": clip.file,
        "loudness": None if loud is None else _r(loud, 3),
        "true_peak": None if copy.true_peak_db is None else _r(copy.true_peak_db, 3),
        "unit_v": float(f"{copy.volts_per_unit:.9g}"),
        "seconds": _r(copy.seconds, 4),
        "full_seconds": _r(copy.full_seconds, 4),
        "cells": list(clip.cells),
        "values": [list(v) for v in clip.values],
        "numbers": [[k, n] for k, n in clip.numbers],
        "warnings": list(clip.warnings),
        "spectrum": _curve(f, db),
        "response": _curve(*clip.response) if clip.response is not None else None,
        "passive": _curve(*clip.passive) if clip.passive is not None else None,
        "role": clip.role,
        # the strings' response is exactly zero at every frequency (the coils cancel them): the clip is its hum only
        "strings_cancel": clip.response is not None and not np.any(np.isfinite(clip.response[1])),
        # band level less loudness, unrounded: the page's matched differences are then the run's to the last bit
        "matched_level_db": [None if v is None or loud is None or not np.isfinite(v - loud) else float(v - loud) for v in clip.band_power_db],
    }
    return DesignAssets(entry=entry, copy=copy, levels=spectrogram_levels(head, sample_rate=fs))


def strip_top_db(levels: Sequence[np.ndarray]) -> float:
    """The darkest level of the strips: the loudest bin of them all, to a whole dB (one shading for the page)."""
    return float(np.ceil(max((float(np.max(v)) for v in levels), default=0.0)))


def finish_entry(assets: DesignAssets, *, top_db: float) -> dict:
    """The entry with its spectrogram strip as a PNG data URI, shaded against ``top_db``."""
    png = png_rgb(shade(assets.levels, top_db=top_db))
    return {**assets.entry, "strip": "data:image/png;base64," + base64.b64encode(png).decode("ascii")}


def page_data(text: PageText, clips: Sequence[PageClip], *, volts_full_scale: float, live: bool = False, jobs: int = 1) -> tuple[dict, list[PageCopy]]:
    """The page's JSON-ready data and each clip's copy, in the clips' order.

    volts_full_scale : V
        The run's WAV full scale: the page plays at this scale (the true
        levels), matching loudness by attenuation only, and lowers every
        clip together when a true peak would pass −1 dBTP less its margin
        (:func:`render.analysis.loudness.ceiling_record`).
    jobs : int
        Clips prepared in this many processes (the same bytes as one).
    """
    if not clips:
        raise InputError("the comparison page needs at least one clip")
    if len({c.key for c in clips}) != len(clips):
        raise InputError("two clips share a name on the comparison page; rename one of the design files")
    rates = {int(c.sample_rate) for c in clips}
    if len(rates) != 1:
        raise InputError(f"the clips on one page must share a sample rate, not {sorted(rates)} Hz")
    from ..parallel import pmap

    values, numbers = aligned_values([c.values for c in clips]), aligned_values([c.numbers for c in clips], absent=None)
    clips = [replace(c, values=v, numbers=n) for c, v, n in zip(clips, values, numbers)]  # one key set: each pair compares key by key
    made = pmap(design_assets, clips, jobs)
    top = strip_top_db([m.levels for m in made])
    designs = [finish_entry(m, top_db=top) for m in made]
    data = {
        "format": 1,
        "title": text.title,
        "lede": text.lede,
        "columns": list(text.columns),
        "notes": list(text.notes),
        "matched_column": text.matched_column,
        "sample_rate": rates.pop(),
        "volts_full_scale": float(volts_full_scale),
        **ceiling_record(),  # the true-peak ceiling, and the margin under it the page aims at (one rule with render blind and bias)
        "match_window_lu": MATCH_WINDOW_LU,
        "page_seconds": float(PAGE_SECONDS),
        "bits": 16,
        "strip_top_db": top,
        "values_rtol": VALUE_RTOL,
        "live": bool(live),
        "reference": text.reference if 0 <= text.reference < len(clips) else 0,
        "designs": designs,
    }
    return data, [m.copy for m in made]


def static_file(name: str) -> str:
    """One of the page's files (:data:`STATIC_NAMES`), read from the installed package."""
    if name not in STATIC_NAMES:
        raise ValueError(f"{name!r}: not one of the comparison page's files {STATIC_NAMES}")
    try:
        return resources.files(__package__).joinpath(STATIC_FOLDER).joinpath(name).read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(f"render/compare/{STATIC_FOLDER}/{name}: the comparison page's file is missing from the installed package ({exc.strerror or exc}); reinstall render") from None


def _json_in_html(data: object) -> str:
    """JSON that cannot end the script element it sits in (every '<' escaped), ASCII only."""
    return json.dumps(data, ensure_ascii=True, separators=(",", ":"), allow_nan=False).replace("<", "\\u003c")


def page_html(data: dict, *, clips_file: str | None = CLIPS_FILE) -> bytes:
    """The whole page: HTML with its CSS, its data and its JavaScript inline; ``clips_file`` loaded beside it (None: none)."""
    import html

    page = static_file("compare.html")
    parts = {
        MARKERS[0]: html.escape(data.get("title", "render")),
        MARKERS[1]: static_file("compare.css"),
        MARKERS[2]: _json_in_html(data),
        MARKERS[3]: f'<script src="{html.escape(clips_file)}"></script>' if clips_file else "",
        MARKERS[4]: static_file("compare.js"),
    }
    for marker, value in parts.items():
        if page.count(marker) != 1:
            raise InputError(f"render/compare/{STATIC_FOLDER}/compare.html: marker {marker} must appear once; reinstall render")
        page = page.replace(marker, value)
    return page.encode("utf-8")


def clips_script(keys: Sequence[str], copies: Sequence[PageCopy]) -> bytes:
    """The clips as base64 WAVs in a classic script (a page opened from ``file://`` may load one, not fetch a file)."""
    lines = ['"use strict";', "window.renderPageClips = window.renderPageClips || {};"]
    for key, copy in zip(keys, copies):
        lines.append(f'window.renderPageClips[{_json_in_html(key)}] = "{base64.b64encode(copy.wav).decode("ascii")}";')
    return ("\n".join(lines) + "\n").encode("ascii")


def write_page(folder: str | Path, text: PageText, clips: Sequence[PageClip], *, volts_full_scale: float, jobs: int = 1) -> tuple[Path, Path]:
    """Write ``index.html`` and ``index-clips.js`` into ``folder`` (atomically, replacing them); ``jobs`` as for :func:`page_data`."""
    from ..io.atomic import write_bytes

    folder = Path(folder)
    data, copies = page_data(text, clips, volts_full_scale=volts_full_scale, jobs=jobs)
    clips_path = write_bytes(folder / CLIPS_FILE, clips_script([c.key for c in clips], copies), overwrite=True)
    return write_bytes(folder / PAGE_FILE, page_html(data), overwrite=True), clips_path


# ----------------------------------------------------------------------------
# What the page shows of a design


def response_curves(designs, *, points: int = RESPONSE_POINTS) -> list[tuple[tuple[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]]:
    """Per design: ((f, dB), (f, passive dB)), string velocity to the amp input (dB re 1 V per m/s), 20 Hz to 20 kHz.

    Where a response is exactly zero (coils that cancel the string at one sensing point) its level is NaN, which the
    page's data hold as null: a gap in the curve, not a made-up floor.
    """
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..report.plots import plot_level_db

    designs = list(designs)
    if not designs:
        return []
    f = np.geomspace(20.0, 20000.0, points)
    resp = responses(from_designs(designs))
    h, hp = resp.velocity()(f), resp.passive_velocity()(f)
    return [((f, plot_level_db(h[i])), (f, plot_level_db(hp[i]))) for i in range(len(designs))]


SKIPPED_VALUES = ("name", "notes", "source", "sha256")
ABSENT = "absent"  # how the page shows a value a design does not have
# Two numbers of the values table are the same when they differ by at most this fraction of the larger: the same
# text in two design files gives the same double, and a rig's arithmetic may move the last bits (1e-16); a part's
# tolerance is 1e-3 or more (common practice, no source). The page shows four figures, but compares these.
VALUE_RTOL = 1e-9


def _value_rows(design):
    """(``"table.key"``, its spec or None, its value) of a design, every table in the file's order."""
    from .. import units as U
    from ..design import DESIGN_TABLES, design_to_dict
    from ..design.schema import COIL, WINDING
    from ..validate import Field

    derived = {"wire_diameter": U.LENGTH, "wire_length": U.LENGTH, "wire_awg": U.RATIO}  # a winding's values that its file does not give
    for table, content in design_to_dict(design).items():
        if table in SKIPPED_VALUES or not isinstance(content, dict):
            continue
        specs = DESIGN_TABLES.get(table, {})
        for key, value in content.items():
            if key.endswith("_reason"):  # why a value is None (the uniform field beside hum sources): words, not a value
                continue
            if isinstance(value, dict):  # a coil's winding
                for k, v in value.items():
                    yield f"{table}.{key}.{k}", WINDING.get(k) or COIL.get(k) or (Field(derived[k]) if k in derived else None), v
            else:
                yield f"{table}.{key}", specs.get(key), value


def design_values(design, *, digits: int = 4) -> tuple[tuple[str, str], ...]:
    """A design's values as ("table.key", shown with its unit to ``digits`` significant figures), every table in the file's order."""
    from ..units import Kind, format_si

    def show(spec, value) -> str:
        if value is None:
            return ABSENT
        if isinstance(value, dict):  # a nested table (a coil's geometry, a hum source)
            return "; ".join(f"{k} {show(None, v)}" for k, v in value.items() if v is not None)
        if isinstance(value, list):
            return ", ".join(f"{v:.{max(digits, 6)}g}" if isinstance(v, (int, float)) and not isinstance(v, bool) else show(None, v) for v in value)
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            kind = getattr(spec, "kind", None)
            if isinstance(kind, Kind) and kind.unit:
                return format_si(float(value), kind.unit, digits=digits)
            return f"{value:.{max(digits, 6)}g}"
        return str(value)

    return tuple((k, show(spec, v)) for k, spec, v in _value_rows(design))


def design_numbers(design) -> tuple[tuple[str, Any], ...]:
    """A design's values on the keys of :func:`design_values` as JSON numbers, SI units (lists and tables of them
    likewise); None for a value that is no number (a name, a switch), which the page compares as shown."""

    def as_number(v):
        if isinstance(v, dict):
            return {k: as_number(x) for k, x in v.items() if x is not None}
        if isinstance(v, list):
            return [as_number(x) for x in v]
        if isinstance(v, (int, float)) and not isinstance(v, bool) and np.isfinite(v):
            return float(v)
        return None

    return tuple((k, as_number(v)) for k, _, v in _value_rows(design))


def exact_values(design) -> tuple[tuple[str, Any], ...]:
    """A design's values on the keys of :func:`design_values`, as the design holds them (nothing rounded), for telling what changed."""

    def frozen(v):
        if isinstance(v, dict):
            return tuple((k, frozen(x)) for k, x in v.items())
        if isinstance(v, list):
            return tuple(frozen(x) for x in v)
        return v

    return tuple((k, frozen(v)) for k, _, v in _value_rows(design))


def aligned_values(lists: Sequence[Sequence[tuple[str, Any]]], *, absent: Any = ABSENT) -> list[tuple[tuple[str, Any], ...]]:
    """Several designs' values (:func:`design_values` or :func:`exact_values`) on one key set, so each pair compares key by key.

    A key one design lacks is ``absent`` in it; a nested table a design lacks (one ``absent`` key, such as
    ``coil_a.winding``) becomes the keys the others give it (``coil_a.winding.turns``, ...), each ``absent``.
    The keys keep each design's order (a key only one design has sits after the key it follows there).
    """
    order: list[str] = []
    for values in lists:
        at = 0
        for k, _ in values:
            if k in order:
                at = order.index(k) + 1
            else:
                order.insert(at, k)
                at += 1
    parents = {k.rsplit(".", n)[0] for k in order for n in range(1, k.count(".") + 1)}
    rows = [dict(v) for v in lists]
    keep = [k for k in order if k not in parents or any(r.get(k, absent) != absent for r in rows)]
    return [tuple((k, r.get(k, absent)) for k in keep) for r in rows]


def value_changes(before, after) -> list[tuple[str, str, str]]:
    """(``"table.key"``, shown before, shown after) of every value that differs between two designs, compared exactly;
    a change too small for the usual four figures is shown to as many as tell the two apart."""
    exact = [dict(v) for v in aligned_values([exact_values(before), exact_values(after)], absent=None)]
    changed = [k for k in exact[0] if exact[0][k] != exact[1][k]]
    out = []
    for digits in (4, 8, 12, 17):
        shown = [dict(v) for v in aligned_values([design_values(before, digits=digits), design_values(after, digits=digits)])]
        out = [(k, shown[0][k], shown[1][k]) for k in changed]
        if all(a != b for _, a, b in out):
            break
    return out
