"""One clip: a design playing a dry signal, rendered in time. No file I/O.

:func:`render_clip` takes a validated design (its rig applied) and the string
velocity at its two sensing points, and returns the voltage at the amp input
with the op-amp output and the figures the reports need. It depends on
nothing else, so the same inputs give the same samples, and it can run in a
worker process. :class:`PassiveStream` renders the design's passive reference
(its two coils in series, no preamp) playing the same string.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from .errors import ArgumentError, InputError

if TYPE_CHECKING:
    from .design import Design, RigFile
    from .dry import Dry


LOUDNESS_BLOCKS = "loudness_block_powers_1v"  # a stats key kept out of the JSON record


@dataclass(frozen=True)
class RenderSettings:
    """Everything a render depends on besides the design and the dry file.

    Attributes
    ----------
    sample_rate : int, Hz
    seconds : float or None, s
        Length of every clip (None: the dry signal's own).
    seed : int
        Seed of the phrase's small variations and the noise.
    velocity_scale : float, m/s
        String velocity at full scale of a recorded dry file.
    hum : bool
        Add the rig's mains hum field.
    passive : bool
        Also render the passive reference.
    noise : bool
        Add the circuit's noise floor (seeded).
    strength : float or None, m
        The phrase's strongest pluck, every pluck scaled alike (None: as written).
    """

    sample_rate: int = 48000
    seconds: float | None = None
    seed: int = 0
    velocity_scale: float = 1.0
    hum: bool = True
    passive: bool = False
    noise: bool = False
    strength: float | None = None  # m: the phrase's strongest pluck, every pluck scaled alike (None: as written)

    def __post_init__(self) -> None:
        """Refuse a setting no render can use, naming the field, before any work."""
        from . import arguments as A
        from .dry.phrase import MIN_SECONDS
        from .validate import sample_rate

        sample_rate(self.sample_rate)
        if self.seconds is not None:  # the shortest phrase or recording a render takes (a pluck's first periods)
            A.number("seconds", self.seconds, lo=MIN_SECONDS, unit="s", hint="; None plays the dry signal's own length")
        A.seed("seed", self.seed)
        A.number("velocity_scale", self.velocity_scale, lo=0.0, lo_open=True, hi=1e3, unit="m/s", hint=" (the string velocity at a recording's full scale)")
        if self.seconds is not None and round(self.seconds * self.sample_rate) < 1:
            raise ArgumentError("seconds", f"{self.seconds:g}", f"shorter than one sample at {self.sample_rate} Hz: a clip needs samples; None plays the dry signal's own length")
        for flag in ("hum", "passive", "noise"):
            A.flag(flag, getattr(self, flag))
        if self.strength is not None:
            A.number("strength", self.strength, lo=0.0, lo_open=True, hi=0.05, unit="m", hint=" (the strongest pluck's displacement; 0.002 is 2 mm)")

    def record(self) -> dict:
        return {
            "sample_rate": self.sample_rate,
            "seconds": self.seconds,
            "seed": self.seed,
            "velocity_scale": self.velocity_scale,
            "hum": self.hum,
            "passive": self.passive,
            "noise": self.noise,
            "strength_m": self.strength,
        }


@dataclass(frozen=True)
class Clip:
    """A rendered clip and what was measured on it.

    Attributes
    ----------
    design : Design
    volts : np.ndarray [shape=(n,)], V
        The voltage at the amp input (the cable's far end).
    amp_out : np.ndarray [shape=(n,)], V, or None
        The op-amp output, bias included (None once dropped to save memory;
        its extremes are in ``stats``).
    sample_rate : int, Hz
    passive_volts : np.ndarray [shape=(n,)], V, or None
        The passive reference playing the same string, when asked for.
    dry : dict
        JSON-ready record of what was played.
    clipped_fraction : float, 0..1
        Share of the oversampled limiter input outside the identity region.
    warnings : tuple of str
    figures : dict
        The design's small-signal figures (:func:`render.analysis.figures.figures`).
    stats : dict
        Peak, rms, op-amp output range, limiting and loudness of this render, and its headroom
        for what was played (:meth:`render.analysis.headroom.PlayedHeadroom.record`).
    """

    design: Design
    volts: np.ndarray
    amp_out: np.ndarray | None
    sample_rate: int
    passive_volts: np.ndarray | None = None
    dry: dict = field(default_factory=dict)
    clipped_fraction: float = 0.0
    warnings: tuple[str, ...] = ()
    figures: dict = field(default_factory=dict)
    stats: dict = field(default_factory=dict)

    def __post_init__(self) -> None:
        from .readonly import lock_arrays

        lock_arrays(self)


class PassiveStream:
    """The passive reference playing the same string, block by block (linear, V at the amp input).

    The common and half-difference velocities (v_a = m + h, v_b = m − h) go
    through the combined paths, so nothing is lost subtracting two filtered
    signals when the coils cancel; the hum is the exact steady state.
    """

    def __init__(self, design: Design, *, sample_rate: float, hum: bool):
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
        self.phasors = None  # with [[hum.source]] tables: the sources' hum at the amp input, V peak per harmonic
        if hum and self.h.sources:
            from .magnetics.pickup import passive_phasors

            self.phasors = np.where(freqs < sample_rate / 2, passive_phasors(design, resp), 0.0)
        self._n_out = 0
        self._to_drop = self.delay

    def _hum(self, n):
        from .chain import hum as hm

        if self.gains is None or n == 0:
            return np.zeros(n)
        h = self.h
        if self.phasors is not None:
            from .magnetics.hum import steady_samples

            return steady_samples(self.phasors, n, sample_rate=self.fs, mains_hz=h.mains, start=self._n_out)
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


def render_passive(design: Design, velocity: np.ndarray, *, sample_rate: float, hum: bool) -> np.ndarray:
    """The passive reference's voltage at the amp input for the same string (linear, V)."""
    ps = PassiveStream(design, sample_rate=sample_rate, hum=hum)
    return np.concatenate([ps.process(velocity), ps.finish()])


def noise_warning(design, *, rms: float) -> tuple[str, ...]:
    """A warning when the noise floor alone (its ``rms``, V, added after the limit) would reach a tenth of the headroom."""
    if rms > 0.1 * min(design.headroom_up_v, design.headroom_down_v):
        return (
            f"the noise floor alone is {rms:.3g} V rms at the amp input, beyond a tenth of the headroom; "
            "this design's own noise would drive the amplifier into its limits, which the render (noise added after the limit) does not show",
        )
    return ()


def signal_stats(volts: np.ndarray, amp_out: np.ndarray, *, clipped_fraction: float, sample_rate: int, bias_v: float) -> dict:
    """Peak, rms, op-amp output range, limiting and loudness (re 1 V full scale, with its gating blocks) of a render."""
    from .analysis.loudness import LoudnessMeter

    meter = LoudnessMeter(sample_rate=sample_rate)
    meter.add(volts)
    return {
        "peak_v": float(np.max(np.abs(volts))) if volts.size else 0.0,
        "rms_v": float(np.sqrt(np.mean(volts**2))) if volts.size else 0.0,
        "amp_out_min_v": float(np.min(amp_out)) if amp_out.size else bias_v,
        "amp_out_max_v": float(np.max(amp_out)) if amp_out.size else bias_v,
        "clipped_fraction": float(clipped_fraction),
        **loudness_stats(meter),
    }


def loudness_stats(meter) -> dict:
    """A render's loudness re 1 V full scale, and its gating blocks' powers, from which
    :func:`render.report.records.measurements` finds the loudness at the WAV's own full scale exactly."""
    return {"loudness_lufs_1v_full_scale": meter.integrated(), LOUDNESS_BLOCKS: tuple(meter.block_powers().tolist())}


def _no_samples(v: np.ndarray) -> None:
    if v.shape[-1] == 0:
        raise ArgumentError("velocity", f"array of shape {v.shape}", "no samples: a clip needs at least one; give string velocity in m/s, shape (n,) or (2, n)")


def render_clip(
    design: Design,
    velocity: Dry | np.ndarray,
    *,
    sample_rate: int | None = None,
    hum: bool = True,
    noise: bool = False,
    passive: bool = False,
    seed: int = 0,
    rig: RigFile | None = None,
    resampler: Any = None,
) -> Clip:
    """Render ``design`` playing the string velocity ``velocity``.

    Parameters
    ----------
    design : Design
        A validated design (:func:`render.load_design`).
    velocity : Dry or np.ndarray [shape=(n,) or (2, n)], m/s
        The string velocity at coil_a's and coil_b's sensing points (one row
        for both when 1-D); a :class:`~render.dry.Dry` brings its own sample rate.
    sample_rate : int, Hz
        Required with an array; must match a Dry's when given.
    hum : bool
        Add the rig's mains hum field, as the coils and networks let it through.
    noise : bool
        Add the circuit's own noise floor (seeded by ``seed``).
    passive : bool
        Also render the design's passive reference playing the same string.
    seed : int
        Seed of the noise floor.
    rig : RigFile or None
        Play into this rig instead of the design's own (:func:`render.load_rig`).
    resampler : optional
        The limiter's resampler at this rate (:func:`render.chain.stream.design_resampler`),
        shared by a batch of designs to save time; the result does not depend on it.

    Returns
    -------
    Clip
    """
    from . import arguments as A
    from .analysis.figures import figures
    from .chain.stream import make_plan, render_signal
    from .design import apply_rig
    from .dry import Dry, velocity_array
    from .units import shown
    from .validate import sample_rate as check_rate

    design = apply_rig(design, rig)
    hum, noise, passive = A.flag("hum", hum), A.flag("noise", noise), A.flag("passive", passive)
    if isinstance(velocity, (str, os.PathLike)):
        raise ArgumentError(
            "velocity",
            shown(os.fspath(velocity)),
            "a file's path is not a velocity: load a phrase or a recording with render.load_dry(path, …), or synthesize a phrase with render.synthesize(…), and pass the Dry it gives",
        )
    seed = A.seed("seed", seed)  # checked with or without noise: a bad seed is refused whatever else is asked
    if isinstance(velocity, Dry):  # its velocity and sample rate were checked when it was made
        dry_record, dry_warnings = dict(velocity.description), tuple(velocity.warnings)
        if design.construction is not None and dry_record.get("kind") == "phrase" and "pickup" not in dry_record:
            # a phrase synthesised at two points plays through the derived window and mean sensitivity only: no
            # per-string balance, one polarisation, nothing nonlinear (8 dB louder on slipway-steel-poles)
            raise ArgumentError(
                "velocity",
                "a Dry synthesised without pickup",
                f"{design.name} has a [construction], which senses each string itself: synthesize the phrase with pickup=render.pickup_for(design)",
            )
        if sample_rate is not None and check_rate(sample_rate) != velocity.sample_rate:
            raise ArgumentError("sample_rate", shown(sample_rate), f"the dry signal is at {velocity.sample_rate} Hz; leave sample_rate out or resample it")
        fs = velocity.sample_rate
        v = velocity.velocity
    else:
        v = velocity_array(velocity)
        if sample_rate is None:
            raise ArgumentError("sample_rate", "None", "required when the velocity is a bare array; give it in Hz, e.g. 48000")
        fs = check_rate(sample_rate)
        dry_record, dry_warnings = {"kind": "array"}, ()
    _no_samples(v)
    plan = make_plan(design, sample_rate=fs, resampler=resampler) if resampler is not None else None
    r = render_signal(design, v, sample_rate=fs, hum=hum, plan=plan)
    volts = r["out"]
    passive_volts = render_passive(design, v if v.ndim == 2 else np.stack([v, v]), sample_rate=fs, hum=hum) if passive else None
    warnings_noise: tuple[str, ...] = ()
    if noise:
        from .analysis.noise import noise_waveform

        n = volts.size
        floor = noise_waveform(design, n=n, sample_rate=fs, seed=seed)
        warnings_noise = noise_warning(design, rms=float(np.sqrt(np.mean(floor**2))))
        volts = volts + floor
        if passive_volts is not None:
            passive_volts = passive_volts + noise_waveform(design, n=n, sample_rate=fs, seed=seed, passive=True)
    if not np.all(np.isfinite(volts)):
        raise InputError(f"{design.source}: the render of {design.name} is not finite; its filters may be unstable at {fs} Hz: check the part values at the ends of their ranges")
    clipped = float(r.get("clipped_fraction", 0.0))
    stats = signal_stats(volts, r["amp_out"], clipped_fraction=clipped, sample_rate=fs, bias_v=design.bias_v)
    stats.update(render_headroom(design, r, strongest_pluck_m=dry_record.get("strongest_pluck_m")).record())
    if passive_volts is not None:
        stats["passive_peak_v"] = float(np.max(np.abs(passive_volts))) if passive_volts.size else 0.0
    return Clip(
        design=design,
        volts=volts,
        amp_out=r["amp_out"],
        sample_rate=fs,
        passive_volts=passive_volts,
        dry=dry_record,
        clipped_fraction=clipped,
        warnings=dry_warnings + tuple(r.get("warnings", ())) + warnings_noise,
        figures=figures([design])[0],
        stats=stats,
    )


def render_headroom(design: Design, rendered: dict, *, strongest_pluck_m: float | None = None):
    """:func:`render.analysis.headroom.played_headroom` of a render (``rendered``: :func:`render.chain.stream.render_signal`'s dict)."""
    from .analysis.headroom import played_headroom
    from .chain.limit import design_window
    from .chain.loop import dc_output
    from .chain.stream import PARTS

    return played_headroom(
        linear_min_v=rendered["linear_min_v"],
        linear_max_v=rendered["linear_max_v"],
        bias_v=dc_output(design),
        window=design_window(design),
        limited_fraction=rendered["clipped_fraction"],
        strongest_pluck_m=strongest_pluck_m,
        nonlinear=design.construction is not None,
        parts={k: rendered[k] for k in PARTS} if all(k in rendered for k in PARTS) else None,
    )
