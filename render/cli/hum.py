"""``render hum``: hum cancellation with the design's own coils, and tolerances."""

from __future__ import annotations

import click

from ..design import load_designs
from ..io.folders import make_folder, output_folder
from ..io.folders import refuse_existing as check_new
from .options import emit_json, friendly, json_option, overwrite_option, rig_option


def _percent(text, name):
    from ..errors import InputError

    if text is None:
        return None
    t = str(text).strip().rstrip("%")
    try:
        v = float(t) / 100.0
    except ValueError:
        raise InputError(f"{name}={text!r}: expected a percentage such as 1% or 0.5") from None
    if not 0 <= v <= 0.5:
        raise InputError(f"{name}={text!r}: a tolerance must be from 0 % to 50 %")
    return v


def write_hum_audio(out, d, table, *, seconds=4.0, sample_rate=48000):
    """Hum-only WAVs of the design and of each coil alone, one full scale; the rejection measured from them."""
    from pathlib import Path

    import numpy as np

    from ..analysis.hum import measured_rejection
    from ..runs.clips import choose_full_scale
    from ..io.wav import write_float_wav

    m = measured_rejection(d, seconds=seconds, settle=1.0, sample_rate=sample_rate)
    vfs = choose_full_scale([np.abs(m[k]).max() for k in ("both", "coil_a", "coil_b")], floor=1e-6)
    stem = Path(d.source).stem
    files = {}
    for k, suffix in (("both", "hum"), ("coil_a", "hum-coil_a"), ("coil_b", "hum-coil_b")):
        path = Path(out) / f"{stem}-{suffix}.wav"
        write_float_wav(path, m[k] / vfs, sample_rate, overwrite=True)
        files[k] = str(path)
    exact = [r["rejection_db"] for r in table["harmonics"]]
    click.echo(f"  measured from a {seconds:g} s hum-only render (last {seconds - 1:g} s):")
    for i, (f, r) in enumerate(zip(m["frequency_hz"], m["rejection_db"])):
        if i < 5:
            click.echo(f"    H{i + 1} {f:5.0f} Hz: {r:6.1f} dB (exact {exact[i]:.1f} dB)")
    click.echo(f"  hum-only WAVs at {vfs:g} V full scale: {files['both']}, and each coil alone beside it")
    return {
        "seconds": seconds,
        "volts_full_scale": vfs,
        "files": files,
        "harmonics": [{"frequency_hz": float(f), "rejection_db": float(r), "output_v": float(v)} for f, r, v in zip(m["frequency_hz"], m["rejection_db"], m["output_v"])],
    }


def print_table(d, t):
    click.echo(f"{d.name}  ({d.source})  mains {t['mains_hz']:g} Hz, field {t['field_t'] * 1e6:g} µT peak")
    click.echo("  harmonic  frequency   rejection   hum at amp input   coil_a alone   coil_b alone")
    for r in t["harmonics"]:
        rej = "—" if r["rejection_db"] is None else f"{r['rejection_db']:6.1f} dB"
        click.echo(
            f"  {r['harmonic']:>8d}  {r['frequency_hz']:7.0f} Hz  {rej:>9s}   {r['output_v'] * 1e6:12.3f} µV   {r['coil_a_v'] * 1e6:9.2f} µV   {r['coil_b_v'] * 1e6:9.2f} µV"
        )
    ref = t["reference_signal"]
    click.echo(
        f"  total hum {t['total_v_rms'] * 1e6:.3f} µV rms; signal to hum {t['signal_to_hum_db']:.1f} dB"
        f" (reference: {ref['velocity_m_per_s_peak']:g} m/s peak at {ref['frequency_hz']:g} Hz);"
        f" passive reference {t['passive']['total_v_rms'] * 1e6:.3f} µV rms, {t['passive']['signal_to_hum_db']:.1f} dB"
    )


