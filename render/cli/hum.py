"""``render hum``: hum cancellation with the design's own coils, sources in space, tolerances and random places."""

from __future__ import annotations

import contextlib

import click

from .compare_print import compare_option
from .hum_options import map_options, read_bearings, read_shell, read_tolerances
from .hum_print import print_audio, print_monte_carlo, print_report, room, warnings
from .options import emit_json, friendly, jobs_option, json_option, overwrite_option, rig_option
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
    from ..analysis.hum import hum, monte_carlo
    from ..design import design_provenance, load_designs
    from ..errors import InputError
    from ..io.folders import output_folder, refuse_existing, run_folder

    refuse_existing([json_path, png_path, hist_path, map_png], overwrite=overwrite)
    bearings = read_bearings(map_bearings)
    map_on = map_on or bool(map_png) or map_plane is not None or bearings is not None
    map_plane = map_plane or "xy"
    if (shell or joint) and not positions:
        raise InputError(f"{'--shell' if shell else '--joint'} needs random sources: add --positions N (e.g. --positions 2000)")
    shell_m = read_shell(shell)
    tol = read_tolerances(tolerance, resistor=tolerance_resistor, capacitor=tolerance_capacitor, turns=tolerance_turns)
    if hist_path and not tol:
        raise InputError("--histogram needs a Monte Carlo: add --tolerance (e.g. --tolerance 1%)")
    designs, _ = load_designs(models, rig=rig_path)
    from ..analysis.hum_room import check_room

    for d in designs:  # a map's or a shell's dipole within 10 cm of a coil: refused before any work
        check_room(d, map_on=map_on, plane=map_plane, bearings_deg=bearings, positions=bool(positions), shell=shell_m)
    from ..analysis.one_scale import design_one_scale
    from .compare_print import comparison_of, echo, hum_lines, load_compare, scale_lines

    compared = comparison_of(load_compare(compare_path, rig_path))
    folder = output_folder(out_dir, overwrite=overwrite) if out_dir else None
    with run_folder(folder) if folder is not None else contextlib.nullcontext(None) as out:
        records = []
        for i, d in enumerate(designs):
            r = hum(d)
            rec = {"file": d.source, "design": d.name, **design_provenance(d), **r.as_dict()}
            warnings(rec, d, dipoles=bool(map_on or positions))
            if i:
                click.echo()
            print_report(d, r)
            scales = [*design_one_scale(d), *([compared.scale] if compared else [])]
            rec["hum_and_noise"] = [s.as_dict() for s in scales]
            echo(scale_lines(scales))
            if out is not None:
                from ..runs.hum import write_hum_audio

                audio = write_hum_audio(out, d)
                rec["measured"] = audio.as_dict()
                print_audio(audio, r.harmonics)
            if tol:
                mc = monte_carlo(d, tolerances=tol, trials=trials, seed=seed, jobs=jobs)
                rec["monte_carlo"] = mc.as_dict()
                print_monte_carlo(mc)
                if hist_path and i == 0:
                    from ..runs.hum import write_histogram

                    write_histogram(hist_path, mc, name=d.name, overwrite=overwrite)
            room(
                rec,
                d,
                map_on=map_on,
                map_plane=map_plane,
                bearings=bearings,
                map_png=map_png if i == 0 else None,
                positions=positions,
                shell=shell_m,
                joint=joint,
                tolerances=tol,
                seed=seed,
                jobs=jobs,
                overwrite=overwrite,
            )
            records.append(rec)
        if compared is not None:
            click.echo()
            echo(hum_lines(compared))
    payload = records[0] if len(records) == 1 else {"designs": records}
    if compared is not None:
        payload = {**payload, "compare": compared.as_dict()}
    emit_json(json_path, payload, overwrite=overwrite)
    if png_path:
        from ..report.plots import hum_rejection_plot

        hum_rejection_plot(png_path, designs, overwrite=overwrite)
