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
    from .dry_input import dry_for

    d = carrier(p)
    signal = dry_for(d, dry, settings)
    fs = signal.sample_rate
    volts = render_passive(d, signal.velocity, sample_rate=fs, hum=settings.hum)
    if settings.noise:
        from ..analysis.noise import noise_waveform

        volts = volts + noise_waveform(d, n=volts.size, sample_rate=fs, seed=settings.seed, passive=True)
    return volts, fs, tuple(signal.warnings)


def compare_power_db(p: PassiveDesign) -> dict:
    """The pickup's :func:`render.analysis.brightness.band_power_db` per band key, dB re (1 V per m/s)²."""
    from ..analysis.brightness import BANDS_HZ, band_key, band_power_db
    from ..analysis.comparison import compare_response

    return {band_key(b): float(band_power_db(lambda f: compare_response(p, f)[None, :], b)[0]) for b in BANDS_HZ}


def compare_reference(p: PassiveDesign, volts: np.ndarray, *, sample_rate: int):
    """The pickup as the run's brightness reference (``--reference`` naming it): its name, band powers and clip loudness
    (:class:`render.analysis.brightness.OutsideReference`)."""
    from ..analysis.brightness import OutsideReference
    from ..analysis.loudness import integrated_loudness

    return OutsideReference(p.name, compare_power_db(p), integrated_loudness(volts, sample_rate=sample_rate))


def compare_record(p: PassiveDesign, volts: np.ndarray, *, sample_rate: int, dry: Path, settings: RenderSettings, volts_full_scale: float, reference: tuple[str, dict, float | None] | None) -> dict:
    """The comparison clip's JSON record: the pickup, its render, and ``measurements`` with the designs' figures where a passive pickup has them.

    reference : (name, band powers per band key (dB), loudness (LUFS re 1 V full scale) or None), or None
        The run's reference design, for the loudness-matched brightness differences; None when this pickup is the reference.
    """
    from ..analysis import undefined as U
    from ..analysis.brightness import other_record
    from ..analysis.comparison import compare_response, comparison_figures
    from ..analysis.loudness import integrated_loudness

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
    U.put(rec, "loudness_lufs_1v_full_scale", integrated_loudness(volts, sample_rate=sample_rate), U.SILENT)
    fig = comparison_figures(p)
    m: dict = {}
    for key, src in (("resonance_hz", "peak_hz"), ("resonance_db", "peak_db"), ("q", "q"), ("level_1k_db", "level_1k_db"), ("hum_rejection_db", "hum_rejection_db")):
        U.put(m, key, fig.get(src), U.reason(fig, src))
    m["peaks"] = list(fig.get("peaks") or [])  # every listed peak, highest first
    m.update({"peak_v": peak, "rms_v": rec["rms_v"]})
    U.put(m, "loudness_lufs_1v_full_scale", rec["loudness_lufs_1v_full_scale"], U.SILENT)
    own = reference is None
    name, power, loud = (p.name, compare_power_db(p), rec["loudness_lufs_1v_full_scale"]) if reference is None else reference
    m.update(other_record(lambda f: compare_response(p, f)[None, :], rec["loudness_lufs_1v_full_scale"], reference_power_db=power, reference_loudness_lufs=loud, reference_name=name, is_reference=own))
    rec["measurements"] = m
    return rec


def write_compare_clip(p: PassiveDesign, volts: np.ndarray, rec: dict, out: Path, *, sample_rate: int, volts_full_scale: float, plots: bool = True) -> None:
    """``out``/<stem>.wav (at ``volts_full_scale``) and <stem>.json (``rec``, from :func:`compare_record`), with <stem>-response.png when ``plots``."""
    from ..io.atomic import write_json
    from ..io.wav import write_float_wav

    stem = compare_stem(p)
    write_float_wav(out / f"{stem}.wav", volts / volts_full_scale, sample_rate, overwrite=True)
    write_json(out / f"{stem}.json", rec, overwrite=True)
    if plots:
        from ..analysis.comparison import compare_response
        from ..report.clips import velocity_curves
        from ..report.plots import response_plot

        f = velocity_curves([carrier(p)])[0]
        response_plot(out / f"{stem}-response.png", f, [(f"{p.name} (passive, compared)", compare_response(p, f))], title=f"{p.name}: string velocity to amp input", overwrite=True)