@click.command("hum")
@click.argument("models", nargs=-1, required=True, type=click.Path(dir_okay=False))
@rig_option
@click.option("--tolerance", default=None, help="Monte Carlo over part tolerances: one value for every part class, e.g. 1%.")
@click.option("--tolerance-resistor", default=None, help="Resistor tolerance (default 1%).")
@click.option("--tolerance-capacitor", default=None, help="Capacitor tolerance (default 5%).")
@click.option("--tolerance-turns", default=None, help="Coil turns tolerance (default 2%; L ∝ N², R, sensitivity and turns_area ∝ N).")
@click.option("--trials", type=click.IntRange(min=10, max=1_000_000), default=2000, show_default=True, help="Monte Carlo trials.")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the Monte Carlo draws.")
@click.option("--jobs", type=click.IntRange(min=1, max=64), default=1, show_default=True, help="Monte Carlo in this many processes (results identical to one).")
@json_option("Write per-harmonic figures (and the Monte Carlo) as JSON to FILE ('-' for standard output).")
@click.option("--png", "png_path", type=click.Path(dir_okay=False), help="Plot rejection against frequency, mains harmonics marked (all MODELS overlaid).")
@click.option("--out", "out_dir", type=click.Path(file_okay=False), default=None, help="Also render hum-only WAVs (the design, and each coil alone) and measure the rejection from them, into this folder.")
@click.option("--histogram", "hist_path", type=click.Path(dir_okay=False), help="With a Monte Carlo: histogram of the rejection at the fundamental.")
@overwrite_option
@friendly
def hum_command(models, rig_path, tolerance, tolerance_resistor, tolerance_capacitor, tolerance_turns, trials, seed, jobs, json_path, png_path, out_dir, hist_path, overwrite):
    """Hum cancellation of each MODEL with its own coils, per mains harmonic.

    The rejection at a frequency is 20·log10(max(|V_A|,|V_B|)/|V_A+V_B|), V_A
    the hum at the amp input from coil_a's hum EMF alone. Any tolerance
    option runs a Monte Carlo (median and 5th percentile per harmonic, and
    the parts the rejection is most sensitive to).
    """
    import numpy as np

    from ..analysis.hum import hum_table, monte_carlo, rejection_curve
    from ..errors import InputError

    check_new([json_path, png_path, hist_path], overwrite=overwrite)
    tol = {}
    if tolerance is not None:
        v = _percent(tolerance, "--tolerance")
        tol = {"resistor": v, "capacitor": v, "turns": v}
    for cls, text in (("resistor", tolerance_resistor), ("capacitor", tolerance_capacitor), ("turns", tolerance_turns)):
        if text is not None:
            tol[cls] = _percent(text, f"--tolerance-{cls}")
    if hist_path and not tol:
        raise InputError("--histogram needs a Monte Carlo: add --tolerance (e.g. --tolerance 1%)")
    designs, _ = load_designs(models, rig=rig_path)
    out = None
    if out_dir:
        out = output_folder(out_dir, overwrite=overwrite)
        make_folder(out)
    records = []
    for i, d in enumerate(designs):
        t = hum_table(d)
        rec = {"file": d.source, "design": d.name, **t}
        if json_path != "-":
            if i:
                click.echo()
            print_table(d, t)
        if out is not None:
            rec["measured"] = write_hum_audio(out, d, t)
        if tol:
            mc = monte_carlo(d, tolerances=tol, trials=trials, seed=seed, jobs=jobs)
            rec["monte_carlo"] = {
                "trials": trials,
                "seed": seed,
                "tolerances": mc.tolerances,
                "distribution": "uniform within ± the tolerance",
                "harmonics": mc.summary(),
                "sensitivity_db_per_percent": [{"part": k, "db": v} for k, v in mc.sensitivity],
            }
            if json_path != "-":
                pct = ", ".join(f"{k} {v * 100:g} %" for k, v in mc.tolerances.items())
                click.echo(f"  Monte Carlo: {trials} trials (seed {seed}; {pct})")
                for r in mc.summary()[:3]:
                    click.echo(f"    H{r['harmonic']} {r['frequency_hz']:5.0f} Hz: median {r['median_db']:.1f} dB, 5th percentile {r['p5_db']:.1f} dB")
                top = ", ".join(f"{k} {v:+.1f} dB" for k, v in mc.sensitivity[:4])
                click.echo(f"    most sensitive (+1 % alone, at the fundamental): {top}")
            if hist_path and i == 0:
                from ..report.plots import histogram_plot

                histogram_plot(hist_path, mc.rejection_db[:, 0], xlabel=f"hum rejection at {mc.frequency_hz[0]:g} Hz (dB)", title=f"{d.name}: {trials} trials", overwrite=overwrite)
        records.append(rec)
    if json_path:
        emit_json(json_path, records[0] if len(records) == 1 else {"designs": records}, overwrite=overwrite)
    if png_path:
        from ..report.plots import rejection_plot

        f = np.geomspace(20, 20000, 600)
        curves = rejection_curve(designs, f)
        marks = sorted({h * d.hum.mains for d in designs for h in range(1, len(d.hum.harmonics) + 1)})
        rejection_plot(png_path, f, [(d.name, c) for d, c in zip(designs, curves)], marks=marks, overwrite=overwrite)
