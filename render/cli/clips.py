"""``render clips``: one clip per candidate design, through one dry signal and one rig."""

from __future__ import annotations

import os
import sys
from dataclasses import replace
from pathlib import Path

import click

from ..io.folders import make_folder, output_folder
from .options import friendly, overwrite_option, rig_option

CAUTION = "Start playback at a low volume and raise it slowly: clips can be loud, and clipped ones stay loud."


def _render_one(args, figures=None, resampler=None):
    """Render one design and, with a plot folder, draw its plots (in the worker, so they run in parallel)."""
    from ..clips import render_design

    design, dry, settings, (plot_to, signal) = args
    clip = render_design(design, dry, settings, dry=signal, resampler=resampler)
    if plot_to is not None:
        from ..report.clips import write_clip_plots

        folder, stem = plot_to
        write_clip_plots(folder, stem, clip, sample_rate=settings.sample_rate, figures=figures)
    # the op-amp output is not sent back: the run needs only its extremes, already in the stats
    return replace(clip, amp_out=None)


def _render_batch(batch):
    """Render a few designs in turn: one limiter resampler for them all (it depends only on the
    sample rate), their plots drawn on figures kept from one design to the next."""
    from ..chain.stream import default_oversample, design_resampler

    fs = batch[0][2].sample_rate
    resampler = design_resampler(sample_rate=fs, oversample=default_oversample(fs))
    if not any(extra[0] for *_, extra in batch):
        return [_render_one(args, resampler=resampler) for args in batch]
    from ..report.plots import Figures

    with Figures() as figures:
        return [_render_one(args, figures, resampler) for args in batch]


