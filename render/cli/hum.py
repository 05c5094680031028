"""``render hum``: hum cancellation with the design's own coils, and tolerances."""

from __future__ import annotations

import contextlib

import click

from .options import emit_json, friendly, jobs_option, json_option, overwrite_option, rig_option


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


def print_report(d, r):
    from ..analysis.undefined import cell, spread

    click.echo(f"{d.name}  ({d.source})  mains {r.mains_hz:g} Hz, field {r.field_t * 1e6:g} µT peak")
    click.echo("  harmonic  frequency   rejection   hum at amp input   coil_a alone   coil_b alone")
    for h in r.harmonics:
        rej = cell({"rejection_db": h.rejection_db, "rejection_db_reason": h.rejection_db_reason}, "rejection_db", "6.1f", " dB")
        click.echo(f"  {h.harmonic:>8d}  {h.frequency_hz:7.0f} Hz  {rej:>9s}   {h.output_v * 1e6:12.3f} µV   {h.coil_a_v * 1e6:9.2f} µV   {h.coil_b_v * 1e6:9.2f} µV")
    ref = r.reference_signal
    click.echo(
        f"  total hum {r.total_v_rms * 1e6:.3f} µV rms; signal to hum {spread(r.signal_to_hum_db, str(r.signal_to_hum_reason), '.1f', ' dB')}"
        f" (reference: {ref['velocity_m_per_s_peak']:g} m/s peak at {ref['frequency_hz']:g} Hz);"
        f" passive reference {r.passive_total_v_rms * 1e6:.3f} µV rms, {spread(r.passive_signal_to_hum_db, str(r.passive_signal_to_hum_reason), '.1f', ' dB')}"
    )


def print_audio(a, exact):
    from ..analysis.undefined import spread

    click.echo(f"  measured from a {a.seconds:g} s hum-only render (last {a.seconds - 1:g} s):")
    for i, (row, h) in enumerate(zip(a.harmonics[:5], exact)):
        measured = spread(row["rejection_db"], str(row.get("rejection_db_reason")), "6.1f", " dB")
        same = row["rejection_db"] is None and row.get("rejection_db_reason") == h.rejection_db_reason
        exact_text = "as is the exact figure" if same else f"exact {spread(h.rejection_db, str(h.rejection_db_reason), '.1f', ' dB')}"
        click.echo(f"    H{i + 1} {row['frequency_hz']:5.0f} Hz: {measured} ({exact_text})")
    click.echo(f"  hum-only WAVs at {a.volts_full_scale:g} V full scale: {a.files['both']}, and each coil alone beside it")


def print_monte_carlo(mc):
    from ..analysis.undefined import shown

    pct = ", ".join(f"{k} {v * 100:g} %" for k, v in mc.tolerances.items())
    click.echo(f"  Monte Carlo: {mc.trials} trials (seed {mc.seed}; {pct})")
    for r in mc.summary()[:3]:
        click.echo(f"    H{r['harmonic']} {r['frequency_hz']:5.0f} Hz: median {shown(r, 'median_db', '.1f', ' dB')}, 5th percentile {shown(r, 'p5_db', '.1f', ' dB')}")
    top = mc.sensitivity[:4]
    if top and all(isinstance(v, str) and "with +1 %" in v for _, v in top):  # the design itself cancels exactly
        from ..analysis.undefined import NOMINAL_CANCELS

        after = ", ".join(f"{k} {v.rsplit(' it is ', 1)[-1]}" for k, v in top)
        click.echo(f"    most sensitive (+1 % alone, at the fundamental): {NOMINAL_CANCELS}; the rejection with +1 % alone: {after}")
    else:
        click.echo(f"    most sensitive (+1 % alone, at the fundamental): {', '.join(f'{k} {v:+.1f} dB' if isinstance(v, float) else f'{k} ({v})' for k, v in top)}")


@click.command("hum")
@click.argument("models", nargs=-1, required=True, type=click.Path(dir_okay=False))
@rig_option
@click.option("--tolerance", default=None, help="Monte Carlo over part tolerances: one value for every part class, e.g. 1%.")
@click.option("--tolerance-resistor", default=None, help="Resistor tolerance (default 1%).")
@click.option("--tolerance-capacitor", default=None, help="Capacitor tolerance (default 5%).")
@click.option("--tolerance-turns", default=None, help="Coil turns tolerance (default 2%; L ∝ N², R, sensitivity and turns_area ∝ N).")
@click.option("--trials", type=click.IntRange(min=10, max=1_000_000), default=2000, show_default=True, help="Monte Carlo trials.")
@click.option("--seed", type=int, default=0, show_default=True, help="Seed of the Monte Carlo draws.")
@jobs_option("Monte Carlo in this many processes (results identical to one).")
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
    from ..analysis.hum import hum, monte_carlo
    from ..design import load_designs
    from ..errors import InputError
    from ..io.folders import output_folder, refuse_existing, run_folder

    refuse_existing([json_path, png_path, hist_path], overwrite=overwrite)
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
    folder = output_folder(out_dir, overwrite=overwrite) if out_dir else None
    with run_folder(folder) if folder is not None else contextlib.nullcontext(None) as out:
        show = json_path != "-"
        records = []
        for i, d in enumerate(designs):
            r = hum(d)
            rec = {"file": d.source, "design": d.name, **r.as_dict()}
            if show:
                if i:
                    click.echo()
                print_report(d, r)
            if out is not None:
                from ..runs.hum import write_hum_audio

                audio = write_hum_audio(out, d)
                rec["measured"] = audio.as_dict()
                if show:
                    print_audio(audio, r.harmonics)
            if tol:
                mc = monte_carlo(d, tolerances=tol, trials=trials, seed=seed, jobs=jobs)
                rec["monte_carlo"] = mc.as_dict()
                if show:
                    print_monte_carlo(mc)
                if hist_path and i == 0:
                    from ..report.plots import histogram_plot

                    histogram_plot(hist_path, mc.rejection_db[:, 0], xlabel=f"hum rejection at {mc.frequency_hz[0]:g} Hz (dB)", title=f"{d.name}: {trials} trials", overwrite=overwrite)
            records.append(rec)
    emit_json(json_path, records[0] if len(records) == 1 else {"designs": records}, overwrite=overwrite)
    if png_path:
        from ..report.plots import hum_rejection_plot

        hum_rejection_plot(png_path, designs, overwrite=overwrite)
