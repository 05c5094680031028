"""``render netlist``: a design and its rig as a SPICE netlist (ngspice runs it as written)."""

from __future__ import annotations

import click

from .options import friendly, overwrite_option, rig_option
from .values import InFile, OutFile


@click.command("netlist")
@click.argument("model", type=InFile())
@rig_option
@click.option("--out", "out_path", type=OutFile("pickup.cir", stdout=True), default=None, help="Write the netlist to FILE (default: standard output).")
@overwrite_option
@friendly
def netlist_command(model, rig_path, out_path, overwrite):
    """Write MODEL (with its rig, or --rig) as a SPICE netlist.

    The coils' EMF sources are driven by the string velocity (node vel,
    1 V = 1 m/s) and the hum field's derivative (node dbdt, 1 V = 1 T/s;
    with the rig's [[hum.source]] tables, nodes hum1, hum2, ... instead);
    the node names, the op-amp model and commented .ac, .noise and .tran
    examples are documented in the file.
    """
    from ..circuit.netlist import netlist
    from ..design import load_designs
    from ..io.folders import refuse_existing, refuse_inputs

    refuse_inputs([("--out", out_path)], [("MODEL", model), ("--rig", rig_path)])
    refuse_existing([out_path], overwrite=overwrite)
    (design,), _ = load_designs([model], rig=rig_path)
    text = netlist(design, rig_source=rig_path)
    from ..magnetics.pickup import area_mismatch_warnings, point_coil_warnings
    from .options import warn

    for w in point_coil_warnings(design) + area_mismatch_warnings(design):  # the same lines render hum prints
        warn(w)
    if out_path and out_path != "-":
        from ..io.atomic import write_text

        write_text(out_path, text, overwrite=overwrite)
        click.echo(f"netlist written to {out_path}")
    else:
        click.echo(text, nl=False)
