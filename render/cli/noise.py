"""``render noise``: the noise floor at the amp input, with the passive reference beside it."""

from __future__ import annotations

import click

from ..io.folders import refuse_existing as check_new
from .compare_print import compare_option
from .options import emit_json, friendly, json_option, overwrite_option, rig_option, warn
from .values import Finite, InFile, OutFile


def _uv(v: float) -> str:
    import math

    from ..units import microvolts

    return f"{microvolts(v, digits=3).strip()} rms ({20 * math.log10(v):+.1f} dBV)"


def _snr(floor) -> str:
    """'67.3 dB (A: 69.5 dB)', or the short reason where there is no signal (the line below says why)."""
    from ..analysis.undefined import SHORT

    if floor.snr_db is None:
        return SHORT.get(str(floor.silent_reason), "none")
    return f"{floor.snr_db:.1f} dB (A: {floor.snr_a_db:.1f} dB)"


def _signal(floor) -> str:
    from ..analysis.undefined import SHORT
    from ..units import format_si

    return SHORT.get(str(floor.silent_reason), "none") if floor.silent_reason else f"{format_si(floor.signal_v, 'V')} rms"


def summary_lines(r, top: int) -> list[str]:
    """The printed table for one :class:`~render.analysis.noise.NoiseReport`."""
    from ..units import format_si

    a, p = r.active, r.passive
    w = 28
    rows = [
        ("density at 1 kHz", format_si(a.density_1k_v_per_rthz, "V/√Hz"), format_si(p.density_1k_v_per_rthz, "V/√Hz")),
        ("total, 20 Hz–20 kHz", _uv(a.total_v), _uv(p.total_v)),
        ("A-weighted", _uv(a.a_weighted_v), _uv(p.a_weighted_v)),
        ("reference signal", _signal(a), _signal(p)),
        ("SNR", _snr(a), _snr(p)),
    ]
    out = [
        f"{r.design}  ({r.source})",
        f"  noise at the amp input, {r.temperature_k:g} K; op-amp {format_si(r.noise_voltage, 'V/√Hz')}, {format_si(r.noise_current, 'A/√Hz')}",
        f"  reference signal: 1 kHz sine, string velocity {r.reference_velocity:g} m/s rms at both sensing points",
        f"  {'':20s}{'active':{w}s}passive reference",
    ]
    out += [f"  {name:20s}{x:{w}s}{y}" for name, x, y in rows]
    out += [f"  {why}" for why in dict.fromkeys(floor.silent_reason for floor in (a, p) if floor.silent_reason)]  # one line per reason
    out.append("  largest contributors (share of the noise power, 20 Hz–20 kHz)")
    ca, cp = a.contributors[:top], p.contributors[:top]
    for i in range(max(len(ca), len(cp))):
        x = f"{ca[i].key} {100 * ca[i].share:.1f} %" if i < len(ca) else ""
        y = f"{cp[i].key} {100 * cp[i].share:.1f} %" if i < len(cp) else ""
        out.append(f"  {i + 1:>4d}{'':16s}{x:{w}s}{y}")
    return out


@click.command("noise")
@click.argument("model", type=InFile())
@rig_option
@click.option(
    "--temperature",
    type=Finite(200, 400, unit="K", usual="kelvin, not °C: 25 °C is 298.15 K"),
    metavar="KELVIN",
    default=300.0,
    show_default=True,
    help="Temperature of every resistance, in kelvin (200..400).",
)
@click.option(
    "--reference-velocity",
    type=Finite(1e-4, 10, unit="m/s rms"),  # render.analysis.noise.REFERENCE_VELOCITY_RANGE (tests/noise/test_noise_cli.py holds them equal)
    metavar="M_PER_S",
    default=0.1,
    show_default=True,
    help="String velocity (m/s rms) of the 1 kHz reference sine the SNR is relative to.",
)
@click.option("--top", type=click.IntRange(min=1, max=40), default=5, show_default=True, help="Contributors listed and plotted.")
@json_option()
@click.option("--png", "png_path", type=OutFile("noise.png"), help="Write a density plot with the largest contributors and the passive reference.")
@compare_option
@overwrite_option
@friendly
def noise_command(model, rig_path, temperature, reference_velocity, top, json_path, png_path, compare_path, overwrite):
    """Noise floor of MODEL at the amp input, with the passive reference beside it.

    Thermal noise of every resistance (the coils' DC resistance and core
    loss included) and the op-amp's voltage and current noise
    ([supply] noise_voltage, noise_current), 20 Hz–20 kHz: the density at
    1 kHz, unweighted and A-weighted totals, the SNR against a 1 kHz sine
    of --reference-velocity m/s rms string velocity, and the largest
    contributors.
    """

    from ..analysis.noise import check_temperature
    from ..design import load_designs
    from ..runs.noise import noise_run
    from .compare_print import echo, load_compare, noise_lines, scale_lines

    check_temperature(temperature, "--temperature")
    check_new([json_path, png_path], overwrite=overwrite)
    (d,), rig = load_designs([model], rig=rig_path)
    run = noise_run(d, rig=rig, temperature_k=temperature, reference_velocity=reference_velocity, compare=load_compare(compare_path, rig_path), png=png_path, top=top, overwrite=overwrite)
    for line in summary_lines(run.report, top):
        click.echo(line)
    for w in run.report.warnings():
        warn(w)
    echo(scale_lines(run.scales))
    if run.compare is not None:
        click.echo()
        echo(noise_lines(run.compare))
    emit_json(json_path, run.record, overwrite=overwrite)
