"""Files of a clips run: per design S.wav, S.json, plots; a summary for the run."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from ..io.atomic import write_text
from ..io.wav import write_float_wav
from .brightness import COLUMNS as BRIGHTNESS_COLUMNS
from .brightness import NOTE as BRIGHTNESS_NOTE


def write_design_audio(out: Path, stem: str, clip, rec: dict, *, volts_full_scale: float, sample_rate: int) -> list[Path]:
    """S.wav (and S-passive.wav) at the run's full scale, and S.json."""
    written = [write_float_wav(out / f"{stem}.wav", clip.volts / volts_full_scale, sample_rate, overwrite=True)]
    if clip.passive_volts is not None:
        written.append(write_float_wav(out / f"{stem}-passive.wav", clip.passive_volts / volts_full_scale, sample_rate, overwrite=True))
    written.append(write_text(out / f"{stem}.json", json.dumps(rec, indent=2, allow_nan=False) + "\n", overwrite=True))
    return written


def write_design_plots(out: Path, stem: str, design, *, spectra, spectrogram, sample_rate: int, spectrogram_title: str, kept=None) -> list[Path]:
    """S-response.png, S-spectrum.png (``spectra``: list of (label, f, level_db, dashed)) and S-spectrogram.png.

    ``kept`` (a :class:`~render.report.plots.KeptFigures`) draws on figures kept from earlier plots.
    """
    return [write_response_plot(out, stem, design, kept=kept)] + write_signal_plots(
        out, stem, design, spectra=spectra, spectrogram=spectrogram, sample_rate=sample_rate, spectrogram_title=spectrogram_title, kept=kept
    )