def batches(n: int, jobs: int, *, most: int = 5) -> list[range]:
    """Split ``n`` tasks into runs of consecutive ones, at most ``most`` long, a whole number per process.

    Each process takes runs of about the same length, so the load stays even;
    within a run the plots reuse their figures.
    """
    jobs = max(1, min(jobs, n))
    parts = jobs * -(-n // (jobs * most)) if n else 0
    edges = [round(i * n / parts) for i in range(parts + 1)] if parts else [0]
    return [range(a, b) for a, b in zip(edges, edges[1:]) if b > a]


def _render_long_one(args):
    from ..clips import render_design_long

    design, dry, settings, kw = args
    return render_design_long(design, dry, settings, **kw)


def preload(plots: bool) -> None:
    """Import the heavy modules here, once: forked workers then share them instead of each importing them."""
    from ..chain import stream  # noqa: F401
    from ..dry import modal  # noqa: F401

    if plots:
        from ..report.plots import _plt

        _plt()


def render_all(designs, dry, settings, jobs, *, label="rendering", work=None, extra=None, plots=False):
    """Render every design (in ``jobs`` processes); results in the designs' order.

    ``plots``: whether the work draws plots (then matplotlib is imported once, before the workers fork).
    """
    from ..parallel import pmap

    tasks = [(d, dry, settings, extra[i] if extra else None) for i, d in enumerate(designs)]
    if work is None:  # clips in memory: a few designs per task, their plots drawn on kept figures
        runs = batches(len(tasks), jobs)
        tasks = [[tasks[i] for i in r] for r in runs]
        work = _render_batch
    else:
        runs = None
    if jobs > 1 and len(tasks) > 1:
        preload(plots)
    show = len(designs) > 1
    with click.progressbar(length=len(designs), label=label, file=sys.stderr, show_pos=True) if show else _Null() as bar:
        done = pmap(work, tasks, jobs, on_done=lambda result: bar.update(len(result) if runs else 1))
    return [clip for batch in done for clip in batch] if runs else done


class _Null:
    def __enter__(self):
        return self

    def __exit__(self, *a):
        return False

    def update(self, n):
        pass


@click.command("clips")
@click.argument("models", nargs=-1, type=click.Path(dir_okay=False))
@click.option("--dry", "dry_path", type=click.Path(dir_okay=False), default=None, help="Phrase (.toml) or recorded velocity file (default: dry_signals/default.toml).")
@rig_option
@click.option("--out", "out_dir", type=click.Path(), default=None, help="Output folder (default: a new outputs/clips-<time> folder).")
@overwrite_option
@click.option("--seconds", type=click.FloatRange(min=0.01, max=3600), default=None, help="Length of every clip (default: the dry signal's own).")
@click.option("--sample-rate", type=click.IntRange(min=8000, max=192000), default=48000, show_default=True, help="Output sample rate (Hz).")
@click.option("--velocity-scale", type=click.FloatRange(min=1e-6, max=1e3, min_open=True), default=1.0, show_default=True, help="m/s at full scale of a recorded dry file.")
@click.option("--from-di", "from_di", type=click.Path(dir_okay=False), default=None, help="--dry is a DI recorded through this design's passive reference: un-voice it into the run folder (render unvoice) and play the estimate.")
@click.option("--hum/--no-hum", default=True, show_default=True, help="Add the rig's mains hum field.")
@click.option("--passive/--no-passive", default=False, show_default=True, help="Also render each design's passive reference (S-passive.wav).")
@click.option("--noise/--no-noise", default=False, show_default=True, help="Add the circuit's noise floor (seeded).")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed for the phrase's small variations and the noise.")
@click.option("--volts-full-scale", type=click.FloatRange(min=1e-3, max=100, min_open=True), default=None, help="Volts at WAV full scale, the same for every clip (default: the smallest of 0.1, 0.2, 0.5, 1, 2, 5 … V above the run's largest peak).")
@click.option("--jobs", type=click.IntRange(min=1, max=64), default=None, help="Render designs in this many processes (default: one per core; results identical to one).")
@click.option("--plots/--no-plots", default=True, show_default=True, help="Write the response, spectrum and spectrogram plots.")
@friendly
def clips_command(models, dry_path, rig_path, out_dir, overwrite, seconds, sample_rate, velocity_scale, from_di, hum, passive, noise, seed, volts_full_scale, jobs, plots):
    """Render one clip per design (default: every models/*.toml).

    Every design plays the same dry signal into the same rig, and every WAV
    uses one fixed volts-per-full-scale, so levels compare honestly. Writes
    per design S.wav (float32), S.json, S-response.png, S-spectrum.png and
    S-spectrogram.png, and for the run summary.md and responses.png.
    """
    from ..clips import DEFAULT_DRY, Settings, choose_full_scale, record
    from ..design import load_designs
    from ..errors import InputError
    from ..report.clips import write_design_audio, write_run_files

    dry = Path(dry_path) if dry_path else DEFAULT_DRY
    if not dry.exists():
        raise InputError(f"--dry={dry}: no such file; give a phrase (.toml) or an audio file" + ("" if dry_path else " (run from the project folder for the default phrase)"))
    if dry.suffix.lower() == ".toml":
        from ..dry.phrase import load_phrase

        load_phrase(dry)  # refuse a bad phrase before any folder is made
        if seconds is not None and seconds > 600:
            raise InputError(f"--seconds={seconds:g}: a phrase renders in memory, at most 600 s; for longer takes use a recording")
    elif not from_di:
        from ..io.audio import audio_info

        audio_info(dry)
    designs, rig = load_designs(models, rig=rig_path)
    stems = [Path(d.source).stem for d in designs]
    if len(set(stems)) != len(stems):
        raise InputError("two design files share a name; their clips would overwrite each other: rename one")
    out = output_folder(out_dir, overwrite=overwrite)
    if from_di:
        from .unvoice import dry_from_di

        dry, _ = dry_from_di(dry_path, from_di, folder=out, rig_path=rig_path, overwrite=overwrite, plot=plots)
    settings = Settings(sample_rate=sample_rate, seconds=seconds, seed=seed, velocity_scale=velocity_scale, hum=hum, passive=passive, noise=noise)
    jobs = jobs or min(len(designs), os.cpu_count() or 1)
    rig_record = {"file": rig.source, "sha256": rig.sha256} if rig else {"file": None, "from": "each design's own [rig] or the defaults"}
    if dry.suffix.lower() != ".toml":
        from ..clips import LONG_SECONDS, window_full_scale
        from ..dry.recorded import recorded_seconds

        length = seconds if seconds is not None else recorded_seconds(dry)
        if length > LONG_SECONDS:
            # a long recording: rendered, measured and written block by block in bounded memory,
            # at a full scale fixed in advance from the designs' output windows
            vfs = volts_full_scale or window_full_scale(designs)
            make_folder(out)
            kws = [dict(out=out, stem=stem, volts_full_scale=vfs, rig_record={**rig_record, "values": _rig_values(d)}, plots=plots) for stem, d in zip(stems, designs)]
            records = render_all(designs, dry, settings, jobs, work=_render_long_one, extra=kws, plots=plots)
            for r in records:
                for w in r["warnings"]:
                    click.echo(f"warning: {r['design']}: {w}", err=True)
            write_run_files(out, records, dry=str(dry), rig=rig.source if rig else "each design's own", settings=settings.record(), volts_full_scale=vfs)
            click.echo(f"{len(records)} clip{'s' if len(records) != 1 else ''} of {length:.0f} s rendered block by block to {out}/ (full scale {vfs:g} V, fixed from the output windows; summary in {out / 'summary.md'})")
            click.echo(CAUTION)
            return
    make_folder(out)
    from ..clips import dry_for, sensing_key
    from ..parallel import side_work
    from ..report.clips import write_design_only_plots

    # designs that sense the string at the same points share one synthesised dry signal; with
    # workers, a side process makes those, then draws the plots that need no render (every
    # S-response.png and responses.png), while this one imports the heavy modules the workers share
    firsts = {}
    for d in designs:
        firsts.setdefault(sensing_key(d), d)
    parallel = jobs > 1 and len(designs) > 1
    if parallel and plots:
        from ..report.plots import _plt

        _plt()  # matplotlib first: the side process forks with it, rather than importing it again
    with side_work(enabled=parallel) as side:
        pending = {key: side.submit(dry_for, d, dry, settings) for key, d in firsts.items()}
        drawing = side.submit(write_design_only_plots, out, stems, designs) if plots else None
        if parallel:
            preload(plots)
        shared = {key: fut.result() for key, fut in pending.items()}
        clips = render_all(designs, dry, settings, jobs, extra=[((out, stem) if plots else None, shared[sensing_key(d)]) for stem, d in zip(stems, designs)], plots=plots)
        if drawing is not None:
            drawing.result()
    peaks = [abs(c.volts).max() if c.volts.size else 0 for c in clips] + [abs(c.passive_volts).max() for c in clips if c.passive_volts is not None and c.passive_volts.size]
    vfs = volts_full_scale or choose_full_scale(peaks)
    records = []
    for stem, clip in zip(stems, clips):
        rec = record(clip, settings=settings, volts_full_scale=vfs, rig_record={**rig_record, "values": _rig_values(clip.design)}, dry_path=dry)
        records.append(rec)
        write_design_audio(out, stem, clip, rec, volts_full_scale=vfs, sample_rate=sample_rate)
        for w in clip.warnings:
            click.echo(f"warning: {clip.design.name}: {w}", err=True)
    write_run_files(out, records, dry=str(dry), rig=rig.source if rig else "each design's own", settings=settings.record(), volts_full_scale=vfs)
    over = [c.design.name for c in clips if c.volts.size and abs(c.volts).max() > vfs]
    if over:
        click.echo(f"warning: {', '.join(over)} peak above the {vfs:g} V full scale; the float WAVs keep those samples, but many players clip them", err=True)
    click.echo(f"{len(clips)} clip{'s' if len(clips) != 1 else ''} written to {out}/ (full scale {vfs:g} V; summary in {out / 'summary.md'})")
    click.echo(CAUTION)


def _rig_values(design):
    from dataclasses import asdict

    return asdict(design.rig)
