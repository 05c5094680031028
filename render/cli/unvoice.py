"""``render unvoice DI MODEL --out FILE.wav``: the string velocity behind a passive-pickup recording."""

from __future__ import annotations

import click

from .options import friendly, overwrite_option, warn
from .values import InFile, OutFile


@click.command("unvoice")
@click.argument("di", type=InFile())
@click.argument("model", type=InFile())
@click.option(
    "--rig",
    "rig_path",
    type=InFile(),
    default=None,
    help="Rig the DI was recorded through (cable, recorder input as amp_r and amp_c, passive_pot, passive_tone_cap); replaces MODEL's own [rig].",
)
@click.option("--volts-full-scale", type=float, default=1.0, show_default=True, help="Volts at the amp input that a DI sample of 1.0 stands for (the recorder's full scale).")
@click.option("--velocity-scale", type=float, default=1.0, show_default=True, help="m/s at full scale of the velocity WAV written.")
@click.option("--max-boost", type=float, default=None, help="Most the inverse may boost above its 1 kHz level, dB (default 20).")
@click.option("--out", "out", required=True, type=OutFile("velocity.wav"), help="Velocity WAV to write; FILE.json and FILE-spectra.png go beside it.")
@click.option("--plot/--no-plot", default=True, show_default=True, help="Write FILE-spectra.png.")
@overwrite_option
@friendly
def unvoice_command(di, model, rig_path, volts_full_scale, velocity_scale, max_boost, out, plot, overwrite):
    """Estimate the string velocity behind DI, a recording of MODEL's passive reference.

    The velocity (one signal for both sensing points) then drives any design:
    `render clips --dry FILE.wav`, or `render blind A B --dry FILE.wav`.
    """
    from ..runs.unvoice import unvoice

    res = unvoice(di, model, out=out, rig=rig_path, volts_full_scale=volts_full_scale, velocity_scale=velocity_scale, max_boost_db=max_boost, overwrite=overwrite, plot=plot)
    for w in res.warnings:
        warn(w)
    r = res.record
    band = r["trusted_band_hz"]
    reg = r["regularisation"]
    click.echo(
        f"wrote {res.wav} ({r['di']['seconds']:.2f} s at {r['di']['sample_rate']} Hz, peak {r['velocity']['peak_m_per_s']:.3g} m/s; full scale {r['velocity']['velocity_scale']:g} m/s) and {res.json}"
        + (f", {res.png}" if res.png else "")
    )
    click.echo(f"  trusted band     {band[0]:.0f} Hz to {band[1]:.0f} Hz" if band else "  trusted band     none (see the warning)")
    click.echo(
        f"  inverse          at most {reg['max_boost_db']:g} dB above its 1 kHz level; gain limit {reg['gain_limit_db']:.2f} dB re 1 m/s per V (reached {reg['max_inverse_gain_db']:.2f} dB at {reg['max_inverse_gain_hz']:.0f} Hz)"
    )
    me = r["model_error"]["coil_inductance"]["true_plus_10_percent"]
    click.echo(f"  model            coils' true inductance 10 % above the model's: the estimate is off by up to {me['max_error_db']:+.2f} dB (at {me['at_hz']:.0f} Hz); more in {res.json.name}")
