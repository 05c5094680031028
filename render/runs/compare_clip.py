"""``render clips --compare``: the passive comparison pickup's clip, beside the designs' in the run folder.

The pickup (:class:`render.design.passive.PassiveDesign`) plays the same dry
signal at its own sensing points through its carrier's passive path
(:func:`render.clip.render_passive`; linear, no preamp to limit), with the
rig's hum and, when asked, its own noise floor, and is written at the run's
full scale so its level compares honestly with the designs'.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..clip import RenderSettings
from ..design.passive import PassiveDesign, carrier


def compare_stem(p: PassiveDesign) -> str:
    """The file stem of the comparison clip: the passive file's own stem."""
    return Path(p.source).stem


def render_compare(p: PassiveDesign, dry: Path, settings: RenderSettings) -> tuple[np.ndarray, int, tuple[str, ...]]:
    """(volts at the amp input (n,), sample rate (Hz), the dry signal's warnings) of ``p`` playing ``dry``."""
    from ..clip import render_passive
    from .clips import dry_for

    d = carrier(p)
    signal = dry_for(d, dry, settings)
    fs = signal.sample_rate
    volts = render_passive(d, signal.velocity, sample_rate=fs, hum=settings.hum)
    if settings.noise:
        from ..analysis.noise import noise_waveform

        volts = volts + noise_waveform(d, n=volts.size, sample_rate=fs, seed=settings.seed, passive=True)
    return volts, fs, tuple(signal.warnings)


def write_compare_clip(p: PassiveDesign, dry: Path, settings: RenderSettings, out: Path, *, volts_full_scale: float, plots: bool = True) -> dict:
    """Render ``p`` into ``out``/<stem>.wav (at ``volts_full_scale``) and <stem>.json, with plots <stem>-response.png; returns the record.

    A line for it is added at the end of the run's summary.md, when there is one.
    """
    from ..analysis.loudness import integrated_loudness
    from ..io.atomic import write_json
    from ..io.wav import write_float_wav

    volts, fs, _ = render_compare(p, dry, settings)
    stem = compare_stem(p)
    peak = float(np.max(np.abs(volts))) if volts.size else 0.0
    rec: dict = {
        "file": p.source,
        "sha256": p.sha256,
        "design": p.name,
        "kind": "passive",
        "dry": str(dry),
        "settings": settings.record(),
        "volts_full_scale": volts_full_scale,
        "peak_v": peak,
        "rms_v": float(np.sqrt(np.mean(volts**2))) if volts.size else 0.0,
    }
    from ..analysis import undefined as U

    U.put(rec, "loudness_lufs_1v_full_scale", integrated_loudness(volts, sample_rate=fs), U.SILENT)
    write_float_wav(out / f"{stem}.wav", volts / volts_full_scale, fs, overwrite=True)
    write_json(out / f"{stem}.json", rec, overwrite=True)
    if plots:
        from ..analysis.comparison import compare_response
        from ..report.clips import velocity_curves
        from ..report.plots import response_plot

        f = velocity_curves([carrier(p)])[0]
        response_plot(out / f"{stem}-response.png", f, [(f"{p.name} (passive, compared)", compare_response(p, f))], title=f"{p.name}: string velocity to amp input", overwrite=True)
    summary = out / "summary.md"
    if summary.exists():
        from ..io.atomic import write_text

        loud = U.shown(rec, "loudness_lufs_1v_full_scale", ".1f", " LUFS")
        line = (
            f"\nComparison pickup (passive, `--compare`): **{p.name}** ({p.source}) in `{stem}.wav`, at the same full scale: peak {peak:.3g} V at the amp input, loudness {loud} at 1 V full scale.\n"
        )
        write_text(summary, summary.read_text(encoding="utf-8") + line, overwrite=True)
    return rec
