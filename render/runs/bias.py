"""``render bias`` clips as a run: one clip of the phrase per setting, a loudness-matched copy, and plots."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..dry import refuse_strength_with_recording
from .strength import phrase_at_strength

if TYPE_CHECKING:
    from ..analysis.bias import BiasSweep
    from ..design import Design

__all__ = ["BiasClips", "BiasRun", "bias_run", "check_strength", "phrase_at_strength", "sweep_record", "write_bias_clips"]

REALISTIC_STRENGTH_M = 5e-3  # a pluck beyond 5 mm is far past normal playing (common practice, no source)
PLAYED_STRENGTH_MIN_M = 5e-5  # a pluck below 0.05 mm is far below the softest playing (common practice, no source)


@dataclass(frozen=True)
class BiasClips:
    """What :func:`write_bias_clips` wrote.

    Attributes
    ----------
    folder : Path
    clips : tuple of dict
        Per setting, in the sweep's order: file, volts_full_scale,
        loudness_lufs_1v_full_scale, matched_gain_db, peak_v, and ``headroom``: the phrase's
        headroom at that setting (:meth:`render.analysis.headroom.PlayedHeadroom.record`).
    record : dict
        The run's settings (dry, strength_m, seed, target_lufs, volts_full_scale), for JSON.
    """

    folder: Path
    clips: tuple[dict, ...]
    record: dict


def setting_tags(settings) -> list[str]:
    """One file-name tag per setting ("r0p500-9V"), with as many decimals as it takes to tell them apart.

    Three decimals unless two settings agree to three (0.5 and 0.5004): then more, up to nine,
    and past that the setting's place in the sweep.
    """
    for digits in range(3, 10):
        tags = [f"r{s.ratio:.{digits}f}-{s.battery:.{digits + 3}g}V".replace(".", "p") for s in settings]  # at 3: the battery as :g
        if len(set(tags)) == len(tags):
            return tags
    return [f"{t}-{k + 1}" for k, t in enumerate(tags)]


def check_strength(strength_m: float | None, dry: Path) -> tuple[str, ...]:
    """Refuse a pluck strength outside 0..50 mm or with a recording; warn beyond realistic playing and far below it."""
    if strength_m is None:
        return ()
    from ..dry.strength import pluck_in_range

    pluck_in_range(strength_m)
    refuse_strength_with_recording(dry, f"{strength_m * 1e3:g}mm")
    if strength_m < PLAYED_STRENGTH_MIN_M:
        return (weak_strength_warning(strength_m),)
    far = f"--strength={strength_m * 1e3:g}mm is far beyond realistic playing (above {REALISTIC_STRENGTH_M * 1e3:g} mm, common practice, no source); rendering it anyway"
    return (far,) if strength_m > REALISTIC_STRENGTH_M else ()


def sweep_record(sweep) -> dict:
    """The JSON record of a sweep (:func:`render.analysis.bias.bias_sweep`): the design, its file and hashes, each setting's row."""
    from ..design.provenance import design_provenance

    d = sweep.design
    return {
        "design": d.name,
        "file": d.source,
        **design_provenance(d),
        "keep_load": sweep.keep_load,
        "sine_velocity_m_per_s": sweep.sine_velocity_m_per_s,
        "settings": [dict(r) for r in sweep.rows],
    }


def weak_strength_warning(strength_m: float) -> str:
    """The warning for a pluck below :data:`PLAYED_STRENGTH_MIN_M`, with the same digits under a prefix that gives a played strength when one does.

    "2n" (2 nm) was most likely meant as 2 mm; "22n" has no such reading (22 µm is too weak
    and 22 mm beyond playing), so the hint is to give the strength in mm.
    """
    from ..units import format_si
    from ..usual import prefixed_alternatives

    played = [v for _, v in prefixed_alternatives(strength_m) if PLAYED_STRENGTH_MIN_M <= v <= REALISTIC_STRENGTH_M]
    if played:
        hint = f"; did you mean {played[0] * 1e3:g}mm?"
    else:  # below a micrometre the unit, not the playing, is the likely slip
        hint = "; give it in mm, like 1mm" if strength_m < 1e-6 else ""
    return f"--strength: a pluck of {format_si(strength_m, 'm')} is far below playing (at least about {PLAYED_STRENGTH_MIN_M * 1e3:g} mm, common practice, no source); rendering it anyway{hint}"


