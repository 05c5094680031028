"""One clip per design: the render itself, free of file I/O.

:func:`render_design` takes a validated design (its rig applied), a dry
signal file and explicit settings, and returns the voltage at the amp input
with every measurement the reports need. It depends on nothing else, so the
same inputs give the same samples, and it can run in a worker process.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import __version__

DEFAULT_DRY = Path("dry_signals") / "default.toml"


@dataclass(frozen=True)
class Settings:
    """Everything a render depends on besides the design and the dry file."""

    sample_rate: int = 48000
    seconds: float | None = None
    seed: int = 0
    velocity_scale: float = 1.0
    hum: bool = True
    passive: bool = False
    noise: bool = False

    def record(self) -> dict:
        return {
            "sample_rate": self.sample_rate,
            "seconds": self.seconds,
            "seed": self.seed,
            "velocity_scale": self.velocity_scale,
            "hum": self.hum,
            "passive": self.passive,
            "noise": self.noise,
        }


@dataclass
class Clip:
    design: object
    volts: np.ndarray  # amp input, V, shape (n,)
    amp_out: np.ndarray | None  # op-amp output, V (bias included), shape (n,); None once sent back from a worker (its extremes are in ``stats``)
    passive_volts: np.ndarray | None
    dry: dict
    clipped_fraction: float
    warnings: tuple = ()
    figures: dict = field(default_factory=dict)
    stats: dict = field(default_factory=dict)  # :func:`signal_stats`, measured where the clip was rendered


def dry_for(design, dry_path, settings: Settings):
    """The dry signal at this design's two sensing points."""
    from .dry import dry_velocity

    a, b = design.coil_a, design.coil_b
    return dry_velocity(
        dry_path,
        sample_rate=settings.sample_rate,
        positions=(a.position, b.position),
        apertures=(a.aperture, b.aperture),
        seed=settings.seed,
        seconds=settings.seconds,
        velocity_scale=settings.velocity_scale,
    )


class PassiveStream:
    """The passive reference playing the same string, block by block (linear, V at the amp input).

    The common and half-difference velocities (v_a = m + h, v_b = m − h) go
    through the combined paths, so nothing is lost subtracting two filtered
    signals when the coils cancel; the hum is the exact steady state.
    """

    def __init__(self, design, *, sample_rate: float, hum: bool):
        from .chain import discretize as dz
        from .chain import hum as hm
        from .circuit.engine import responses
        from .circuit.params import from_designs

        resp = responses(from_designs([design]))
        self.dz, self.fs, self.h = dz, float(sample_rate), design.hum
        self.common = dz.discretize_rational(resp.passive_velocity(), sample_rate=sample_rate, what="passive path")
        self.differ = dz.discretize_rational(resp.passive_mix(resp.sig_a, -resp.sig_b), sample_rate=sample_rate, what="passive difference path")
        self._sc, self._sd = dz.initial_state(self.common), dz.initial_state(self.differ)
        self.delay = self.common.delay
        freqs = hm.harmonic_frequencies(mains_hz=self.h.mains, harmonics=self.h.harmonics)
        self.gains = np.where(freqs < sample_rate / 2, resp.passive_hum()(freqs)[0], 0.0) if hum else None
        self._n_out = 0
        self._to_drop = self.delay

    def _hum(self, n):
        from .chain import hum as hm

        if self.gains is None or n == 0:
            return np.zeros(n)
        h = self.h
        return hm.steady_response(self.gains, n, sample_rate=self.fs, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics, start=self._n_out)

    def process(self, velocity: np.ndarray) -> np.ndarray:
        """Filter one block of velocity (m/s, shape (2, n)); returns what is ready (the first blocks are shorter by the delay)."""
        m = 0.5 * (velocity[0] + velocity[1])
        h = 0.5 * (velocity[0] - velocity[1])
        ym, self._sc = self.dz.apply(self.common, m, self._sc)
        yd, self._sd = self.dz.apply(self.differ, h, self._sd)
        y = ym + yd
        drop = min(self._to_drop, y.size)
        self._to_drop -= drop
        y = y[drop:]
        y = y + self._hum(y.size)
        self._n_out += y.size
        return y

    def finish(self) -> np.ndarray:
        """The samples still held by the filters' delay."""
        return self.process(np.zeros((2, self.delay)))


