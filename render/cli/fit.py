"""``render fit``: search buyable part values that meet a voicing's aims."""

from __future__ import annotations

from pathlib import Path

import click

from ..io.folders import make_folder, output_folder
from .options import emit_json, friendly, overwrite_option, rig_option


def _fig(v, name):
    if v is None:
        return "—"
    return f"{v:.0f}" if name.endswith("_hz") else f"{v:.2f}"


@click.command("fit")
@click.argument("fitfile", type=click.Path(dir_okay=False))
@click.option("--from", "start_path", type=click.Path(dir_okay=False), default=None, help="Start design (overrides the fit file's 'from').")
@rig_option
@click.option("--top", type=click.IntRange(min=1, max=20), default=3, show_default=True, help="How many results to write.")
@click.option("--out", "out_dir", type=click.Path(file_okay=False), default=None, help="Folder for the results (default: outputs/fit-<fit file stem>).")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the global search.")
@click.option("--render", "render_clips", is_flag=True, help="Then render clips of the start and every result into <out>/clips (render clips).")
@click.option("--blind", "blind_session", is_flag=True, help="Then build a blind ABX session of the start against result 1 in <out>/blind (render blind).")
@overwrite_option
@click.pass_context
@friendly
def fit_command(ctx, fitfile, start_path, rig_path, top, out_dir, seed, render_clips, blind_session, overwrite):
    """Search part values, snapped to preferred-number series, that meet FITFILE's aims.

    Writes the TOP best complete design files (<stem>-fit-1.toml, …) with
    comments saying what changed, fit.json, and an overlay plot of the
    start's and the results' responses.
    """
    import numpy as np

    from ..analysis.fit import conflicts, format_value, load_fit, rewrite, run_fit
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..design import apply_rig, load_design, load_rig, parse_design
    from ..errors import InputError
    from ..io.atomic import write_text
    from ..io.toml import loads

    spec = load_fit(fitfile, start_override=start_path)
    start_file = Path(spec.start_path)
    if not start_file.is_absolute() and not start_file.exists() and (Path(fitfile).parent / start_file).exists():
        start_file = Path(fitfile).parent / start_file
    rig = load_rig(rig_path) if rig_path else None
    start = apply_rig(load_design(start_file), rig)
    out = output_folder(out_dir or Path("outputs") / f"fit-{Path(fitfile).stem}", overwrite=overwrite)
    results, ev, start_vals = run_fit(spec, start, top=top, seed=seed)
    if not results or not results[0].meets:
        best = f" (best score {results[0].score:.3g})" if results else ""
        raise InputError(f"{fitfile}: no design met every aim{best}; {conflicts(spec, ev)}")
    from ..analysis.figures import figures

    start_fig = figures([start])[0]
    make_folder(out)
    text = start_file.read_text(encoding="utf-8")
    stem = start_file.stem
    records, written = [], []
    for rank, r in enumerate(results, 1):
        changes = [(fr, v, None if np.isnan(s) else s) for fr, v, s in zip(spec.free, r.values, start_vals) if np.isnan(s) or not np.isclose(v, s, rtol=1e-9, atol=0.0)]
        summary = ", ".join(f"{fr.name} {format_value(fr, s) if s is not None else 'absent'} → {format_value(fr, v)}" for fr, v, s in changes) or "nothing"
        header = (
            f"# render fit result {rank} of {len(results)} for {fitfile} (seed {seed}), from {start_file}\n"
            f"# changed: {summary}\n# score {r.score:.3g} ({'meets every aim' if r.meets else 'misses an aim'})\n"
        )
        path = out / f"{stem}-fit-{rank}.toml"
        body = rewrite(text, changes, header, name=path.stem)
        data = loads(body)
        parse_design(data, source=str(path), name=path.stem)  # the written file must be a valid design
        write_text(path, body, overwrite=True)
        written.append(path)
        records.append({"file": str(path), "score": r.score, "meets": r.meets, "changed_parts": r.changed, "figures": {k: v for k, v in r.figures.items() if k != "passive"}, "changes": {fr.name: v for fr, v, _ in changes}})
    emit_json(str(out / "fit.json"), {"fit_file": str(fitfile), "start": str(start_file), "seed": seed, "aims": [a.describe() for a in spec.aims], "results": records}, overwrite=True)
    # printed table: aim, start, each result
    head = f"{'aim':34s} {'start':>10s} " + " ".join(f"{'#' + str(i):>10s}" for i in range(1, len(results) + 1))
    click.echo(head)
    for a in spec.aims:
        click.echo(f"{a.describe():34s} {_fig(start_fig[a.figure], a.figure):>10s} " + " ".join(f"{_fig(r.figures[a.figure], a.figure):>10s}" for r in results))
    for j, (fr, s) in enumerate(zip(spec.free, start_vals)):
        click.echo(f"{fr.name:34s} {format_value(fr, s) if not np.isnan(s) else '—':>10s} " + " ".join(f"{format_value(fr, r.values[j]):>10s}" for r in results))
    designs = [start] + [apply_rig(load_design(p), rig) for p in written]
    f = np.geomspace(20, 20000, 500)
    h = responses(from_designs(designs)).velocity()(f)
    from ..report.plots import response_plot

    response_plot(out / "fit-responses.png", f, [("start: " + start.name, h[0])] + [(f"fit {i}", h[i]) for i in range(1, len(designs))], title=f"render fit: {Path(fitfile).name}", overwrite=True)
    click.echo(f"wrote {len(written)} designs, fit.json and fit-responses.png to {out}/")
    if render_clips:
        from .clips import clips_command

        ctx.invoke(clips_command, models=(str(start_file), *map(str, written)), rig_path=rig_path, out_dir=str(out / "clips"), overwrite=overwrite)
    if blind_session:
        from .blind import blind_command

        ctx.invoke(blind_command, model_a=str(start_file), model_b=str(written[0]), rig_path=rig_path, out=str(out / "blind"), overwrite=overwrite)
