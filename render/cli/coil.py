"""``render coil MODEL``: each coil's impedance from whatever the design gives; ``render coil fit``: a measurement fitted."""

from __future__ import annotations

import click

from ..io.folders import refuse_existing as check_new
from .options import emit_json, friendly, json_option, overwrite_option
from .values import InFile, OutFile

SUBCOMMANDS = {"show": ("render.cli.coil", "show_command"), "fit": ("render.cli.coil_fit", "fit_command")}


class CoilGroup(click.Group):
    """``render coil MODEL`` runs ``show``; ``render coil fit FILE`` fits a measurement."""

    def parse_args(self, ctx, args):
        if not args or (args[0] not in SUBCOMMANDS and args[0] not in ("-h", "--help")):
            args = ["show", *args]
        return super().parse_args(ctx, args)

    def list_commands(self, ctx):
        return list(SUBCOMMANDS)

    def get_command(self, ctx, name):
        if name not in SUBCOMMANDS:
            return None
        import importlib

        module, attr = SUBCOMMANDS[name]
        return getattr(importlib.import_module(module), attr)


@click.group("coil", cls=CoilGroup)
def coil_command():
    """Each coil's impedance (render coil MODEL), or a measured coil fitted (render coil fit FILE).

    render coil MODEL is render coil show MODEL.
    """


def _eng(x: float, unit: str) -> str:
    from ..units import format_si

    return format_si(x, unit, 4)


def print_record(rec: dict) -> None:
    from ..runs.coil import SHOWN_HZ, at, extrapolated_note, ladder_fit_words, lumped_loss_words, shown_marks

    click.echo(f"{rec['design']}  ({rec['file']})")
    for name, c in rec["coils"].items():
        src = c["from"]
        how = {"typed": "typed values", "winding": "estimated from [winding]", "ladder": "typed ladder"}.get(c["source"], c["source"])
        if c["source"] == "measured":
            held = ", C as given" if src.get("capacitance_given") else ""
            how = f"measured: {src['file']} (SHA-256 {src['sha256'][:12]}…), fit residual max {src['max_residual_db']:.2f} dB, {src['max_residual_deg']:.1f}°{held}"
        elif c["source"] == "derived":
            parts = [p for p in src["parts"] if p["rise_h"] > 1e-3 * src["air_inductance_h"]]
            small = [p for p in src["parts"] if p not in parts]  # each under 0.1 % of the air core: summed, so the line adds up
            rest = f"{len(small)} others" if len(small) > 1 else (small[0]["name"] if small else "")
            shown = [f"{p['name']} +{_eng(p['rise_h'], 'H')}" for p in parts] + ([f"{rest} +{_eng(sum(p['rise_h'] for p in small), 'H')}"] if small else [])
            core = ", ".join(shown) or "no steel"
            how = f"derived: air core {_eng(src['air_inductance_h'], 'H')}, {core}; {ladder_fit_words(src)}"
        click.echo(f"  {name}  {how}")
        lad = c["ladder"]
        from .shared_print import ladder_words

        loss = f"ladder {ladder_words(lad['series_inductance_h'], len(lad['inductances_h']), _eng)}" if lad else lumped_loss_words(c)
        srf = c["self_resonance_hz"]
        unsure = " (not determined by the sweep)" if (src or {}).get("capacitance_doubt") else ""
        if c["source"] == "derived":  # render.impedance.capacitance: the published estimate, above a 2-D field solve
            unsure = " (the layers' estimate, about 30 % above a field solve of orderly layers)"
        click.echo(
            f"          R {_eng(c['resistance_ohm'], 'Ω')}, L {_eng(c['inductance_h'], 'H')} at DC ({loss}), C {_eng(c['capacitance_f'], 'F')}{unsure},"
            f" self-resonance {_eng(srf, 'Hz') if srf else (src or {}).get('self_resonance_doubt') or 'none below 10 MHz'}"
        )
        vals, marks = [at(c, f) for f in SHOWN_HZ], shown_marks(c)
        click.echo("          Hz     " + "".join(f"{_hz(f):>8}" for f in SHOWN_HZ))
        click.echo("          |Z| Ω  " + "".join(f"{_short(m) + k:>8}" for (m, _), k in zip(vals, marks)))
        click.echo("          phase° " + "".join(f"{f'{p:.1f}' + k:>8}" for (_, p), k in zip(vals, marks)))
        if note := extrapolated_note(c):
            click.echo(f"          {note}")


def _coils_of(path):
    """The design at ``path``, or a passive pickup's (its coils' impedances are as typed; only polarities differ in its carrier)."""
    from ..design import load_design
    from ..errors import PassiveGiven

    try:
        return load_design(path)
    except PassiveGiven:
        from ..design.passive import carrier, load_passive

        return carrier(load_passive(path))


def _hz(f: float) -> str:
    return f"{f / 1e3:g}k" if f >= 1e3 else f"{f:g}"


def _short(x: float) -> str:
    """|Z| in a table cell: 3 figures and the SI prefix, no space ("185", "1.01k", "4.11M")."""
    from ..units import format_si

    return format_si(x, "", 3).replace(" ", "")


@click.command("show")
@click.argument("model", type=InFile())
@click.option("--csv", "csv_path", type=OutFile("coils.csv"), help="Write frequency and each coil's |Z| and phase, 20 Hz–20 kHz, as CSV.")
@click.option("--png", "png_path", type=OutFile("coils.png"), help="Plot each coil's |Z| and phase with its self-resonance.")
@json_option("Write each coil's impedance, self-resonance and where it came from as JSON to FILE ('-' for standard output).")
@overwrite_option
@friendly
def show_command(model, csv_path, png_path, json_path, overwrite):
    """Each coil's impedance at its terminals, 20 Hz–20 kHz, and its self-resonance.

    From whatever MODEL gives: typed values, the winding and core (wire and
    [coil_x.geometry], with [construction]'s steel), a typed [coil_x.ladder],
    or a measurement (measured = "file.csv"). Winding capacitance included,
    nothing connected. MODEL may be a passive comparison pickup's file.
    """
    from ..runs.coil import coil_csv_text, coil_record

    check_new([csv_path, png_path, json_path], overwrite=overwrite)
    design = _coils_of(model)
    rec = coil_record(design)
    print_record(rec)
    from ..plausible import measured_warnings

    for w in measured_warnings(design):
        click.echo(f"warning: {w}", err=True)
    if csv_path:
        from ..io.atomic import write_text

        write_text(csv_path, coil_csv_text(rec), overwrite=overwrite)
    if png_path:
        from ..report.coil import coil_plot

        coil_plot(png_path, rec, overwrite=overwrite)
    if json_path:
        emit_json(json_path, rec, overwrite=overwrite)