def render_passive(design, velocity: np.ndarray, *, sample_rate: float, hum: bool) -> np.ndarray:
    """The passive reference's voltage at the amp input for the same string (linear, V)."""
    ps = PassiveStream(design, sample_rate=sample_rate, hum=hum)
    return np.concatenate([ps.process(velocity), ps.finish()])


def sensing_key(design) -> tuple:
    """What the dry signal depends on in a design: its two sensing points and windows."""
    return (design.coil_a.position, design.coil_b.position, design.coil_a.aperture, design.coil_b.aperture)


def noise_warning(design, floor: np.ndarray) -> tuple[str, ...]:
    """A warning when the noise floor alone (V, added after the limit) would reach a tenth of the headroom."""
    rms = float(np.sqrt(np.mean(floor**2))) if floor.size else 0.0
    if rms > 0.1 * min(design.headroom_up_v, design.headroom_down_v):
        return (f"the noise floor alone is {rms:.3g} V rms at the amp input, beyond a tenth of the headroom; "
                "this design's own noise would drive the amplifier into its limits, which the render (noise added after the limit) does not show",)
    return ()


def render_design(design, dry_path, settings: Settings, *, dry=None, resampler=None) -> Clip:
    """Render ``design`` playing ``dry_path`` (a phrase or recorded velocity file).

    ``dry``: the dry signal already made for this design's sensing points
    (:func:`dry_for`), when several designs share them. ``resampler``: the
    limiter's :func:`~render.chain.stream.design_resampler` at this sample
    rate, when a batch of designs shares one.
    """
    from .analysis.figures import figures
    from .chain.stream import make_plan, render_signal

    dry = dry if dry is not None else dry_for(design, dry_path, settings)
    plan = make_plan(design, sample_rate=settings.sample_rate, resampler=resampler) if resampler is not None else None
    r = render_signal(design, dry.velocity, sample_rate=settings.sample_rate, hum=settings.hum, plan=plan)
    volts = r["out"]
    passive = render_passive(design, dry.velocity, sample_rate=settings.sample_rate, hum=settings.hum) if settings.passive else None
    warnings_noise = ()
    if settings.noise:
        from .analysis.noise import noise_waveform

        n = volts.size
        floor = noise_waveform(design, n=n, sample_rate=settings.sample_rate, seed=settings.seed)
        warnings_noise = noise_warning(design, floor)
        volts = volts + floor
        if passive is not None:
            passive = passive + noise_waveform(design, n=n, sample_rate=settings.sample_rate, seed=settings.seed, passive=True)
    warnings = tuple(dry.warnings) + tuple(r.get("warnings", ())) + warnings_noise
    if not np.all(np.isfinite(volts)):
        from .errors import InputError

        raise InputError(f"{design.source}: the render of {design.name} is not finite; its filters may be unstable at {settings.sample_rate} Hz: check the part values at the ends of their ranges")
    return Clip(
        design=design,
        volts=volts,
        amp_out=r["amp_out"],
        passive_volts=passive,
        dry=dry.description,
        clipped_fraction=float(r.get("clipped_fraction", 0.0)),
        warnings=warnings,
        figures=figures([design])[0],
        stats=signal_stats(volts, r["amp_out"], clipped_fraction=float(r.get("clipped_fraction", 0.0)), sample_rate=settings.sample_rate, bias_v=design.bias_v),
    )


def choose_full_scale(peaks, *, floor: float = 0.1) -> float:
    """The smallest 1-2-5 step (V) at or above the largest peak and ``floor``: one scale for a run."""
    top = max([float(p) for p in peaks] + [floor])
    decade = 10.0 ** np.floor(np.log10(top))
    for m in (1.0, 2.0, 5.0, 10.0):
        if top <= m * decade * (1 + 1e-12):
            return float(m * decade)
    return float(10 * decade)


def signal_stats(volts: np.ndarray, amp_out: np.ndarray, *, clipped_fraction: float, sample_rate: int, bias_v: float) -> dict:
    """Peak, rms, op-amp output range, limiting and loudness (re 1 V full scale) of a render."""
    from .analysis.loudness import integrated_loudness

    return {
        "peak_v": float(np.max(np.abs(volts))) if volts.size else 0.0,
        "rms_v": float(np.sqrt(np.mean(volts**2))) if volts.size else 0.0,
        "amp_out_min_v": float(np.min(amp_out)) if amp_out.size else bias_v,
        "amp_out_max_v": float(np.max(amp_out)) if amp_out.size else bias_v,
        "clipped_fraction": float(clipped_fraction),
        "loudness_lufs_1v_full_scale": integrated_loudness(volts, sample_rate=sample_rate),
    }


