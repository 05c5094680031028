"""``render sense``: what a design's construction senses, per coil and per string."""

from __future__ import annotations

import click

from ..io.folders import refuse_existing as check_new
from .options import emit_json, friendly, json_option, overwrite_option, warn
from .values import InFile, OutFile

PUSHED = (-60, -30, 30, 60)  # the offsets printed, 0.1 mm: 6 and 3 mm towards the bass side (−), 3 and 6 towards the treble side (+)
LEGEND = "(vertical, sideways: mV·s/m; pushed: dB re rest, - bass side, + treble side; H2, H3: 0.5 mm vertical sine)"


def _milli(v: float) -> str:
    """V·s/m as mV·s/m to four significant figures, signed (0.03799 -> "+37.99", 2.547e-7 -> "+0.0002547")."""
    return f"{v * 1e3:+#.4g}"


def print_record(rec: dict) -> None:
    from ..analysis.undefined import reason

    click.echo(f"{rec['design']}  ({rec['file']})")
    for name, rows in rec["coils"].items():
        click.echo(f"  {name}   string    vertical    sideways  balance   pushed -6 mm   -3 mm   +3 mm   +6 mm    H2 dB   H3 dB   {LEGEND}")
        for r in rows:
            head = f"           {r['string']:>6d}  "
            if r["sensitivity_v_s_per_m"] is None:
                click.echo(head + reason(r, "sensitivity_v_s_per_m"))
                continue
            head += f"{_milli(r['sensitivity_v_s_per_m']):>10s}  {_milli(r['sensitivity_lateral_v_s_per_m']):>10s}  "
            if r["balance_db"] is None:
                click.echo(head + reason(r, "balance_db"))
                continue
            lat = dict(zip((round(x * 1e4) for x in r["lateral_offset_m"]), r["lateral_db"]))
            pushed = "".join(f"{lat.get(at, float('nan')):+8.2f}" for at in PUSHED)
            click.echo(f"{head}{r['balance_db']:+6.1f} dB     {pushed}   {r['h2_db']:6.1f}  {r['h3_db']:6.1f}")


@click.command("sense")
@click.argument("model", type=InFile())
@json_option("Write, per coil and per string, sensitivity, sensing function, lateral dropout and H2/H3 as JSON to FILE ('-' for standard output).")
@click.option("--png", "png_path", type=OutFile("sense.png"), help="Write a plot: string balance, sensing functions, lateral dropout, H2/H3.")
@overwrite_option
@friendly
def sense_command(model, json_path, png_path, overwrite):
    """What MODEL's [construction] senses, per coil and per string.

    Prints each string's sensitivity (EMF per m/s of vertical motion, at the
    coil's input) and sideways (towards the treble side), its balance against the loudest string, the output with
    the string pushed 3 and 6 mm towards the bass side (-, where a bend pushes strings 1–3) and
    the treble side (+, where a bend pulls strings 4–6), and the
    2nd and 3rd harmonics of the EMF for a 0.5 mm vertical vibration. The
    field solve takes seconds the first time and is cached.
    """
    from ..analysis.sense import sense_record
    from ..design import load_design

    check_new([json_path, png_path], overwrite=overwrite)
    design = load_design(model)
    rec = sense_record(design)
    for note in rec["warnings"]:
        warn(f"{design.name}: {note}")
    print_record(rec)
    if png_path:
        from ..report.plots import sense_plot

        sense_plot(png_path, rec, overwrite=overwrite)
    if json_path:
        emit_json(json_path, rec, overwrite=overwrite)
