"""``render response``: the small-signal response from string velocity to the amp input."""

from __future__ import annotations

import click

from ..io.folders import refuse_existing as check_new
from .compare_print import compare_option
from .options import friendly, overwrite_option, rig_option
from .values import Finite, InFile, OutFile


def _aligned(text: str) -> str:
    """The peaks' words with the label padded as before ("peak    4066 Hz, …")."""
    for word in ("peaks", "peak"):
        if text.startswith(word + " "):
            return f"{word:<8}{text[len(word) + 1 :]}"
    return " " * 8 + text


def summary_lines(d, fig) -> list[str]:
    from ..analysis.undefined import cell, figure_or_reason
    from ..units import format_si

    p = fig["passive"]
    from ..analysis.peaks import describe_peaks

    if fig["level_1k_db"] is None:  # the coils cancel the string signal: one line says so
        resonance = [f"  response          {figure_or_reason(fig, 'peak_hz', '')}"]
    else:
        resonance = [
            "  resonance " + _aligned(describe_peaks(fig, unit=" dB re 1 kHz")),
            f"  -3 dB corners     bass {figure_or_reason(fig, 'bass_corner_hz', '.3g', ' Hz')}, treble {figure_or_reason(fig, 'treble_corner_hz', '.0f', ' Hz')}"
            + (f" (the response dips under -3 dB at {fig['treble_dip_hz']:.0f} Hz and recovers)" if fig.get("treble_dip_hz") is not None else ""),
            f"  level at 1 kHz    {fig['level_1k_db']:+.2f} dB re 1 V per m/s ({figure_or_reason(fig, 'gain_vs_passive_db', '+.2f', ' dB against passive')})",
        ]
    if p["level_1k_db"] is None:
        passive = f"  passive reference {figure_or_reason(p, 'peak_hz', '')}"
    else:
        passive = f"  passive reference {describe_peaks(p, q=False)}, level at 1 kHz {p['level_1k_db']:+.2f} dB"
    return [
        f"{d.name}  ({d.source})",
        *resonance,
        f"  output impedance  {format_si(fig['output_impedance_1k_ohm'], 'Ω')} at 1 kHz, {format_si(fig['output_impedance_10k_ohm'], 'Ω')} at 10 kHz"
        f"  (passive: {format_si(p['output_impedance_1k_ohm'], 'Ω')}, {format_si(p['output_impedance_10k_ohm'], 'Ω')})",
        f"  cable treble loss {cell(fig, 'cable_loss_db', '+.2f', ' dB at 5 kHz')} ({d.rig.cable_length:g} m; passive: {cell(p, 'cable_loss_db', '+.2f', ' dB')})",
        passive,
    ]


@click.command("response")
@click.argument("model", type=InFile())
@rig_option
@click.option("--csv", "csv_path", type=OutFile("response.csv", stdout=True), help="Write frequency_hz,magnitude_db,phase_deg,passive_magnitude_db,passive_phase_deg ('-' for standard output).")
@click.option("--png", "png_path", type=OutFile("response.png"), help="Write a magnitude and phase plot with the passive reference.")
@click.option("--fmin", type=Finite(1, 1e5, unit="Hz"), default=20.0, show_default=True, help="Lowest frequency (Hz).")
@click.option("--fmax", type=Finite(2, 2e5, unit="Hz"), default=20000.0, show_default=True, help="Highest frequency (Hz).")
@click.option("--points", type=click.IntRange(min=2, max=100000), default=600, show_default=True, help="Log-spaced points.")
@compare_option
@overwrite_option
@friendly
def response_command(model, rig_path, csv_path, png_path, fmin, fmax, points, compare_path, overwrite):
    """Small-signal response of MODEL from string velocity to the amp input.

    The same velocity drives both sensing points; levels are dB re 1 V per
    m/s. Prints a summary (resonance peak, Q, corners, output impedance,
    cable treble loss) and writes --csv and --png on request.
    """
    import numpy as np

    from ..analysis.figures import figures
    from ..analysis.response import response
    from ..design import load_designs
    from ..errors import InputError
    from ..report.response import response_csv_text

    if fmax <= fmin:
        raise InputError(f"--fmax={fmax:g} must be above --fmin={fmin:g}")
    check_new([csv_path, png_path], overwrite=overwrite)
    (d,), _ = load_designs([model], rig=rig_path)
    fig = figures([d])[0]
    r = response(d, np.geomspace(fmin, fmax, points))
    f, h, hp = r.frequency_hz, r.velocity, r.passive
    from .compare_print import comparison_of, echo, figure_lines, load_compare

    compared = comparison_of(load_compare(compare_path, rig_path))
    if csv_path != "-":
        for line in summary_lines(d, fig):
            click.echo(line)
        if compared is not None:
            click.echo()
            echo(figure_lines(compared, [(d.name, fig["level_1k_db"])]))
    if csv_path:
        text = response_csv_text(f, h, hp)
        if compared is not None:
            from ..report.compare import with_compare_columns

            text = with_compare_columns(text, compared.design, f)
        if csv_path == "-":
            click.echo(text, nl=False)
        else:
            from ..io.atomic import write_text

            write_text(csv_path, text, overwrite=overwrite)
    if png_path:
        from ..report.compare import compare_curves
        from ..report.plots import response_plot

        response_plot(
            png_path,
            f,
            [(d.name, h), *compare_curves(compared.design if compared else None, f)],
            passive=("passive reference", hp),
            title=f"{d.name}: string velocity to amp input",
            overwrite=overwrite,
        )