def measurements(design, figures: dict, stats: dict, *, volts_full_scale: float) -> dict:
    """The measurements recorded in a clip's JSON: the design's figures and the render's."""
    f, d = figures, design
    lufs_1v = stats["loudness_lufs_1v_full_scale"]
    return {
        "resonance_hz": f["resonance_hz"],
        "resonance_db": f["resonance_db"],
        "q": f["q"],
        "level_1k_db": f["level_1k_db"],
        "gain_vs_passive_db": f["gain_vs_passive_db"],
        "hum_rejection_db": f["hum_rejection_db"],
        "bias_v": d.bias_v,
        "headroom_up_v": d.headroom_up_v,
        "headroom_down_v": d.headroom_down_v,
        **{k: v for k, v in stats.items() if k != "loudness_lufs_1v_full_scale"},
        # ITU-R BS.1770-4 integrated loudness of the WAV as written, and re a 1 V full scale
        "loudness_lufs": None if lufs_1v is None else lufs_1v - 20 * np.log10(volts_full_scale),
        "loudness_lufs_1v_full_scale": lufs_1v,
    }


def record(clip: Clip, *, settings: Settings, volts_full_scale: float, rig_record: dict, dry_path) -> dict:
    """Everything a render used and measured, JSON-ready (no times, no absolute paths)."""
    stats = clip.stats
    return make_record(clip.design, clip.figures, stats, dry=clip.dry, samples=clip.volts.size, warnings=clip.warnings, settings=settings, volts_full_scale=volts_full_scale, rig_record=rig_record, dry_path=dry_path)


def make_record(d, figures, stats, *, dry, samples, warnings, settings, volts_full_scale, rig_record, dry_path) -> dict:
    """The JSON record of one render from its parts."""
    from .design import design_to_dict

    design_info = design_to_dict(d)
    return {
        "design": d.name,
        "design_file": d.source,
        "design_sha256": d.sha256,
        "design_values": design_info,
        "sample_rate": settings.sample_rate,
        "volts_full_scale": volts_full_scale,
        "seconds": samples / settings.sample_rate,
        "dry": {"file": str(dry_path), **dry},
        "rig": rig_record,
        "hum": design_info["hum"] if settings.hum else None,
        "seed": settings.seed,
        "settings": settings.record(),
        "software_version": __version__,
        "measurements": measurements(d, figures, stats, volts_full_scale=volts_full_scale),
        "figures": {k: v for k, v in figures.items() if k != "passive"},
        "passive_figures": figures.get("passive"),
        "warnings": list(warnings),
    }


# ----------------------------------------------------------------------------
# Long recordings: everything block by block

LONG_SECONDS = 120.0  # a recorded dry file longer than this is rendered in bounded memory
NOISE_PERIOD = 2**20  # samples: the noise floor loops with this period on long renders (21.8 s at 48 kHz)
SPECTROGRAM_SECONDS = 60.0  # the spectrogram of a long render shows its first minute