def _clip(args: tuple) -> tuple[np.ndarray, dict]:
    """One setting's phrase clip (V at the amp input) and its headroom (:meth:`render.analysis.headroom.PlayedHeadroom.record`)."""
    from ..analysis.headroom import from_record
    from ..clip import render_clip
    from .dry_input import dry_for

    design, dry, st, strength_m = args
    signal = phrase_at_strength(dry, design, st, strength_m) if strength_m is not None else dry_for(design, dry, st)
    clip = render_clip(design, signal, hum=True)
    played = from_record(clip.stats)
    return clip.volts, played.record() if played is not None else {}


def write_bias_clips(sweep, dry: Path, out: Path, *, strength_m: float | None = None, seconds: float | None = None, seed: int = 0, target_lufs: float = -23.0, jobs: int = 1) -> BiasClips:
    """A clip per setting of ``sweep`` (:func:`render.analysis.bias.bias_sweep`) and a copy matched to ``target_lufs``, plus the plots.

    Writes ``S-r<ratio>-<battery>V.wav`` and ``…-matched.wav`` at one full scale,
    ``S-headroom.png``, ``S-harmonics.png`` and ``S-transfer.png``, and the comparison page (``index.html``).
    """
    from ..analysis.loudness import TRUE_PEAK_CEILING_DBTP, ceiling_gains, integrated_loudness, true_peak_aim, true_peak_dbtp
    from ..clip import RenderSettings
    from ..io.folders import run_folder
    from ..io.wav import write_float_wav
    from ..parallel import pmap
    from .clips import choose_full_scale

    with run_folder(out):
        design = sweep.design
        st = RenderSettings(seconds=seconds, seed=seed, hum=True)
        rendered = pmap(_clip, [(s.design, dry, st, strength_m) for s in sweep.settings], jobs)
        renders = [x for x, _ in rendered]
        vfs = choose_full_scale([np.abs(x).max() for x in renders])
        stem = design.stem
        loud = [integrated_loudness(x, sample_rate=st.sample_rate) for x in renders]
        peaks = [true_peak_dbtp(x) if lufs is not None else None for x, lufs in zip(renders, loud)]  # a silent clip has no matched copy
        gains, lowered = ceiling_gains(loud, peaks, target_lufs=target_lufs)
        clips = []
        for x, lufs, gain_db, tag in zip(renders, loud, gains, setting_tags(sweep.settings)):
            write_float_wav(out / f"{stem}-{tag}.wav", x / vfs, st.sample_rate, overwrite=True)
            if gain_db is not None:
                write_float_wav(out / f"{stem}-{tag}-matched.wav", x * 10 ** (gain_db / 20), st.sample_rate, overwrite=True)
            clips.append({"file": f"{stem}-{tag}.wav", "volts_full_scale": vfs, "loudness_lufs_1v_full_scale": lufs, "matched_gain_db": gain_db, "peak_v": float(np.abs(x).max())})
        for c, (_, played) in zip(clips, rendered):
            c["headroom"] = played
        from ..report.plots import bias_plots

        bias_plots(out, design, sweep.settings, sweep.rows)
        from ..compare.folders import write_bias_page

        write_bias_page(out, sweep, clips, renders, sample_rate=st.sample_rate, volts_full_scale=vfs, dry=str(dry), strength_m=strength_m, jobs=jobs)
        record = {
            "dry": str(dry),
            "strength_m": strength_m,
            "seed": seed,
            "target_lufs": target_lufs,
            "matched_ceiling_dbtp": TRUE_PEAK_CEILING_DBTP,
            "matched_true_peak_aim_dbtp": true_peak_aim(TRUE_PEAK_CEILING_DBTP),  # the ceiling less the margin for what a 4x meter misses
            "matched_lowered_db": lowered,
            "volts_full_scale": vfs,
        }
        return BiasClips(folder=out, clips=tuple(clips), record=record)


