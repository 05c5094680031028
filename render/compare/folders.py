"""The comparison page of a run folder, from what the run wrote: ``render clips`` and ``render bias``.

A clips run's page reads each design's WAV back from the folder (its first
:data:`~render.compare.assets.PAGE_SECONDS`, so a long recording rendered
block by block is read in bounded memory) and its record, so the page shows
exactly what the files hold.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from ..report.brightness import NOTE as BRIGHTNESS_NOTE
from ..report.clips import CLIPS_COLUMNS, LEVELS_NOTE
from .assets import PAGE_SECONDS
from .page import PageClip, PageText, design_numbers, design_values, response_curves, write_page

CLIPS_MATCHED_COLUMN = len(CLIPS_COLUMNS) - 1  # the loudness-matched brightness column, which the page fills against its reference
CLIPS_NOTES = (
    LEVELS_NOTE + ".",
    "Limited: share of the op-amp output's samples inside the soft limit's knee or beyond, or slewing at the slew rate.",
    BRIGHTNESS_NOTE,
)
BIAS_COLUMNS = (
    "bias",
    "headroom up / down",
    "onset up / down",
    "phrase reaches the limit at, up / down",
    "as dB above the phrase, up / down",
    "phrase limited",
    "THD",
    "H2",
    "H3",
    "peak at amp input",
    "loudness",
)
BIAS_NOTES = (
    "Onset: the string velocity (m/s peak, 1 kHz) at which the output first enters the soft limit on each side; THD, H2 and H3 of the test sine."
    ' "At rest": the bias lies inside that side\'s knee, so the output stage is on it with no signal (limited at rest).',
    "The phrase reaches the limit: where the op-amp output of the phrase played at this setting reaches the limit's onset on each side, as its strongest pluck"
    " (mm, every pluck scaled alike) and as dB above the phrase as played; phrase limited: the share of its time the output stage was limited.",
    "Loudness per ITU-R BS.1770-4, in LUFS re 1 V full scale.",
)


def clips_cells(m: dict) -> tuple[str, ...]:
    """A clips record's ``measurements`` as the summary table's cells (the columns of ``summary.md``)."""
    from ..report.clips import measurement_cells

    return measurement_cells(m)


def read_head(path: Path, *, volts_full_scale: float, seconds: float = PAGE_SECONDS) -> tuple[np.ndarray, int, int]:
    """(the first ``seconds`` of a run's WAV in volts, its sample rate, its whole length in samples)."""
    from ..io.audio import audio_info, read_audio

    info = audio_info(path)
    x = read_audio(path, frames=min(info.frames, int(round(seconds * info.sample_rate))))
    return (x[:, 0] if x.shape[1] == 1 else x) * volts_full_scale, info.sample_rate, info.frames


def write_clips_page(
    folder: Path,
    records: Sequence[dict],
    designs: Sequence,
    *,
    volts_full_scale: float,
    dry: str,
    rig: str,
    settings: dict,
    jobs: int = 1,
    compare: tuple | None = None,
    reference: int | None = 0,
) -> tuple[Path, Path]:
    """``index.html`` and ``index-clips.js`` for a ``render clips`` folder holding ``S.wav`` per design (``jobs``: processes).

    compare : (PassiveDesign, its record) or None
        A passive comparison pickup, whose ``S.wav`` is in the folder too: the page's last clip, labelled as such.
    reference : int or None
        The run's brightness reference, which the page opens with: a design's index, or None for the comparison pickup.
    """
    from ..analysis.brightness import band_power_rows

    folder = Path(folder)
    curves = response_curves(designs)
    clips = []
    for rec, design, (resp, passive), power in zip(records, designs, curves, band_power_rows(designs)):
        stem = design.stem
        volts, fs, n = read_head(folder / f"{stem}.wav", volts_full_scale=volts_full_scale)
        m = rec["measurements"]
        clips.append(
            PageClip(
                key=stem,
                name=rec["design"],
                volts=volts,
                sample_rate=fs,
                loudness_lufs_1v_full_scale=m["loudness_lufs_1v_full_scale"],
                cells=clips_cells(m),
                values=design_values(design),
                numbers=design_numbers(design),
                file=str(rec["design_file"]),
                full_samples=n,
                warnings=tuple(rec.get("warnings", ())),
                response=resp,
                passive=passive,
                band_power_db=power,
            )
        )
    if compare is not None:
        clips.append(compare_clip(folder, *compare, volts_full_scale=volts_full_scale))
    lede = (
        f"Dry signal {dry}; rig: {rig}; {settings['sample_rate']} Hz; seed {settings['seed']}; hum {'on' if settings['hum'] else 'off'};"
        f" noise {'on' if settings['noise'] else 'off'}; one full scale for every WAV: {volts_full_scale:g} V."
    )
    n = len(clips)
    title = f"render clips: {len(designs)} design{'s' if len(designs) != 1 else ''}" + (f" and the comparison pickup {compare[0].name}" if compare is not None else "")
    notes = CLIPS_NOTES + ((COMPARE_NOTE,) if compare is not None else ())
    start = len(designs) if reference is None else reference
    text = PageText(title=title, lede=lede, columns=CLIPS_COLUMNS, notes=notes, matched_column=CLIPS_MATCHED_COLUMN, reference=start)
    return write_page(folder, text, clips, volts_full_scale=volts_full_scale, jobs=jobs)


COMPARE_NOTE = "The comparison pickup (--compare) is passive: no preamp, so no bias, headroom or limit, and no passive reference of its own."


def compare_clip(folder: Path, p, rec: dict, *, volts_full_scale: float) -> PageClip:
    """The passive comparison pickup ``p`` (its record ``rec``, its ``S.wav`` in ``folder``) as the page shows it."""
    from ..analysis.brightness import BANDS_HZ, band_power_db
    from ..analysis.comparison import compare_response
    from ..design.passive import carrier
    from ..report.clips import COMPARE_LABEL, compare_cells
    from .page import RESPONSE_POINTS

    stem = Path(p.source).stem
    volts, fs, n = read_head(folder / f"{stem}.wav", volts_full_scale=volts_full_scale)
    f = np.geomspace(20.0, 20000.0, RESPONSE_POINTS)
    h = compare_response(p, f)

    def response(x):
        return compare_response(p, x)[None, :]

    own = ("coil_a.", "coil_b.", "rig.", "hum.")  # the carrier's preamp is a placeholder, never shown
    return PageClip(
        key=stem,
        name=f"{p.name} ({COMPARE_LABEL})",
        volts=volts,
        sample_rate=fs,
        loudness_lufs_1v_full_scale=rec["loudness_lufs_1v_full_scale"],
        cells=compare_cells(rec["measurements"]),
        values=tuple(v for v in design_values(carrier(p)) if v[0].startswith(own)),
        numbers=tuple(v for v in design_numbers(carrier(p)) if v[0].startswith(own)),
        file=str(p.source),
        full_samples=n,
        response=(f, 20 * np.log10(np.maximum(np.abs(h), 1e-30))),
        role="compare",
        band_power_db=tuple(float(band_power_db(response, b)[0]) for b in BANDS_HZ),
    )


def played_limit_cells(headroom: dict) -> tuple[str, str, str]:
    """A phrase clip's headroom record (:meth:`render.analysis.headroom.PlayedHeadroom.record`) as the playing-units cells, as ``render bias`` prints them."""
    from ..analysis.headroom import format_share, from_record, margin_cell, strength_cell

    h = from_record(headroom)
    if h is None:
        return ("not computed",) * 3
    return (
        f"{strength_cell(h, 'up', mark_guess=False)} / {strength_cell(h, 'down', mark_guess=False)}",
        f"{margin_cell(h, 'up')} / {margin_cell(h, 'down')}",
        format_share(h.limited_fraction),
    )


def bias_cells(row: dict, clip: dict) -> tuple[str, ...]:
    """A bias setting's row and clip as the summary table's cells (:data:`BIAS_COLUMNS`)."""
    from ..analysis import undefined as U
    from ..analysis.bias import RESTS_PLAYED, headroom_cell, onset_cell

    q = row["sine"]
    played = played_limit_cells(clip.get("headroom") or {})
    if row.get("rests_on_limit"):
        played = (RESTS_PLAYED, RESTS_PLAYED, played[2])
    return (
        f"{row['bias_v']:.2f} V",
        headroom_cell(row),
        onset_cell(row, unit=" m/s"),
        *played,
        U.cell(q, "thd_percent", ".2f", " %"),
        U.cell(q, "h2_db", ".1f", " dB"),
        U.cell(q, "h3_db", ".1f", " dB"),
        f"{clip['peak_v']:.3f} V",
        "silent" if clip["loudness_lufs_1v_full_scale"] is None else f"{clip['loudness_lufs_1v_full_scale']:.1f} LUFS",
    )


def write_bias_page(
    folder: Path, sweep, clips: Sequence[dict], renders: Sequence[np.ndarray], *, sample_rate: int, volts_full_scale: float, dry: str, strength_m: float | None = None, jobs: int = 1
) -> tuple[Path, Path]:
    """``index.html`` and ``index-clips.js`` for a ``render bias`` folder: one entry per setting of ``sweep``."""
    designs = [s.design for s in sweep.settings]
    curves = response_curves(designs)
    entries = []
    for s, row, clip, x, (resp, passive) in zip(sweep.settings, sweep.rows, clips, renders, curves):
        entries.append(
            PageClip(
                key=Path(clip["file"]).stem,
                name=s.label,  # "ratio 0.30, 9 V": the battery is in it
                volts=np.asarray(x, dtype=float),
                sample_rate=sample_rate,
                loudness_lufs_1v_full_scale=clip["loudness_lufs_1v_full_scale"],
                cells=bias_cells(row, clip),
                values=design_values(s.design),
                numbers=design_numbers(s.design),
                file=str(sweep.design.source),
                response=resp,
                passive=passive,
            )
        )
    pluck = f"; every note plucked at {strength_m * 1e3:g} mm" if strength_m is not None else ""
    lede = f"{sweep.design.name} ({sweep.design.source}) playing {dry}{pluck}; one full scale for every WAV: {volts_full_scale:g} V."
    text = PageText(title=f"render bias: {sweep.design.name}, {len(entries)} settings", lede=lede, columns=BIAS_COLUMNS, notes=BIAS_NOTES)
    return write_page(folder, text, entries, volts_full_scale=volts_full_scale, jobs=jobs)
