"""``render clips --compare``: the passive comparison pickup's clip, beside the designs' in the run folder.

The pickup (:class:`render.design.passive.PassiveDesign`) plays the same dry
signal at its own sensing points through its carrier's passive path
(:func:`render.clip.render_passive`; linear, no preamp to limit), with the
rig's hum and, when asked, its own noise floor, and is written at the run's
full scale so its level compares honestly with the designs'.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..clip import RenderSettings
from ..design.passive import PassiveDesign, carrier

# The comparison pickup's noise floor draws the seed's sequence 2 (render.analysis.noise.NoiseStream): another
# pickup's noise, independent of every design's floor (sequence 0) and of their passive references' (sequence 1)
COMPARE_NOISE_SEQUENCE = 2


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

        volts = volts + noise_waveform(d, n=volts.size, sample_rate=fs, seed=settings.seed, passive=True, sequence=COMPARE_NOISE_SEQUENCE)
    return volts, fs, tuple(signal.warnings)


def render_compare_long(p: PassiveDesign, dry: Path, settings: RenderSettings, *, out: Path, volts_full_scale: float, block: int = 65536) -> Levels:
    """``p`` playing a long recording, streamed block by block straight to ``out``/<stem>.wav (at
    ``volts_full_scale``), as :func:`render.runs.clips.render_long` streams a design: memory stays bounded.
    The samples equal :func:`render_compare`'s to float rounding (the passive path and the noise floor are
    the same streams). Returns the clip's :class:`Levels`."""
    from ..analysis.loudness import LoudnessMeter
    from ..clip import PassiveStream
    from ..dry.recorded import RecordingChecks, iter_recorded
    from ..io.audio import audio_info
    from ..io.wav import FloatWavWriter

    d = carrier(p)
    fs = settings.sample_rate
    passive = PassiveStream(d, sample_rate=fs, hum=settings.hum)
    noise = None
    if settings.noise:
        from ..analysis.noise import NoiseStream

        noise = NoiseStream(d, sample_rate=fs, seed=settings.seed, passive=True, sequence=COMPARE_NOISE_SEQUENCE)
    meter = LoudnessMeter(sample_rate=fs)
    peak, sq, n = 0.0, 0.0, 0
    checks = RecordingChecks(str(dry), info=audio_info(dry), velocity_scale=settings.velocity_scale, seconds=settings.seconds)  # before the writer: a refusal leaves no file
    wav = FloatWavWriter(Path(out) / f"{compare_stem(p)}.wav", sample_rate=fs, overwrite=True)
    try:
        blocks = (passive.process(v) for v in iter_recorded(dry, sample_rate=fs, velocity_scale=settings.velocity_scale, seconds=settings.seconds, block=block, checks=checks))
        for y in _then(blocks, passive.finish):
            if noise is not None and y.size:
                y = y + noise.take(y.size)
            if y.size:
                peak = max(peak, float(np.max(np.abs(y))))
                sq += float(np.sum(y * y))
                n += y.size
            meter.add(y)
            wav.write(y / volts_full_scale)
        wav.close()
    except BaseException:
        wav.abort()
        raise
    return Levels(peak, float(np.sqrt(sq / n)) if n else 0.0, meter.integrated())


def _then(blocks, last):
    """Every block of ``blocks``, then ``last()`` (called once they are drawn)."""
    yield from blocks
    yield last()


def compare_power_db(p: PassiveDesign) -> dict:
    """The pickup's :func:`render.analysis.brightness.band_power_db` per band key, dB re (1 V per m/s)²."""
    from ..analysis.brightness import BANDS_HZ, band_key, band_power_db
    from ..analysis.comparison import compare_response

    return {band_key(b): float(band_power_db(lambda f: compare_response(p, f)[None, :], b)[0]) for b in BANDS_HZ}


def compare_reference(p: PassiveDesign, levels: Levels):
    """The pickup as the run's brightness reference (``--reference`` naming it): its name, band powers and clip loudness
    (:class:`render.analysis.brightness.OutsideReference`)."""
    from ..analysis.brightness import OutsideReference

    return OutsideReference(p.name, compare_power_db(p), levels.loudness_lufs)


@dataclass(frozen=True)
class Levels:
    """What the comparison record measures of its clip: peak (V), rms (V) and BS.1770-4 integrated loudness
    (LUFS re 1 V full scale; None when silent or shorter than one gating block)."""

    peak_v: float
    rms_v: float
    loudness_lufs: float | None

    @classmethod
    def of(cls, volts: np.ndarray, *, sample_rate: int) -> Levels:
        """The levels of a whole clip in memory."""
        from ..analysis.loudness import integrated_loudness

        if not volts.size:
            return cls(0.0, 0.0, integrated_loudness(volts, sample_rate=sample_rate))
        return cls(float(np.max(np.abs(volts))), float(np.sqrt(np.mean(volts**2))), integrated_loudness(volts, sample_rate=sample_rate))


def compare_record(p: PassiveDesign, levels: Levels, *, dry: Path, settings: RenderSettings, volts_full_scale: float, reference: tuple[str, dict, float | None] | None) -> dict:
    """The comparison clip's JSON record: the pickup, its render's ``levels``, and ``measurements`` with the designs' figures where a passive pickup has them.

    reference : (name, band powers per band key (dB), loudness (LUFS re 1 V full scale) or None), or None
        The run's reference design, for the loudness-matched brightness differences; None when this pickup is the reference.
    """
    from ..analysis import undefined as U
    from ..analysis.brightness import other_record
    from ..analysis.comparison import compare_response, comparison_figures

    peak = levels.peak_v
    rec: dict = {
        "file": p.source,
        "sha256": p.sha256,
        "design": p.name,
        "kind": "passive",
        "dry": str(dry),
        "settings": settings.record(),
        "volts_full_scale": volts_full_scale,
        "peak_v": peak,
        "rms_v": levels.rms_v,
    }
    U.put(rec, "loudness_lufs_1v_full_scale", levels.loudness_lufs, U.SILENT)
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


def write_compare_clip(p: PassiveDesign, volts: np.ndarray | None, rec: dict, out: Path, *, sample_rate: int, volts_full_scale: float, plots: bool = True) -> None:
    """``out``/<stem>.wav (at ``volts_full_scale``; None: already written, streamed by :func:`render_compare_long`)
    and <stem>.json (``rec``, from :func:`compare_record`), with <stem>-response.png when ``plots``."""
    from ..io.atomic import write_json
    from ..io.wav import write_float_wav

    stem = compare_stem(p)
    if volts is not None:
        write_float_wav(out / f"{stem}.wav", volts / volts_full_scale, sample_rate, overwrite=True)
    write_json(out / f"{stem}.json", rec, overwrite=True)
    if plots:
        from ..analysis.comparison import compare_response
        from ..report.clips import velocity_curves
        from ..report.plots import response_plot

        f = velocity_curves([carrier(p)])[0]
        response_plot(out / f"{stem}-response.png", f, [(f"{p.name} (passive, compared)", compare_response(p, f))], title=f"{p.name}: string velocity to amp input", overwrite=True)
