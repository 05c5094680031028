"""``render coil fit MEASUREMENT.csv``: the coil model, ladder included, fitted to a measured |Z| and phase."""

from __future__ import annotations

import os

import click

from ..io.folders import refuse_existing as check_new
from ..io.folders import refuse_inputs
from .options import emit_json, friendly, json_option, overwrite_option
from .shared_print import ladder_words
from .values import InFile, OutFile


def _eng(x: float, unit: str, digits: int = 4) -> str:
    from ..units import format_si

    return format_si(x, unit, digits)


def print_fit(result) -> None:
    m, fit = result.measurement, result.fit
    lad = fit.ladder
    click.echo(f"{m.source}  ({m.frequency_hz.size} points, {_eng(m.frequency_hz[0], 'Hz')} to {_eng(m.frequency_hz[-1], 'Hz')})")
    r_note = " (given, not fitted)" if fit.resistance_given else (" (not determined by this sweep: see the warning)" if fit.resistance_doubt() else "")
    l_note = " (not determined by this sweep: see the warning)" if fit.inductance_doubt() else ""
    click.echo(f"  R_dc            {_eng(fit.resistance, 'Ω')}{r_note}")
    click.echo(f"  inductance      {_eng(fit.inductance, 'H')} at DC: {ladder_words(lad.series_inductance, len(lad.inductances), _eng)}{l_note}")
    for k, (lk, rk) in enumerate(zip(lad.inductances, lad.resistances)):
        click.echo(f"    section {k + 1}     {_eng(lk, 'H')} ∥ {_eng(rk, 'Ω')}  (corner {_eng(rk / lk / (2 * 3.141592653589793), 'Hz', 3)})")
    from ..runs.coil import band_text, capacitance_floor

    floor = capacitance_floor()
    if fit.capacitance_given:
        shown = f"{_eng(fit.capacitance, 'F')} (given, not fitted)"
    elif fit.capacitance < floor:
        shown = f"none seen (fitted {_eng(fit.capacitance, 'F', 3)}, below {_eng(floor, 'F')})"
    elif fit.capacitance_doubt() is not None:
        shown = f"{_eng(fit.capacitance, 'F')} (not determined by this sweep: see the warning)"
    else:
        shown = _eng(fit.capacitance, "F")
    click.echo(f"  capacitance     {shown}")
    srf = result.self_resonance_hz
    click.echo(f"  self-resonance  {result.self_resonance_words() or (_eng(srf, 'Hz', 3) if srf else 'none below 10 MHz')}")
    if not result.residual_bands():
        click.echo("  residual: not computed: the sweep has no points in 20 Hz–20 kHz")
        return
    click.echo("  residual (model − measurement)   max dB  rms dB   max °   rms °")
    for b in result.residual_bands():
        span = band_text(b)
        click.echo(f"    {span:<20} {b['points']:>4} pts {b['max_db']:7.2f} {b['rms_db']:7.3f} {b['max_deg']:7.2f} {b['rms_deg']:7.2f}")


@click.command("fit")
@click.argument("measurement", type=InFile())
@click.option("--out", "out_path", type=OutFile("coil.toml"), help="Write the coil's table for a design file (TOML) to FILE.")
@click.option("--capacitance", "capacitance", metavar="C", help='Hold the winding capacitance at C (e.g. "95p") instead of fitting it: for a sweep that stops well below the self-resonance.')
@click.option("--resistance", "resistance", metavar="R", help="Hold R_dc at R (e.g. \"4.1k\", an ohmmeter's reading) instead of fitting it: for a sweep that starts above the coil's R/(2πL) corner.")
@click.option("--coil", type=click.Choice(["coil_a", "coil_b"]), default="coil_a", show_default=True, help="The table's name in the written TOML.")
@json_option("Write the fitted values, the ladder and the residual at every frequency as JSON to FILE ('-' for standard output).")
@overwrite_option
@friendly
def fit_command(measurement, out_path, capacitance, resistance, coil, json_path, overwrite):
    """Fit the coil model to MEASUREMENT (CSV of frequency, |Z| and phase).

    The model is R_dc in series with the inductance and its core loss as an
    RL ladder (L0 plus R∥L sections), the winding capacitance across both.
    Prints the values and the residual in dB and degrees over the sweep's
    part of 20 Hz–20 kHz and per decade, and warns when the sweep stops too
    far below the self-resonance to determine C, or starts too far above the
    R/(2πL) corner to determine R_dc and L; --out writes [coil_x] with resistance, capacitance and
    [coil_x.ladder], to paste into a design file.
    """
    from ..runs.coil import coil_table, fit_coil, fit_warnings, read_capacitance, read_resistance

    held = read_capacitance(capacitance) if capacitance is not None else None
    held_r = read_resistance(resistance) if resistance is not None else None
    refuse_inputs([("--out", out_path), ("--json", json_path)], [("MEASUREMENT", measurement)])
    check_new([out_path, json_path], overwrite=overwrite)
    result = fit_coil(measurement, capacitance=held, resistance=held_r)
    print_fit(result)
    for w in fit_warnings(result):
        click.echo(f"warning: {w}", err=True)
    # refused here when the fit would not load in a design; its measured = "…" hint is relative to the file written, as a design there reads it
    table = coil_table(result, coil=coil, measured_as=os.path.relpath(measurement, os.path.dirname(os.path.abspath(out_path)))) if out_path else None
    if json_path:
        emit_json(json_path, result.record(), overwrite=overwrite)
    if out_path and table is not None:
        from ..io.atomic import write_text

        write_text(out_path, table, overwrite=overwrite)
        click.echo(f"coil table written to {out_path}")
