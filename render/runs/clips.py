"""``render clips`` as a run: one clip per design through one dry signal and rig, into one folder.

In memory for phrases and recordings up to :data:`LONG_SECONDS`: the designs
are rendered in worker processes (batches of a few, their plots drawn on
figures kept within the batch), measured there, and written here at one full
scale for the run. Longer recordings are rendered, measured and written block
by block in bounded memory (:func:`render_long`), at a full scale fixed in
advance from the designs' output windows.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from ..clip import Clip, RenderSettings, loudness_stats
from ..design import Design, RigFile, apply_rig
from ..dry import Dry
from .dry_input import dry_for

BATCH_MOST = 5  # designs per worker task: their plots share figures (see split_runs)


@dataclass(frozen=True)
class ClipsRun:
    """What :func:`render.render_clips` wrote and measured.

    Attributes
    ----------
    folder : Path
    records : tuple of dict
        Each design's JSON record (as written to ``S.json``), in the designs' order.
    volts_full_scale : float, V
        The one WAV full scale of the run.
    streamed : bool
        Rendered block by block (a long recording).
    seconds : float, s
        Length of the clips.
    warnings : tuple of str
        One line each, prefixed with the design's name.
    over_full_scale : tuple of str
        The clips whose peak passes the full scale (float WAVs keep those samples), as :func:`over_full_scale` names them.
    compare : dict or None
        The comparison pickup's JSON record (as written to its ``S.json``), when there is one.
    full_scale_given : bool
        ``volts_full_scale`` was asked for, not chosen by the run.
    """

    folder: Path
    records: tuple[dict, ...]
    volts_full_scale: float
    streamed: bool
    seconds: float
    warnings: tuple[str, ...] = ()
    over_full_scale: tuple[str, ...] = ()
    compare: dict | None = None
    full_scale_given: bool = False


def over_full_scale(records, volts_full_scale: float) -> tuple[str, ...]:
    """The design WAVs of a run whose peak passes its full scale: each design's name for its ``S.wav``, and
    "NAME (passive reference)" for its ``S-passive.wav`` (from the records' ``peak_v`` and ``passive_peak_v``)."""
    over = []
    for r in records:
        m = r["measurements"]
        if m["peak_v"] > volts_full_scale:
            over.append(r["design"])
        if m.get("passive_peak_v") is not None and m["passive_peak_v"] > volts_full_scale:
            over.append(f"{r['design']} (passive reference)")
    return tuple(over)


def choose_full_scale(peaks, *, floor: float = 0.1) -> float:
    """The smallest 1-2-5 step (V) at or above the largest peak and ``floor``: one scale for a run."""
    top = max([float(p) for p in peaks] + [floor])
    decade = 10.0 ** np.floor(np.log10(top))
    for m in (1.0, 2.0, 5.0, 10.0):
        if top <= m * decade * (1 + 1e-12):
            return float(m * decade)
    return float(10 * decade)


def window_full_scale(designs) -> float:
    """A full scale fixed before rendering, from the designs' output windows, rounded up 1-2-5.

    The op-amp output never leaves its window and the output network and
    controls are passive, so this scale holds every render without knowing
    its peak in advance.
    """
    # an AC-coupled output can swing up to twice the window's half-width (a long excursion
    # to one rail, then a jump to the other), and the output-rate samples ring a little past it
    return choose_full_scale([2.2 * max(d.headroom_up_v, d.headroom_down_v) for d in designs])


def sensing_key(design: Design) -> tuple:
    """What the dry signal depends on in a design: its two sensing points and windows, and its construction."""
    c = design.construction
    return (design.coil_a.position, design.coil_b.position, design.coil_a.aperture, design.coil_b.aperture) + (() if c is None else (c, design.coil_a.hum_polarity, design.coil_b.hum_polarity))


LONG_SECONDS = 120.0  # a recorded dry file longer than this is rendered in bounded memory
SPECTROGRAM_SECONDS = 60.0  # the spectrogram of a long render shows its first minute


def render_long(design: Design, dry_path: Path, settings: RenderSettings, *, out: Path, stem: str, volts_full_scale: float, rig_record: dict, plots: bool = True, block: int = 65536) -> dict:
    """Render a long recorded dry file for ``design`` straight to ``out``/``stem``.wav and .json.

    Memory stays bounded: the velocity is read, resampled, rendered, measured
    and written one block at a time. Returns the JSON record (also written).
    """
    from ..analysis.figures import figures
    from ..analysis.loudness import LoudnessMeter
    from ..analysis.spectrum import WelchSpectrum
    from ..chain.stream import Renderer, make_plan
    from ..clip import PassiveStream, noise_warning
    from ..dry.recorded import RecordingChecks, iter_recorded
    from ..io.atomic import write_json
    from ..io.wav import FloatWavWriter
    from ..report.records import make_record

    out = Path(out)
    fs = settings.sample_rate
    plan = make_plan(design, sample_rate=fs)
    renderer = Renderer(plan, hum=settings.hum)
    passive = PassiveStream(design, sample_rate=fs, hum=settings.hum) if settings.passive else None
    noise = pnoise = None
    if settings.noise:  # drawn on block by block from the seed: the same floor as a render in memory
        from ..analysis.noise import NoiseStream

        noise = NoiseStream(design, sample_rate=fs, seed=settings.seed)
        pnoise = NoiseStream(design, sample_rate=fs, seed=settings.seed, passive=True) if passive else None
    wav = FloatWavWriter(out / f"{stem}.wav", sample_rate=fs, overwrite=True)
    pwav = FloatWavWriter(out / f"{stem}-passive.wav", sample_rate=fs, overwrite=True) if passive else None
    loud, spec = LoudnessMeter(sample_rate=fs), WelchSpectrum(sample_rate=fs)
    head: list[np.ndarray] = []  # the first minute, for the spectrogram
    stats: dict[str, Any] = {"peak": 0.0, "sq": 0.0, "n": 0, "amp_min": np.inf, "amp_max": -np.inf, "passive_peak": 0.0, "noise_sq": 0.0}

    def emit(y, amp, py):
        if noise is not None and y.size:
            floor = noise.take(y.size)
            stats["noise_sq"] += float(np.sum(floor * floor))
            y = y + floor
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
                py = py + pnoise.take(py.size)
            if py.size:
                stats["passive_peak"] = max(stats["passive_peak"], float(np.abs(py).max()))
            pwav.write(py / volts_full_scale)

    from ..io.audio import audio_info

    checks = RecordingChecks(str(dry_path), info=audio_info(dry_path), velocity_scale=settings.velocity_scale, seconds=settings.seconds)
    try:
        for v in iter_recorded(dry_path, sample_rate=fs, velocity_scale=settings.velocity_scale, seconds=settings.seconds, block=block, checks=checks):
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
    extra_warnings = noise_warning(design, rms=float(np.sqrt(stats["noise_sq"] / max(n, 1)))) if noise is not None else ()
    s = {
        "peak_v": stats["peak"],
        "rms_v": float(np.sqrt(stats["sq"] / max(n, 1))),
        "amp_out_min_v": stats["amp_min"] if n else design.bias_v,
        "amp_out_max_v": stats["amp_max"] if n else design.bias_v,
        "clipped_fraction": renderer.clipped_fraction,
        **loudness_stats(loud),
    }
    from ..analysis.headroom import played_headroom

    lo, hi = renderer.linear_range
    s.update(played_headroom(linear_min_v=lo, linear_max_v=hi, bias_v=plan.bias_v, window=plan.window, limited_fraction=renderer.clipped_fraction, parts=renderer.part_excursions).record())
    if passive is not None:
        s["passive_peak_v"] = stats["passive_peak"]
    dry = {"kind": "recorded", "file": str(dry_path), "seconds": n / fs, "velocity_scale": settings.velocity_scale, "streamed": True}
    rec = make_record(
        design,
        fig,
        s,
        dry=dry,
        samples=n,
        warnings=(*checks.warnings(), *plan.warnings, *extra_warnings),
        settings=settings,
        volts_full_scale=volts_full_scale,
        rig_record=rig_record,
        dry_path=dry_path,
    )
    write_json(out / f"{stem}.json", rec, overwrite=True)
    if plots:
        from ..report.clips import write_design_plots

        write_design_plots(
            out,
            stem,
            design,
            spectra=[(design.name, *spec.value(), False)],
            spectrogram=np.concatenate(head) if head else np.zeros(1),
            sample_rate=fs,
            spectrogram_title=f"{design.name}: amp input, first {SPECTROGRAM_SECONDS:g} s",
        )
    return rec


# ----------------------------------------------------------------------------
# Many designs in worker processes


def render_design(design: Design, dry_path: Path, settings: RenderSettings, *, dry: Dry | None = None, resampler: Any = None) -> Clip:
    """Render ``design`` playing the dry file ``dry_path`` with ``settings`` (:func:`render.clip.render_clip`).

    dry : the dry signal already made for this design's sensing points (:func:`dry_for`), when several designs share it
    resampler : the limiter's resampler at this sample rate, when a batch of designs shares one
    """
    from ..clip import render_clip

    signal = dry if dry is not None else dry_for(design, dry_path, settings)
    return render_clip(design, signal, hum=settings.hum, noise=settings.noise, passive=settings.passive, seed=settings.seed, resampler=resampler)


def _render_one(args: tuple, kept: Any = None, resampler: Any = None) -> tuple[Clip, Any]:
    """Render one design and, with a plot folder, draw its plots (in the worker, so they run in parallel).

    Returns the clip and, for a design with a ``[construction]`` that synthesises its own phrase here, where
    its limit is reached (:func:`_search_here`; else None).
    """
    design, dry_path, settings, (plot_to, signal) = args
    motion = None
    if signal is None and design.construction is not None:
        from .dry_input import dry_with_motion

        signal, motion = dry_with_motion(design, dry_path, settings)
    clip = render_design(design, dry_path, settings, dry=signal, resampler=resampler)
    found = _search_here(design, dry_path, settings, clip.stats, motion) if motion is not None else None
    del motion  # up to MOTION_BYTES_MOST: not kept while the plots are drawn
    if plot_to is not None:
        from ..report.clips import write_clip_plots

        folder, stem = plot_to
        write_clip_plots(folder, stem, clip, sample_rate=settings.sample_rate, kept=kept)
    # the op-amp output is not sent back: the run needs only its extremes, already in the stats
    return replace(clip, amp_out=None), found


def _render_batch(batch: list[tuple]) -> list[tuple[Clip, Any]]:
    """Render a few designs in turn: one limiter resampler for them all (it depends only on the
    sample rate), their plots drawn on figures kept from one design to the next; (clip, limit search) each (:func:`_render_one`)."""
    from ..chain.stream import default_oversample, design_resampler

    fs = batch[0][2].sample_rate
    resampler = design_resampler(sample_rate=fs, oversample=default_oversample(fs))
    if not any(extra[0] for *_, extra in batch):
        return [_render_one(args, resampler=resampler) for args in batch]
    from ..report.plots import KeptFigures

    with KeptFigures() as kept:
        return [_render_one(args, kept, resampler) for args in batch]


def split_runs(n: int, jobs: int, *, most: int = BATCH_MOST) -> list[range]:
    """Split ``n`` tasks into runs of consecutive ones, at most ``most`` long, a whole number per process.

    Each process takes runs of about the same length, so the load stays even;
    within a run the plots reuse their figures.
    """
    jobs = max(1, min(jobs, n))
    parts = jobs * -(-n // (jobs * most)) if n else 0
    edges = [round(i * n / parts) for i in range(parts + 1)] if parts else [0]
    return [range(a, b) for a, b in zip(edges, edges[1:]) if b > a]


def shrinking_runs(n: int, jobs: int, *, most: int = BATCH_MOST) -> list[range]:
    """Split ``n`` tasks into runs of consecutive ones that shrink towards the end: each about the remaining
    tasks over the processes (at most ``most``, at least 1), so that processes that finish uneven earlier work
    at different times still end close together (guided self-scheduling; Polychronopoulos & Kuck, IEEE
    Trans. Computers C-36(12), 1987)."""
    jobs = max(1, jobs)
    runs, start = [], 0
    while start < n:
        size = min(most, max(1, -(-(n - start) // jobs)))
        runs.append(range(start, start + size))
        start += size
    return runs


def _render_long_one(args: tuple) -> dict:
    design, dry, settings, kw = args
    return render_long(design, dry, settings, **kw)


def import_for_workers(plots: bool, *, sensing: bool = False) -> None:
    """Import the heavy modules here, once: forked workers then share them instead of each importing them.

    sensing : whether a worker will sense a constructed pickup's phrase: then numba and its compiled flux
        kernel are loaded here too (about 0.5 s of CPU that each such worker would otherwise spend again)
    """
    from ..chain import stream  # noqa: F401
    from ..dry import modal  # noqa: F401

    if plots:
        from ..report.plots import pyplot

        pyplot()
    if sensing:
        from ..dry._flux_kernel import warm

        warm()


def render_all(
    designs: Sequence[Design],
    dry: Path,
    settings: RenderSettings,
    jobs: int,
    *,
    work: Callable | None = None,
    extra: list | None = None,
    plots: bool = False,
    progress: Callable[[int], None] | None = None,
) -> list:
    """Render every design (in ``jobs`` processes); results in the designs' order (without ``work``, a
    (clip, limit search or None) pair per design: :func:`_render_one`).

    plots : whether the work draws plots (then matplotlib is imported once, before the workers fork)
    progress : called with the number of designs each finished task rendered
    """
    from ..parallel import pmap

    tasks: list[Any] = [(d, dry, settings, extra[i] if extra else None) for i, d in enumerate(designs)]
    runs = None
    if work is None:  # clips in memory: a few designs per task, their plots drawn on kept figures
        runs = worker_tasks(designs, extra, jobs)
        tasks = [[tasks[i] for i in r] for r in runs]
        work = _render_batch
    if jobs > 1 and len(tasks) > 1:
        # a worker senses a construction only where it synthesises the design's phrase itself (no shared dry signal)
        own = runs is not None and any(d.construction is not None and (extra is None or extra[i][1] is None) for i, d in enumerate(designs))
        import_for_workers(plots, sensing=own)
    done = pmap(work, tasks, jobs, on_done=(lambda result: progress(len(result) if runs else 1)) if progress else None)
    if runs is None:
        return done
    out: list[Any] = [None] * len(designs)
    for r, batch in zip(runs, done):
        for i, result in zip(r, batch):
            out[i] = result
    return out


def worker_tasks(designs: Sequence[Design], extra: list | None, jobs: int) -> list[list[int]]:
    """The designs' indices in tasks: first, alone, each design that synthesises its own phrase (a construction
    of its own: the slowest by far, so started first and spread over the processes), then the others in runs of
    consecutive designs (:func:`shrinking_runs` after such designs, else :func:`split_runs`)."""
    own = [i for i, d in enumerate(designs) if d.construction is not None and extra is not None and extra[i][1] is None]
    rest = [i for i in range(len(designs)) if i not in own]
    # after the constructed designs, whose times differ by a second or more, the processes come free at
    # different times: runs that shrink let them end together; without any, runs of equal length do
    runs = shrinking_runs(len(rest), jobs) if own else split_runs(len(rest), jobs)
    return [[i] for i in own] + [[rest[k] for k in r] for r in runs]


GIVEN_TWICE = "this design file is given twice; give each design once"
SHARED_STEM = "two design files share a name; their clips would overwrite each other: rename one"
PASSIVE_STEM = "one design's file is named as the other's passive reference clip (<name>-passive); they would overwrite each other: rename one"


def check_stems(designs: Sequence[Design], compare: Any = None) -> None:
    """Refuse designs whose files share a stem, or a comparison pickup whose file shares a design's: each clip's
    files are named by its file's stem, so one would overwrite the other. Before any file is written."""
    from ..errors import ArgumentError

    seen: dict[str, str] = {}
    for d in designs:
        stem, shown = d.stem, (d.source if not d.changes else d.name) or d.name  # a changed design (render.with_values) is named by its name
        if stem in seen and (seen[stem] == shown or (d.source and not d.changes and Path(seen[stem]).resolve() == Path(d.source).resolve())):
            raise ArgumentError("designs", f"{shown}", GIVEN_TWICE, cli=f"{shown}: {GIVEN_TWICE}")
        if stem in seen:
            raise ArgumentError("designs", f"{seen[stem]}, {shown}", SHARED_STEM, cli=f"{seen[stem]}, {shown}: {SHARED_STEM}")
        seen[stem] = shown
    for stem, shown in seen.items():  # a passive reference's clip is <stem>-passive.wav
        if f"{stem}-passive" in seen:
            raise ArgumentError("designs", f"{shown}, {seen[stem + '-passive']}", PASSIVE_STEM, cli=f"{shown}, {seen[stem + '-passive']}: {PASSIVE_STEM}")
    if compare is not None and Path(compare.source).stem in seen:
        raise ArgumentError("compare", compare.source, f"the design {seen[Path(compare.source).stem]} has the same file name; their clips would overwrite each other: rename one")


def check_dry_settings(dry: Path, settings: RenderSettings, *, recorded: bool = True) -> None:
    """Refuse settings that do not fit the dry file, as the command line does: a phrase whole (its length,
    no ``velocity_scale``), a recording as audio (no ``strength``, which scales a phrase's plucks).
    ``recorded=False``: ``dry`` is a DI to be un-voiced, not read as a velocity recording."""
    from ..dry import check_dry_file, refuse_strength_with_recording

    if settings.strength is not None:
        refuse_strength_with_recording(dry, f"{settings.strength:g}")
    check_dry_file(dry, seconds=settings.seconds, recorded=recorded, velocity_scale=settings.velocity_scale)


def render_clips(
    designs: Sequence[Design],
    dry: Path,
    *,
    out: Path,
    settings: RenderSettings = RenderSettings(),  # noqa: B008  # frozen: one shared default is safe
    rig: RigFile | None = None,
    jobs: int = 1,
    plots: bool = True,
    volts_full_scale: float | None = None,
    progress: Callable[[int], None] | None = None,
    reference: str | None = None,
    compare: Any = None,
    overwrite: bool = False,
    from_di: str | Path | None = None,
    on_unvoiced: Callable[[Any], None] | None = None,
) -> ClipsRun:
    """Render one clip per design into ``out``: S.wav, S.json, plots, summary.md (and responses.png), and the comparison page (index.html).

    Parameters
    ----------
    designs : sequence of Design
        Validated; their file stems name the outputs.
    dry : str or Path
        A phrase (.toml) or a recorded velocity file.
    out : str or Path
        The folder (created here); refused before any work if it holds files, unless ``overwrite``.
    settings : RenderSettings
        How to render (default: ``RenderSettings()``, the command's defaults).
    rig : RigFile or None
        Play every design into this rig instead of its own (kept in the records).
    jobs : int
        Worker processes (results are byte-identical to one).
    plots : bool
    volts_full_scale : float or None, V
        One WAV full scale for the run (default: the smallest 1-2-5 step above the run's largest peak).
    progress : callable or None
        Called with the number of designs done, as they finish.
    reference : str or None
        The design (name or file stem) the loudness-matched brightness differences are taken from (default: the first),
        or the comparison pickup (its name or file stem).
    compare : PassiveDesign or None
        A passive comparison pickup (``--compare``): its clip plays the same dry signal at the run's full scale,
        with a row in summary.md and on the comparison page, beside the designs (:mod:`render.runs.compare_clip`).
    overwrite : bool
        Run into a folder that holds files: an earlier run's files that this one does not write again are removed
        (files no run listed, such as a listener's notes, stay).
    from_di : str, Path or None
        ``dry`` is a DI recorded through this design file's passive reference: it is un-voiced
        (:func:`render.runs.unvoice.velocity_from_di`) into ``out`` as the run's first step, inside the
        run's folder (marked incomplete until the run finishes), and the clips play the estimate.
    on_unvoiced : callable or None
        Called with the :class:`render.runs.unvoice.FromDi` once the DI is un-voiced (the command line prints it).
    """
    from .. import arguments as A
    from ..analysis.brightness import reference_index
    from ..compare.folders import write_clips_page
    from ..errors import ArgumentError
    from ..io.folders import output_folder, run_folder
    from ..parallel import SideProcess
    from ..report.brightness import add_brightness
    from ..report.clips import write_design_audio, write_design_only_plots, write_run_files
    from ..report.records import clip_record

    dry = A.path("dry", dry, what="a phrase (.toml) or a recorded velocity file's path")
    if not dry.is_file():
        raise ArgumentError("dry", f"{dry}", "no such file; give a phrase (.toml) or a recorded velocity file", option="--dry")
    A.instance("settings", settings, RenderSettings, "a render.RenderSettings(...) (RenderSettings() for the defaults)")
    check_dry_settings(dry, settings, recorded=from_di is None)
    check_stems(designs, compare)
    out = output_folder(A.path("out", out, what="a folder's path"), overwrite=overwrite)  # an earlier run's files are replaced only when asked
    designs = [apply_rig(d, rig) for d in designs]  # as the designs were loaded with it (applying a rig twice changes nothing)
    ref = reference_index(designs, reference, compare=compare)  # refused before any work; None: the comparison pickup
    stems = [d.stem for d in designs]
    from ..design.provenance import rig_provenance

    rig_record = rig_provenance(rig)
    rig_text = rig.source if rig else "each design's own"
    with run_folder(out):
        if from_di is not None:  # the run's first files: the marker is already there, so a stop while un-voicing leaves it
            from .unvoice import velocity_from_di

            made = velocity_from_di(dry, from_di, folder=out, rig=rig.source if rig is not None else None, overwrite=overwrite, plot=plots)
            if on_unvoiced is not None:
                on_unvoiced(made)
            dry = made.wav
            check_dry_settings(dry, settings)
        if dry.suffix.lower() != ".toml":
            from ..dry.recorded import recorded_seconds

            length = settings.seconds if settings.seconds is not None else recorded_seconds(dry)
            if length > LONG_SECONDS:
                vfs = volts_full_scale or window_full_scale(designs)
                kws = [dict(out=out, stem=stem, volts_full_scale=vfs, rig_record={**rig_record, "values": asdict(d.rig)}, plots=plots) for stem, d in zip(stems, designs)]
                records = render_all(designs, dry, settings, jobs, work=_render_long_one, extra=kws, plots=plots, progress=progress)
                clevels = None
                if compare is not None:  # streamed to its WAV as the designs are: memory stays bounded
                    from .compare_clip import render_compare_long

                    clevels = render_compare_long(compare, dry, settings, out=out, volts_full_scale=vfs)
                add_brightness(records, designs, reference=_reference(ref, compare, clevels))
                from ..io.atomic import write_json

                for stem, rec in zip(stems, records):  # each S.json again, with the run's brightness figures
                    write_json(out / f"{stem}.json", rec, overwrite=True)
                crec = None
                if clevels is not None:
                    crec = _compare_files(compare, None, clevels, designs, records, ref, dry=dry, settings=settings, out=out, volts_full_scale=vfs, plots=plots)
                write_run_files(out, records, dry=str(dry), rig=rig_text, settings=settings.record(), volts_full_scale=vfs, compare=crec)
                write_clips_page(
                    out, records, designs, volts_full_scale=vfs, dry=str(dry), rig=rig_text, settings=settings.record(), jobs=jobs, compare=(compare, crec) if crec else None, reference=ref
                )
                return _finished(out, records, vfs, streamed=True, seconds=length, compare=crec, given=volts_full_scale is not None)
        # designs that sense the string at the same points share one synthesised dry signal; with
        # workers, a side process makes those, then draws the plots that need no render (every
        # S-response.png and responses.png), while this one imports the heavy modules the workers share
        parallel = jobs > 1 and len(designs) > 1
        keys = [sensing_key(d) for d in designs]
        firsts: dict[tuple, Design] = {}
        for key, d in zip(keys, designs):
            # a construction's sensing is slow and its own: the one design that uses it synthesises it where
            # it renders (in parallel with the others, not in turn in the side process), keeping the strings'
            # motion there for its limit search
            if not (d.construction is not None and keys.count(key) == 1):
                firsts.setdefault(key, d)
        if parallel and plots:
            from ..report.plots import pyplot

            pyplot()  # matplotlib first: the side process forks with it, rather than importing it again
        with SideProcess(enabled=parallel) as side:
            pending = {key: side.submit(dry_for, d, dry, settings) for key, d in firsts.items()}
            drawing = side.submit(write_design_only_plots, out, stems, designs) if plots else None
            if compare is not None:
                from .compare_clip import render_compare

                compared = side.submit(render_compare, compare, dry, settings)
            if parallel:
                import_for_workers(plots, sensing=any(d.construction is not None and keys.count(k) == 1 for d, k in zip(designs, keys)))
            shared = {key: fut.result() for key, fut in pending.items()}
            rendered = render_all(designs, dry, settings, jobs, extra=[((out, stem) if plots else None, shared.get(key)) for stem, key in zip(stems, keys)], plots=plots, progress=progress)
            clips = [clip for clip, _ in rendered]
            if drawing is not None:
                drawing.result()
            cvolts = compared.result()[0] if compare is not None else np.zeros(0)
        peaks = [abs(c.volts).max() if c.volts.size else 0 for c in clips] + [abs(c.passive_volts).max() for c in clips if c.passive_volts is not None and c.passive_volts.size]
        peaks += [abs(cvolts).max()] if cvolts.size else []
        clevels = None
        if compare is not None:
            from .compare_clip import Levels

            clevels = Levels.of(cvolts, sample_rate=settings.sample_rate)
        vfs = volts_full_scale or choose_full_scale(peaks)
        records = [clip_record(clip, settings=settings, volts_full_scale=vfs, rig_record={**rig_record, "values": asdict(clip.design.rig)}, dry_path=dry) for clip in clips]
        search_limits(designs, records, dry, settings, jobs=jobs, found=[f for _, f in rendered])
        add_brightness(records, designs, reference=_reference(ref, compare, clevels))
        for stem, clip, rec in zip(stems, clips, records):
            write_design_audio(out, stem, clip, rec, volts_full_scale=vfs, sample_rate=settings.sample_rate)
        crec = _compare_files(compare, cvolts, clevels, designs, records, ref, dry=dry, settings=settings, out=out, volts_full_scale=vfs, plots=plots) if clevels is not None else None
        write_run_files(out, records, dry=str(dry), rig=rig_text, settings=settings.record(), volts_full_scale=vfs, compare=crec)
        write_clips_page(out, records, designs, volts_full_scale=vfs, dry=str(dry), rig=rig_text, settings=settings.record(), jobs=jobs, compare=(compare, crec) if crec else None, reference=ref)
        seconds = clips[0].volts.size / settings.sample_rate if clips else 0.0
        return _finished(out, records, vfs, streamed=False, seconds=seconds, compare=crec, given=volts_full_scale is not None)


def _finished(out: Path, records, vfs: float, *, streamed: bool, seconds: float, compare: dict | None, given: bool) -> ClipsRun:
    """The run as returned: its records' warnings, each prefixed with the design's name, and the clips over the full scale."""
    warnings = tuple(f"{r['design']}: {w}" for r in records for w in r["warnings"])
    return ClipsRun(
        folder=out,
        records=tuple(records),
        volts_full_scale=vfs,
        streamed=streamed,
        seconds=seconds,
        warnings=warnings,
        over_full_scale=over_full_scale(records, vfs),
        compare=compare,
        full_scale_given=given,
    )


def _reference(ref: int | None, compare, levels):
    """The brightness reference: the design at index ``ref``, or (None) the comparison pickup from its clip's levels."""
    if ref is not None:
        return ref
    from .compare_clip import compare_reference

    assert levels is not None  # a run whose reference is the comparison pickup renders it first

    return compare_reference(compare, levels)


def _compare_files(compare, volts: np.ndarray | None, levels, designs, records, ref: int | None, *, dry: Path, settings: RenderSettings, out: Path, volts_full_scale: float, plots: bool) -> dict:
    """The comparison pickup's record (its brightness against the run's reference design, or as the reference itself
    when ``ref`` is None; ``levels`` its clip's) and files (``volts`` None: its WAV already streamed); returns the record."""
    from ..analysis.brightness import band_powers_db
    from .compare_clip import compare_record, write_compare_clip

    reference = None
    if ref is not None:
        power = {k: float(v[0]) for k, v in band_powers_db([designs[ref]]).items()}
        reference = (designs[ref].name, power, records[ref]["measurements"]["loudness_lufs_1v_full_scale"])
    rec = compare_record(compare, levels, dry=dry, settings=settings, volts_full_scale=volts_full_scale, reference=reference)
    write_compare_clip(compare, volts, rec, out, sample_rate=settings.sample_rate, volts_full_scale=volts_full_scale, plots=plots)
    return rec


def _search_one(args: tuple):
    from .limit_strength import search_limit_strength

    design, dry, settings, strongest, margin = args
    return search_limit_strength(design, dry, settings, strongest_m=strongest, margin_db=margin)


def _to_search(design: Design, measurements: dict, dry: Path):
    """The played headroom of a render whose limit is to be found by renders (a ``[construction]``, a phrase), else None."""
    from ..analysis.headroom import from_record

    h = from_record(measurements)
    if design.construction is not None and h is not None and h.strongest_pluck_m and h.margin_db is not None and Path(dry).suffix.lower() == ".toml":
        return h
    return None


def _search_here(design: Design, dry: Path, settings: RenderSettings, stats: dict, motion):
    """The limit search of :func:`search_limits` for one design, in this process, from the motion its render kept."""
    from .limit_strength import search_limit_strength

    h = _to_search(design, stats, dry)
    return None if h is None else search_limit_strength(design, dry, settings, strongest_m=h.strongest_pluck_m, margin_db=h.margin_db, motion=motion)


def search_limits(designs: Sequence[Design], records: Sequence[dict], dry: Path, settings: RenderSettings, *, jobs: int = 1, found: Sequence | None = None) -> None:
    """For each design whose sensing is not linear in the pluck (a ``[construction]``), find where its limit is reached by
    renders at scaled strength (:mod:`render.runs.limit_strength`), in ``jobs`` processes, and put it in its record's measurements.

    found : per design, a search already made where it rendered (:func:`_search_here`), or None
    """
    from ..parallel import pmap

    todo = [(i, h) for i, (d, rec) in enumerate(zip(designs, records)) if (h := _to_search(d, rec["measurements"], dry)) is not None]
    if not todo:
        return
    made = found or [None] * len(designs)
    missing = [(i, h) for i, h in todo if made[i] is None]
    elsewhere = dict(zip((i for i, _ in missing), pmap(_search_one, [(designs[i], Path(dry), settings, h.strongest_pluck_m, h.margin_db) for i, h in missing], jobs))) if missing else {}
    for i, h in todo:
        r = made[i] if made[i] is not None else elsewhere[i]
        searched = replace(
            h, searched=True, searched_strength_m=r.strength_m, searched_margin_db=r.margin_db, searched_renders=r.renders, searched_reason=r.reason, searched_range_edge_m=r.range_edge_m
        )
        records[i]["measurements"].update(searched.record())
