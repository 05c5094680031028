"""``render fit`` as a run: search part values that meet a fit file's aims, and write the results.

Writes the ``top`` best complete design files (``<stem>-fit-1.toml``, …, the
start file with the changed values replaced and marked), ``fit.json`` and an
overlay of the start's and the results' responses; :func:`fit_and_render`
then renders clips of them all (:func:`render.runs.clips.render_clips`) and builds a
blind session of the start against the best (:func:`render.runs.blind.build_blind_session`).
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..errors import ArgumentError, InputError

if TYPE_CHECKING:
    from collections.abc import Callable

    from ..analysis.fit import FitSpec
    from ..design import Design
    from .blind import BlindSession
    from .clips import ClipsRun


@dataclass(frozen=True)
class FitRun:
    """What :func:`fit` found and wrote.

    Attributes
    ----------
    spec : FitSpec
        The fit file as read (its aims and free parts).
    start : Design
    start_file : Path
    start_figures : dict
    start_values : np.ndarray [shape=(parts,)], SI units (NaN: absent in the start)
    results : tuple of render.analysis.fit.FitCandidate
        Best first; each with its part values as written, their figures, score and the aims it misses (none when it meets every aim).
        Only designs that can be built, each once: fewer than ``top`` where the search found fewer.
    files : tuple of Path
        The design files written, in the results' order.
    folder : Path
    top : int
        How many results were asked for.
    """

    spec: FitSpec
    start: Design
    start_file: Path
    start_figures: dict
    start_values: np.ndarray
    results: tuple
    files: tuple[Path, ...]
    folder: Path
    top: int = 3

    def __post_init__(self) -> None:
        from ..readonly import lock_arrays

        lock_arrays(self)

    def verdicts(self) -> list[str]:
        """One line per result: whether it meets every aim, or which it misses and what it measures there."""
        from ..analysis.fit import verdict

        return [f"#{i} {verdict(self.spec, r)}" for i, r in enumerate(self.results, 1)]

    def shortfall(self) -> str | None:
        """Why fewer results than asked for were written, in words (None when there are as many)."""
        n = len(self.results)
        if n >= self.top:
            return None
        return f"asked for {self.top} results, found {n}: the search tried no other distinct design that can be built within these ranges and series"


def start_file_of(spec, fitfile: Path) -> Path:
    """The start design's path: the fit file's ``from`` relative to the fit file (absolute as written); an override as given."""
    start = Path(spec.start_path)
    return fitfile.parent / start if spec.start_in_file and not start.is_absolute() else start


def start_file_given(start_path) -> str | None:
    """The start design's file as ``start_path`` gives it: a path as it is, a loaded :class:`~render.design.Design` as
    the file it came from, which must still hold it (the fit rewrites that file's text into each result); None stays None."""
    from ..arguments import path
    from ..design import Design, load_design
    from ..io.hashing import sha256_file

    if start_path is None:
        return None
    if not isinstance(start_path, Design):
        return str(path("start_path", start_path, what="the start design's file, or a render.Design loaded from one"))
    shown = f"Design({start_path.name!r})"
    fix = "pass the design's file (a path) as start_path"
    source = start_path.source
    if not source:
        raise ArgumentError("start_path", shown, f"was built in memory: no design file for the fit to rewrite; {fix}")
    if start_path.changes:  # render.with_values: the changed text is the design's, not its file's
        raise ArgumentError(
            "start_path",
            shown,
            f"is {source} with changes ({', '.join(k for k, _ in start_path.changes)}): no file holds it for the fit to rewrite; write design.text to a .toml file beside {source} and pass that",
        )
    if not Path(source).is_file() or sha256_file(source) != start_path.sha256 or load_design(source) != start_path:
        raise ArgumentError("start_path", shown, f"is not {source} as it stands (one of them changed since loading, or a rig was applied); {fix}")
    return source


def fit(fitfile, *, out, start_path=None, rig=None, top: int = 3, seed: int = 0, marked: bool = True, overwrite: bool = False) -> FitRun:
    """Search part values (snapped to preferred-number series) that meet ``fitfile``'s aims, and write the results into ``out``.

    Parameters
    ----------
    fitfile : str or Path
        The fit file (aims, free parts, start design).
    out : str or Path
        The folder; refused before any work if it holds files, unless ``overwrite``.
    start_path : str or Path or Design or None
        The start design, instead of the fit file's ``from``: its file, or a Design loaded from one and
        unchanged since (the results are that file's text with the fitted values written in).
    rig : RigFile or str or Path or None
        The rig (a rig file's path, or one loaded) for the start and every result.
    top : int, ≥ 1
        How many results to write.
    seed : int
        Seed of the global search.
    marked : bool
        Mark ``out`` incomplete (``INCOMPLETE.txt``) while writing; False when
        the caller marks it for a longer run (a fit followed by its clips).
    overwrite : bool
        Write into a folder that holds files: an earlier run's files that this one does not write again are removed.

    Raises
    ------
    InputError
        For a bad fit file, or when no result meets every aim (saying which aims conflict).
    """
    from ..analysis.figures import figures
    from ..analysis.fit import check_free, conflicts, format_value, load_fit, rebase_files, rewrite, run_fit, verdict
    from ..arguments import seed as check_seed
    from ..arguments import whole
    from ..design import apply_rig, design_provenance, load_design, parse_design
    from ..design.loading import as_rig
    from ..io.atomic import write_json, write_text
    from ..io.folders import make_folder, output_folder, run_folder
    from ..io.toml import loads

    top, seed = whole("top", top, hint=" (how many results to write)"), check_seed("seed", seed)
    start_path = start_file_given(start_path)
    out = output_folder(out, overwrite=overwrite, prefix="fit")  # an earlier run's files are replaced only when asked
    fitfile = Path(fitfile)
    spec = load_fit(fitfile, start_override=start_path)
    start_file = start_file_of(spec, fitfile)
    rig_file = as_rig(rig)
    start = apply_rig(load_design(start_file), rig_file)
    check_free(spec, start)  # before the phrase is synthesised: a part the start derives is refused at once
    from .fit_phrase import phrase_for_fit

    phrase = phrase_for_fit(spec, fitfile, start)
    results, ev, start_vals = run_fit(spec, start, top=top, seed=seed, phrase=phrase)
    if not results or not results[0].meets:
        best = f" (best score {results[0].score:.3g})" if results else ""
        raise InputError(f"{fitfile}: no design met every aim{best}; {conflicts(spec, ev)}")
    start_fig = figures([start])[0]
    if spec.needs_phrase:
        start_fig["phrase_headroom_db"] = float(ev.phrase_margins([start])[0])
    with run_folder(out) if marked else contextlib.nullcontext(make_folder(out)):
        # the results live in ``out``: a measured coil's file is found from there as from the start file
        text = rebase_files(start_file.read_text(encoding="utf-8"), from_dir=start_file.parent, to_dir=Path(out))
        bodies, records = [], []
        for rank, r in enumerate(results, 1):
            changes = [(fr, v, None if np.isnan(s) else s) for fr, v, s in zip(spec.free, r.values, start_vals) if np.isnan(s) or not np.isclose(v, s, rtol=1e-9, atol=0.0)]
            summary = ", ".join(f"{fr.name} {format_value(fr, s) if s is not None else 'absent'} → {format_value(fr, v)}" for fr, v, s in changes) or "nothing"
            header = f"# render fit result {rank} of {len(results)} for {fitfile} (seed {seed}), from {start_file}\n# changed: {summary}\n# score {r.score:.3g} ({verdict(spec, r)})\n"
            path = Path(out) / f"{start_file.stem}-fit-{rank}.toml"
            body = rewrite(text, changes, header, name=path.stem)
            parse_design(loads(body), source=str(path), name=path.stem)  # each file must be a valid design, checked before any is written
            bodies.append((path, body))
            records.append(
                {
                    "file": str(path),
                    "score": r.score,
                    "meets": r.meets,
                    "misses": [a.describe() for a in r.missed],
                    "changed_parts": r.changed,
                    "figures": {k: v for k, v in r.figures.items() if k != "passive"},
                    "changes": {fr.name: v for fr, v, _ in changes},
                }
            )
        for path, body in bodies:
            write_text(path, body, overwrite=True)
        written = [path for path, _ in bodies]
        write_json(
            Path(out) / "fit.json",
            {"fit_file": str(fitfile), "start": str(start_file), **design_provenance(start), "seed": seed, "aims": [a.describe() for a in spec.aims], "top": top, "results": records},
            overwrite=True,
        )
        from ..report.plots import fit_plot

        fit_plot(Path(out) / "fit-responses.png", [start] + [apply_rig(load_design(p), rig_file) for p in written], title=f"render fit: {fitfile.name}")
        return FitRun(spec=spec, start=start, start_file=start_file, start_figures=start_fig, start_values=start_vals, results=tuple(results), files=tuple(written), folder=Path(out), top=top)


@dataclass(frozen=True)
class FitAndRender:
    """What :func:`fit_and_render` found, wrote and rendered.

    Attributes
    ----------
    fit : FitRun
        The fit and the design files it wrote into the folder.
    clips : ClipsRun or None
        Clips of the start and every result, in ``<folder>/clips`` (None when not asked for).
    blind : BlindSession or None
        A blind session of the start against result 1, in ``<folder>/blind`` (None when not asked for).
    folder : Path
    """

    fit: FitRun
    clips: ClipsRun | None
    blind: BlindSession | None
    folder: Path


def _no_progress(total: int) -> contextlib.AbstractContextManager:
    return contextlib.nullcontext(None)


def fit_and_render(
    fitfile,
    *,
    out=None,
    start_path=None,
    rig=None,
    top: int = 3,
    seed: int = 0,
    clips: bool = True,
    blind: bool = False,
    overwrite: bool = False,
    jobs: int | None = None,
    progress: Callable[[int], contextlib.AbstractContextManager] = _no_progress,
    on_step: Callable[[object], None] | None = None,
) -> FitAndRender:
    """Fit (:func:`fit`), then render clips of the start and every result, and build a blind session of the start against result 1.

    What ``render fit --render --blind`` does. The folder stays marked
    incomplete (``INCOMPLETE.txt``) until the last step is written.

    Parameters
    ----------
    fitfile : str or Path
        The fit file (aims, free parts, start design).
    out : str or Path or None
        The folder (default: ``outputs/fit-<fit file stem>``); refused if it holds files, unless ``overwrite``.
    start_path : str or Path or Design or None
        The start design's file, instead of the fit file's ``from`` (a Design as :func:`fit` takes it).
    rig : RigFile or str or Path or None
        The rig for the fit, the clips and the session.
    top : int, ≥ 1
        How many results to write (and render).
    seed : int
        Seed of the global search.
    clips : bool
        Render clips of the start and every result into ``<out>/clips``. A
        ``phrase_headroom_db`` aim's phrase and strength are what they play, so
        their headroom is the aim's; otherwise the demo phrase.
    blind : bool
        Build a blind ABX session (default settings) of the start against result 1 in ``<out>/blind``.
    overwrite : bool
        Replace the files of an earlier run in ``out``.
    jobs : int or None
        Processes rendering the clips (default: one per design, at most one per core; results identical to one).
    progress : callable
        Given the number of designs to render, returns a context manager
        whose value (a callable taking the number done, or None) follows the clips.
    on_step : callable or None
        Called with each step's result as it is written (the :class:`FitRun`,
        then the :class:`~render.runs.clips.ClipsRun`, then the
        :class:`~render.runs.blind.BlindSession`), so a caller can report before the next begins.

    Returns
    -------
    FitAndRender

    Raises
    ------
    InputError
        As :func:`fit`, and for a folder that cannot take the run.
    """
    import os

    from ..arguments import seed as check_seed
    from ..arguments import whole
    from ..clip import RenderSettings
    from ..design import load_designs
    from ..design.loading import as_rig
    from ..dry import check_dry_file
    from ..io.folders import output_folder, run_folder
    from .blind import BlindSettings, build_blind_session, session_dry_file, session_folder
    from .clips import render_clips
    from .fit_phrase import phrase_file_of

    top, seed = whole("top", top, hint=" (how many results to write)"), check_seed("seed", seed)
    start_path = start_file_given(start_path)  # refused before the folder is made
    step = on_step or (lambda _: None)
    folder = output_folder(out or Path("outputs") / f"fit-{Path(fitfile).stem}", overwrite=overwrite)
    rig_file = as_rig(rig)
    then = clips or blind  # the folder stays marked incomplete until what follows the fit is written
    with run_folder(folder) if then else contextlib.nullcontext():
        run = fit(fitfile, out=folder, start_path=start_path, rig=rig_file, top=top, seed=seed, marked=not then, overwrite=True)  # the folder was checked above
        step(run)
        clips_run = session = None
        if clips:
            designs, _ = load_designs([run.start_file, *run.files], rig=rig_file)
            phrase = phrase_file_of(run.spec, Path(fitfile)) if run.spec.needs_phrase else None
            dry, settings = check_dry_file(phrase), RenderSettings(strength=run.spec.strength)
            clips_out = output_folder(folder / "clips", overwrite=overwrite)
            with progress(len(designs)) as update:
                clips_run = render_clips(designs, dry, settings=settings, out=clips_out, rig=rig_file, jobs=jobs or min(len(designs), os.cpu_count() or 1), progress=update, overwrite=overwrite)
            step(clips_run)
        if blind:
            designs, _ = load_designs([run.start_file, run.files[0]], rig=rig_file)
            session_out = session_folder(folder / "blind", overwrite=overwrite)
            session = build_blind_session(designs, session_dry_file(None), out=session_out, rig=rig_file, settings=BlindSettings(), overwrite=overwrite)
            step(session)
    return FitAndRender(fit=run, clips=clips_run, blind=session, folder=folder)
