"""``render hum``: hum cancellation with the design's own coils, sources in space, tolerances and random places."""

from __future__ import annotations

import click

from .compare_print import compare_option
from .hum_options import map_options, read_bearings, read_shell, read_tolerances
from .hum_print import print_audio, print_map, print_monte_carlo, print_positions, print_report
from .options import emit_json, friendly, jobs_option, json_option, overwrite_option, rig_option, warn
from .values import InFile, OutFile, OutFolder, Seed


@click.command("hum")
@click.argument("models", nargs=-1, required=True, type=InFile())
@rig_option
@click.option("--tolerance", default=None, help="Monte Carlo over part tolerances: one value for every part class, e.g. 1%.")
@click.option("--tolerance-resistor", default=None, help="Resistor tolerance (default 1%).")
@click.option("--tolerance-capacitor", default=None, help="Capacitor tolerance (default 5%).")
@click.option("--tolerance-turns", default=None, help="Coil turns tolerance (default 2%; L ∝ N², R, sensitivity and turns_area ∝ N).")
@click.option("--trials", type=click.IntRange(min=10, max=1_000_000), default=2000, show_default=True, help="Monte Carlo trials.")
@click.option("--seed", type=Seed(), default=0, show_default=True, help="Seed of the Monte Carlo draws.")
@jobs_option("Monte Carlo in this many processes (results identical to one).")
@json_option("Write per-harmonic figures (and the Monte Carlo) as JSON to FILE ('-' for standard output).")
@click.option("--png", "png_path", type=OutFile("hum.png"), help="Plot rejection against frequency, mains harmonics marked (all MODELS overlaid).")
@click.option("--out", "out_dir", type=OutFolder(), default=None, help="Also render hum-only WAVs (the design, and each coil alone) and measure the rejection from them, into this folder.")
@click.option("--histogram", "hist_path", type=OutFile("histogram.png"), help="With a Monte Carlo: histogram of the rejection at the fundamental (or the lowest harmonic with hum).")
@map_options
@click.option("--positions", type=click.IntRange(min=10, max=1_000_000), default=None, help="Monte Carlo over N random dipole sources: places uniform in a shell, axes uniform.")
@click.option("--shell", nargs=2, default=None, metavar="INNER OUTER", help="The random sources' shell, e.g. 0.3m 2m (the default).")
@click.option("--joint", is_flag=True, help="With --positions: draw the part tolerances (options above, else their defaults) with each place.")
@compare_option
@overwrite_option
@friendly
def hum_command(
    models,
    rig_path,
    tolerance,
    tolerance_resistor,
    tolerance_capacitor,
    tolerance_turns,
    trials,
    seed,
    jobs,
    json_path,
    png_path,
    out_dir,
    hist_path,
    map_on,
    map_plane,
    map_bearings,
    map_png,
    positions,
    shell,
    joint,
    overwrite,
    compare_path=None,
):
    """Hum cancellation of each MODEL with its own coils, per mains harmonic.

    The rejection at a frequency is 20·log10(max(|V_A|,|V_B|)/|V_A+V_B|), V_A
    the hum at the amp input from coil_a's hum EMF alone. Any tolerance
    option runs a Monte Carlo (median and 5th percentile per harmonic, and
    the parts the rejection is most sensitive to). With [[hum.source]]
    tables in the rig, each coil sees its own flux from each source.
    """
    from ..design import load_designs
    from ..errors import InputError
    from ..io.folders import refuse_existing
    from ..runs.hum import hum_run
    from .compare_print import echo, hum_lines, load_compare, scale_lines

    refuse_existing([json_path, png_path, hist_path, map_png], overwrite=overwrite)
    bearings = read_bearings(map_bearings)
    map_on = map_on or bool(map_png) or map_plane is not None or bearings is not None
    if (shell or joint) and not positions:
        raise InputError(f"{'--shell' if shell else '--joint'} needs random sources: add --positions N (e.g. --positions 2000)")
    shell_m = read_shell(shell)
    tol = read_tolerances(tolerance, resistor=tolerance_resistor, capacitor=tolerance_capacitor, turns=tolerance_turns)
    if hist_path and not tol:
        raise InputError("--histogram needs a Monte Carlo: add --tolerance (e.g. --tolerance 1%)")
    designs, rig = load_designs(models, rig=rig_path)
    room = {"rejection_map": map_on, "plane": map_plane or "xy", "bearings_deg": bearings, "positions": positions, "shell": shell_m, "joint": joint}
    files = {"out": out_dir, "png": png_path, "histogram": hist_path, "map_png": map_png, "overwrite": overwrite}
    run = hum_run(designs, rig=rig, tolerances=tol, trials=trials, seed=seed, jobs=jobs, **room, compare=load_compare(compare_path, rig_path), **files)
    for i, r in enumerate(run.designs):
        for w in r.record.get("warnings", []):
            warn(w)
        if i:
            click.echo()
        print_report(r.design, r.report)
        echo(scale_lines(r.scales))
        if r.audio is not None:
            print_audio(r.audio, r.report.harmonics)
        if r.tolerances is not None:
            print_monte_carlo(r.tolerances)
        if r.rejection_map is not None:
            print_map(r.rejection_map)
        if r.positions is not None:
            print_positions(r.record["joint" if joint else "positions"])
    if run.compare is not None:
        click.echo()
        echo(hum_lines(run.compare))
    emit_json(json_path, run.record, overwrite=overwrite)
