"""``render fit``: search buyable part values that meet a voicing's aims."""

from __future__ import annotations

import click

from .options import friendly, overwrite_option, rig_option
from .values import InFile, OutFolder, Seed


def _fig(figures, name):
    """The figure an aim names, as render check gives it."""
    from ..analysis.undefined import cell

    return cell(figures, name, ".0f" if name.endswith("_hz") else ".2f")


def print_table(run) -> None:
    """Aim, start, each result; then the free parts' values."""
    import numpy as np

    from ..analysis.fit import format_value

    results = run.results
    click.echo(f"{'aim':34s} {'start':>10s} " + " ".join(f"{'#' + str(i):>10s}" for i in range(1, len(results) + 1)))
    for a in run.spec.aims:
        click.echo(f"{a.describe():34s} {_fig(run.start_figures, a.figure):>10s} " + " ".join(f"{_fig(r.figures, a.figure):>10s}" for r in results))
    for j, (fr, s) in enumerate(zip(run.spec.free, run.start_values)):
        click.echo(f"{fr.name:34s} {format_value(fr, s) if not np.isnan(s) else '—':>10s} " + " ".join(f"{format_value(fr, r.values[j]):>10s}" for r in results))


@click.command("fit")
@click.argument("fitfile", type=InFile())
@click.option("--from", "start_path", type=InFile(), default=None, help="Start design (overrides the fit file's 'from').")
@rig_option
@click.option("--top", type=click.IntRange(min=1, max=20), default=3, show_default=True, help="How many results to write.")
@click.option("--out", "out_dir", type=OutFolder(), default=None, help="Folder for the results (default: outputs/fit-<fit file stem>).")
@click.option("--seed", type=Seed(), default=0, show_default=True, help="Seed of the global search.")
@click.option("--render", "render_clips", is_flag=True, help="Then render clips of the start and every result into <out>/clips (render clips).")
@click.option("--blind", "blind_session", is_flag=True, help="Then build a blind ABX session of the start against result 1 in <out>/blind (render blind).")
@overwrite_option
@friendly
def fit_command(fitfile, start_path, rig_path, top, out_dir, seed, render_clips, blind_session, overwrite):
    """Search part values, snapped to preferred-number series, that meet FITFILE's aims.

    A [free] part without series = "…" is snapped to E24; series = "none"
    keeps it continuous. Writes the TOP best complete design files (<stem>-fit-1.toml, …) with
    comments saying what changed, fit.json, and an overlay plot of the
    start's and the results' responses.
    """
    from ..runs.blind import BlindSession
    from ..runs.clips import ClipsRun
    from ..runs.fit import FitRun, fit_and_render
    from .clips_print import progress_bar, report_clips
    from .shared_print import print_blind_session

    def report(step) -> None:
        if isinstance(step, FitRun):
            print_table(step)
            for line in step.verdicts():
                click.echo(line)
            n = len(step.files)
            if note := step.shortfall():
                click.echo(note)
            click.echo(f"wrote {n} design{'' if n == 1 else 's'}, fit.json and fit-responses.png to {step.folder}/")
        elif isinstance(step, ClipsRun):
            report_clips(step)
        elif isinstance(step, BlindSession):
            print_blind_session(step)

    fit_and_render(fitfile, out=out_dir, start_path=start_path, rig=rig_path, top=top, seed=seed, clips=render_clips, blind=blind_session, overwrite=overwrite, progress=progress_bar, on_step=report)