@dataclass(frozen=True)
class BiasRun:
    """What :func:`bias_run` measured and wrote.

    Attributes
    ----------
    design : Design
        The design swept (its rig applied).
    sweep : BiasSweep
        Each setting's figures (:func:`render.bias_sweep`).
    clips : BiasClips or None
        The clips written, one per setting in the sweep's order (None when no folder was given): each one's file,
        full scale, loudness, matched gain, peak and the phrase's headroom (:class:`render.runs.bias.BiasClips`).
    record : dict
        What ``render bias --json`` writes: the sweep's record, each setting's ``clip`` and the run's ``clips``.
    warnings : tuple of str
        One line each: the pluck strength's, then the sweep's.
    folder : Path or None
        Where the clips, plots and comparison page went.
    """

    design: Design
    sweep: BiasSweep
    clips: BiasClips | None
    record: dict
    warnings: tuple[str, ...]
    folder: Path | None


def bias_run(
    design,
    *,
    rig=None,
    ratios=(0.3, 0.4, 0.5, 0.6, 0.7),
    tops=None,
    bottoms=None,
    batteries=None,
    keep_load: bool = True,
    sine_velocity: float | None = None,
    out=None,
    dry=None,
    strength_m: float | None = None,
    seconds: float | None = None,
    seed: int = 0,
    target_lufs: float = -23.0,
    jobs: int = 1,
    overwrite: bool = False,
) -> BiasRun:
    """The whole of ``render bias``: the sweep of ``design``'s bias divider and, into ``out``, a clip of the phrase per setting.

    Parameters
    ----------
    design : Design
    rig : RigFile or None
        Play into this rig instead of the design's own.
    ratios : sequence of float, 0.02..0.98
    tops, bottoms : sequences of float, Ω, or None
    batteries : sequence of float, V, or None
    keep_load : bool
    sine_velocity : float or None, m/s peak
        The sweep's settings, each as :func:`render.bias_sweep` takes it (the design's own divider is added to the ratios).
    out : str or Path or None
        The folder for the clips (``S-r<ratio>-<battery>V.wav`` and a ``-matched.wav`` copy at ``target_lufs``
        each), the plots and the comparison page; refused before any work if it holds files, unless ``overwrite``.
        None: measure only, write nothing.
    dry : str or Path or None
        The phrase (or recording) the clips play (default: ``dry_signals/default.toml`` here, else the shipped copy).
    strength_m : float or None, m, 0..0.05
        Pluck every note of the phrase this hard (initial displacement); not with a recording.
    seconds : float or None, s
        Length of the clips (default: the phrase's).
    seed : int
        Seed of the phrase's small variations.
    target_lufs : float, LUFS
        Loudness of the matched copies (lowered together when a true peak would pass the ceiling).
    jobs : int
        Settings in this many processes (results identical to one).
    overwrite : bool
        Write into a folder that holds files.

    Returns
    -------
    BiasRun
    """
    from .. import arguments as A
    from ..analysis.bias import bias_sweep
    from ..design import apply_rig
    from ..dry import default_dry_path
    from ..errors import ArgumentError
    from ..io.folders import output_folder

    overwrite = A.flag("overwrite", overwrite)
    folder = None if out is None else output_folder(out, overwrite=overwrite)
    phrase = None
    if folder is not None:  # refused before any work, so a refused run touches nothing
        phrase = Path(dry) if dry is not None else default_dry_path()
        if not phrase.exists():
            raise ArgumentError("dry", f"{phrase}", "no such file")
    notes = check_strength(strength_m, phrase if phrase is not None else Path("phrase.toml"))
    d = apply_rig(design, rig)
    sw = bias_sweep(d, ratios=ratios, tops=tops, bottoms=bottoms, batteries=batteries, keep_load=keep_load, sine_velocity=sine_velocity, jobs=jobs)
    record = sweep_record(sw)
    clips = None
    if folder is not None and phrase is not None:
        clips = write_bias_clips(sw, phrase, folder, strength_m=strength_m, seconds=seconds, seed=seed, target_lufs=target_lufs, jobs=jobs)
        for row, clip in zip(record["settings"], clips.clips):
            row["clip"] = clip
        record["clips"] = clips.record
    return BiasRun(design=d, sweep=sw, clips=clips, record=record, warnings=(*notes, *sw.warnings), folder=folder)