def velocity_curves(designs):
    """(f (F,) Hz, responses (N, F), passive references (N, F)): string velocity to amp input, 20 Hz to 20 kHz."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs

    f = np.geomspace(20, 20000, 600)
    resp = responses(from_designs(list(designs)))
    return f, resp.velocity()(f), resp.passive_velocity()(f)


def write_response_plot(out: Path, stem: str, design, *, kept=None, curves=None) -> Path:
    """S-response.png: the design's response from string velocity to the amp input, with its passive reference.

    ``curves``: this design's (f, response, passive) from :func:`velocity_curves`, if already computed.
    """
    from .plots import response_plot

    if curves is None:
        f, h, hp = velocity_curves([design])
        curves = (f, h[0], hp[0])
    f, h, hp = curves
    return response_plot(out / f"{stem}-response.png", f, [(design.name, h)], passive=("passive reference", hp), title=f"{design.name}: string velocity to amp input", overwrite=True, kept=kept)


def write_signal_plots(out: Path, stem: str, design, *, spectra, spectrogram, sample_rate: int, spectrogram_title: str, kept=None) -> list[Path]:
    """The plots of the rendered signal: S-spectrum.png and S-spectrogram.png (arguments as for :func:`write_design_plots`)."""
    from .plots import spectrogram_plot, spectrum_plot

    d = design
    return [
        spectrum_plot(out / f"{stem}-spectrum.png", spectra, title=f"{d.name}: long-term average spectrum at the amp input", overwrite=True, kept=kept),
        spectrogram_plot(out / f"{stem}-spectrogram.png", spectrogram, sample_rate=sample_rate, title=spectrogram_title, overwrite=True, kept=kept),
    ]


def write_clip_plots(out: Path, stem: str, clip, *, sample_rate: int, kept=None) -> list[Path]:
    """The plots of an in-memory clip's signal, S-spectrum.png and S-spectrogram.png (``kept``: as for
    :func:`write_design_plots`); S-response.png needs no render and is drawn by :func:`write_design_only_plots`."""
    from ..analysis.spectrum import long_term_spectrum

    spectra = [(clip.design.name, *long_term_spectrum(clip.volts, sample_rate=sample_rate), False)]
    if clip.passive_volts is not None:
        spectra.append(("passive reference", *long_term_spectrum(clip.passive_volts, sample_rate=sample_rate), True))
    return write_signal_plots(out, stem, clip.design, spectra=spectra, spectrogram=clip.volts, sample_rate=sample_rate, spectrogram_title=f"{clip.design.name}: amp input", kept=kept)


def write_design_only_plots(out: Path, stems, designs) -> list[Path]:
    """What can be drawn before any clip is rendered: every S-response.png and responses.png, the overlay of them all."""
    from ..io.atomic import write_bytes
    from .plots import KeptFigures

    designs = list(designs)
    f, h, hp = velocity_curves(designs)
    with KeptFigures() as kept:
        written = [write_response_plot(out, stem, d, kept=kept, curves=(f, h[i], hp[i])) for i, (stem, d) in enumerate(zip(stems, designs))]
    return written + [write_bytes(out / "responses.png", overlay_png(designs, curves=(f, h, hp)), overwrite=True)]


def _cell(m, key, fmt, unit=""):
    from ..analysis.undefined import cell

    return cell(m, key, fmt, unit)


def _resonance(m) -> str:
    if m["resonance_hz"] is None:
        return _cell(m, "resonance_hz", ".0f")
    return f"{m['resonance_hz']:.0f} Hz, {m['resonance_db']:+.1f} dB"


def _peaks(m) -> str:
    """Every listed peak, highest first ("4800 Hz, +5.9 dB; 3730 Hz, +4.0 dB"); the resonance alone for a record without the list."""
    peaks = m.get("peaks")
    if not peaks:
        return _resonance(m)
    return "; ".join(f"{p['frequency_hz']:.0f} Hz, {p['height_db']:+.1f} dB" for p in peaks)


def played_margin_cells(m: dict) -> tuple[str, str]:
    """The played margin up / down and where the limit is reached, as the terminal's headroom table prints them
    (:func:`render.analysis.headroom.margin_cell`, :func:`~render.analysis.headroom.reach_cell`); "not computed" without them."""
    from ..analysis.headroom import from_record, margin_cell, reach_cell

    h = from_record(m)
    if h is None:
        return ("not computed",) * 2
    return f"{margin_cell(h, 'up')} / {margin_cell(h, 'down')}", reach_cell(h)


CLIPS_COLUMNS = (
    "peaks",
    "Q",
    "level at 1 kHz",
    "vs passive",
    "hum rejection",
    "bias",
    "headroom up / down",
    "margin (played) up / down",
    "limit reached at",
    "peak at amp input",
    "loudness (1 V full scale)",
    "limited",
    *BRIGHTNESS_COLUMNS,
)


def measurement_cells(m: dict) -> tuple[str, ...]:
    """A clip record's ``measurements`` as one row of the run's table (``summary.md`` and ``index.html``, :data:`CLIPS_COLUMNS`):
    peaks, Q, level at 1 kHz, vs passive, hum rejection, bias, headroom to the rails, the played margin and where the limit
    is reached (as the terminal prints them), peak, loudness (re 1 V full scale), limited, and the brightness columns
    (:mod:`render.report.brightness`)."""
    from ..analysis.headroom import format_share
    from .brightness import brightness_cells

    return (
        _peaks(m),
        _cell(m, "q", ".2f"),
        _cell(m, "level_1k_db", "+.1f", " dB"),
        _cell(m, "gain_vs_passive_db", "+.1f", " dB"),
        _cell(m, "hum_rejection_db", ".1f", " dB"),
        f"{m['bias_v']:.2f} V",
        f"{m['headroom_up_v']:.2f} / {m['headroom_down_v']:.2f} V",
        *played_margin_cells(m),
        peak_cell(m["peak_v"]),
        _cell(m, "loudness_lufs_1v_full_scale", ".1f", " LUFS"),
        format_share(m["clipped_fraction"]),
    ) + brightness_cells(m)


def peak_cell(volts: float) -> str:
    """A clip's peak to four significant figures with its SI prefix ("1.576 V", "460 µV"): a quiet clip's peak never reads 0."""
    from ..units import format_si

    return format_si(volts, "V", 4)


LEVELS_NOTE = (
    "Level at 1 kHz: dB re 1 V per m/s of string velocity; peaks: every peak from 1 to 20 kHz with 0.5 dB of prominence or more,"
    " highest first (the first is the resonance), its frequency and its height in dB above the level at 1 kHz; Q: the resonance's, from the response;"
    " headroom: from the bias to the rails; margin (played): how far the phrase's largest op-amp swing stays from the soft limit's onset;"
    " limit reached at: the phrase's strongest pluck (every pluck scaled alike, the hum not) at which it reaches that onset, and the dB above the phrase;"
    " loudness per ITU-R BS.1770-4 of the clip in volts, re a 1 V full scale"
)

COMPARE_LABEL = "comparison pickup, passive"
NO_PREAMP = "no preamp"


def compare_cells(m: dict) -> tuple[str, ...]:
    """A comparison pickup's ``measurements`` (:func:`render.runs.compare_clip.compare_record`) in the columns of
    :func:`measurement_cells`: a passive pickup has no passive reference of its own, no bias, no headroom and nothing that limits."""
    from .brightness import brightness_cells

    return (
        _peaks(m),
        _cell(m, "q", ".2f"),
        _cell(m, "level_1k_db", "+.1f", " dB"),
        "is passive",
        _cell(m, "hum_rejection_db", ".1f", " dB"),
        NO_PREAMP,
        NO_PREAMP,
        NO_PREAMP,
        NO_PREAMP,
        peak_cell(m["peak_v"]),
        _cell(m, "loudness_lufs_1v_full_scale", ".1f", " LUFS"),
        NO_PREAMP,
    ) + brightness_cells(m)


def summary_markdown(records: list[dict], *, dry: str, rig: str, settings: dict, volts_full_scale: float, compare: dict | None = None) -> str:
    lines = [
        "# render clips",
        "",
        f"Dry signal: `{dry}`; rig: {rig}; sample rate {settings['sample_rate']} Hz; seed {settings['seed']};"
        f" hum {'on' if settings['hum'] else 'off'}; noise {'on' if settings['noise'] else 'off'}; one full scale for every clip: {volts_full_scale:g} V.",
        "",
        "Start listening at a low volume; clips that clip stay loud.",
        "",
        "| design | " + " | ".join(CLIPS_COLUMNS) + " |",
        "|---|" + "---|" * len(CLIPS_COLUMNS),
    ]
    for r in records:
        lines.append(f"| {r['design']} | " + " | ".join(measurement_cells(r["measurements"])) + " |")
    if compare is not None:
        lines.append(f"| {compare['design']} ({COMPARE_LABEL}) | " + " | ".join(compare_cells(compare["measurements"])) + " |")
    lines += [
        "",
        f"{LEVELS_NOTE} (the same for a design in any run);"
        " \"limited\": share of the op-amp output's samples inside the soft limit's knee or beyond, or slewing at the slew rate;"
        " words stand for a figure with no finite value (its reason is in the design's JSON, beside the figure).",
        "",
        *([f"{BRIGHTNESS_NOTE} Reference: {records[0]['measurements']['reference_design']}.", ""] if records and "reference_design" in records[0]["measurements"] else []),
        *(line for note in pickup_notes(records) for line in (f"Note: {note}", "")),
    ]
    if compare is not None:
        stem = Path(compare["file"]).stem
        lines += [
            f"Comparison pickup (`--compare`): **{compare['design']}** ({compare['file']}) in `{stem}.wav`, the same dry signal at the same full scale;"
            " passive, so it has no preamp: no bias, headroom or limit, and no passive reference of its own.",
            "",
        ]
    return "\n".join(lines)


def pickup_notes(records) -> list[str]:
    """One line, once, when designs with a construction played a recorded input: it stays linear (names the designs)."""
    hits = [r for r in records if isinstance(r.get("dry"), dict) and r["dry"].get("kind") == "recorded" and "pickup" in r["dry"]]
    return [f"{', '.join(r['design'] for r in hits)}: {hits[0]['dry']['pickup']}"] if hits else []


def write_run_files(out: Path, records, *, dry: str, rig: str, settings: dict, volts_full_scale: float, compare: dict | None = None) -> list[Path]:
    """summary.md, one table of every design's measurements, and the comparison pickup's row (``compare``: its record) (responses.png is drawn with the response plots)."""
    text = summary_markdown(records, dry=dry, rig=rig, settings=settings, volts_full_scale=volts_full_scale, compare=compare)
    return [write_text(out / "summary.md", text, overwrite=True)]


def overlay_png(designs, *, curves=None) -> bytes:
    """The overlay plot of every design's response (string velocity to amp input), one dashed curve per distinct passive reference.

    ``curves``: :func:`velocity_curves` of ``designs``, if already computed.
    """
    from .plots import curves_overlay_png

    f, h, hp = curves if curves is not None else velocity_curves(designs)
    passives: list[tuple[int, str]] = []
    with np.errstate(divide="ignore", invalid="ignore"):  # a passive reference that is exactly zero matches no other
        for i, d in enumerate(designs):
            if not any(np.max(np.abs(20 * np.log10(np.abs(hp[i] / hp[j])))) < 0.01 for j, _ in passives):
                passives.append((i, d.name))
    return curves_overlay_png(f, [(d.name, h[i]) for i, d in enumerate(designs)], [(f"passive ({name})" if len(passives) > 1 else "passive reference", hp[i]) for i, name in passives])