def render_design_long(design, dry_path, settings: Settings, *, out, stem: str, volts_full_scale: float, rig_record: dict, plots: bool = True, block: int = 65536) -> dict:
    """Render a long recorded dry file for ``design`` straight to ``out``/``stem``.wav and .json.

    Memory stays bounded: the velocity is read, resampled, rendered, measured
    and written one block at a time. Returns the JSON record (also written).
    """
    import json

    from .analysis.figures import figures
    from .chain.stream import Renderer, make_plan
    from .analysis.loudness import LoudnessMeter
    from .analysis.spectrum import WelchSpectrum
    from .dry.recorded import iter_recorded
    from .io.atomic import write_text
    from .io.wav import FloatWavWriter

    out = Path(out)
    fs = settings.sample_rate
    plan = make_plan(design, sample_rate=fs)
    renderer = Renderer(plan, hum=settings.hum)
    passive = PassiveStream(design, sample_rate=fs, hum=settings.hum) if settings.passive else None
    noise = pnoise = None
    extra_warnings = ()
    if settings.noise:
        from .analysis.noise import noise_waveform

        noise = noise_waveform(design, n=NOISE_PERIOD, sample_rate=fs, seed=settings.seed)
        extra_warnings = noise_warning(design, noise)
        pnoise = noise_waveform(design, n=NOISE_PERIOD, sample_rate=fs, seed=settings.seed, passive=True) if passive else None
    wav = FloatWavWriter(out / f"{stem}.wav", sample_rate=fs, overwrite=True)
    pwav = FloatWavWriter(out / f"{stem}-passive.wav", sample_rate=fs, overwrite=True) if passive else None
    loud, spec = LoudnessMeter(sample_rate=fs), WelchSpectrum(sample_rate=fs)
    head = []  # the first minute, for the spectrogram
    stats = {"peak": 0.0, "sq": 0.0, "n": 0, "amp_min": np.inf, "amp_max": -np.inf}
    written = [0, 0]

    def emit(y, amp, py):
        if noise is not None and y.size:
            idx = np.arange(written[0], written[0] + y.size) % NOISE_PERIOD
            y = y + noise[idx]
        written[0] += y.size
        if y.size:
            stats["peak"] = max(stats["peak"], float(np.abs(y).max()))
            stats["sq"] += float(np.sum(y * y))
            stats["n"] += y.size
            stats["amp_min"] = min(stats["amp_min"], float(amp.min()))
            stats["amp_max"] = max(stats["amp_max"], float(amp.max()))
            have = sum(h.size for h in head)
            if have < SPECTROGRAM_SECONDS * fs:
                head.append(y[: int(SPECTROGRAM_SECONDS * fs) - have])
        wav.write(y / volts_full_scale)
        loud.add(y)
        spec.add(y)
        if pwav is not None and py is not None:
            if pnoise is not None and py.size:
                idx = np.arange(written[1], written[1] + py.size) % NOISE_PERIOD
                py = py + pnoise[idx]
            written[1] += py.size
            pwav.write(py / volts_full_scale)

    try:
        for v in iter_recorded(dry_path, sample_rate=fs, velocity_scale=settings.velocity_scale, seconds=settings.seconds, block=block):
            r = renderer.process(v)
            emit(r["out"], r["amp_out"], passive.process(v) if passive else None)
        last = renderer.finish()
        emit(last["out"], last["amp_out"], passive.finish() if passive else None)
        wav.close()
        if pwav is not None:
            pwav.close()
    except BaseException:
        wav.abort()
        if pwav is not None:
            pwav.abort()
        raise
    fig = figures([design])[0]
    n = stats["n"]
    s = {
        "peak_v": stats["peak"],
        "rms_v": float(np.sqrt(stats["sq"] / max(n, 1))),
        "amp_out_min_v": stats["amp_min"] if n else design.bias_v,
        "amp_out_max_v": stats["amp_max"] if n else design.bias_v,
        "clipped_fraction": renderer.clipped_fraction,
        "loudness_lufs_1v_full_scale": loud.integrated(),
    }
    dry = {"kind": "recorded", "file": str(dry_path), "seconds": n / fs, "velocity_scale": settings.velocity_scale, "streamed": True}
    rec = make_record(design, fig, s, dry=dry, samples=n, warnings=plan.warnings + extra_warnings, settings=settings, volts_full_scale=volts_full_scale, rig_record=rig_record, dry_path=dry_path)
    write_text(out / f"{stem}.json", json.dumps(rec, indent=2, allow_nan=False) + "\n", overwrite=True)
    if plots:
        from .report.clips import write_design_plots

        write_design_plots(out, stem, design, spectra=[(design.name, *spec.value(), False)], spectrogram=np.concatenate(head) if head else np.zeros(1), sample_rate=fs, spectrogram_title=f"{design.name}: amp input, first {SPECTROGRAM_SECONDS:g} s")
    return rec


def window_full_scale(designs) -> float:
    """A full scale fixed before rendering, from the designs' output windows, rounded up 1-2-5.

    The op-amp output never leaves its window and the output network and
    controls are passive, so this scale holds every render without knowing
    its peak in advance.
    """
    # an AC-coupled output can swing up to twice the window's half-width (a long excursion
    # to one rail, then a jump to the other), and the output-rate samples ring a little past it
    return choose_full_scale([2.2 * max(d.headroom_up_v, d.headroom_down_v) for d in designs])
