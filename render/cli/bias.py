"""``render bias``: hear and measure clipping as the bias divider is unbalanced."""

from __future__ import annotations

from pathlib import Path

import click

from .options import check_new, emit_json, friendly, json_option, load_designs, make_folder, overwrite_option, prepare_out, rig_option

REALISTIC_STRENGTH_M = 5e-3  # a pluck beyond 5 mm is far past normal playing (common practice, no source)
REALISTIC_VELOCITY = 20.0  # m/s peak string velocity (common practice, no source)


def _floats(text, name, *, kind=None):
    from ..errors import InputError
    from ..units import QuantityError, parse_quantity

    out = []
    for part in str(text).split(","):
        part = part.strip()
        try:
            out.append(parse_quantity(part, kind) if kind is not None else float(part))
        except (ValueError, QuantityError):
            raise InputError(f"{name}={text!r}: cannot read {part!r}; give a comma-separated list like 0.3,0.5,0.7") from None
    return out


def _phrase_at_strength(dry_path, design, settings, strength):
    """The dry phrase with every note plucked at ``strength`` (m), synthesised at the design's sensing points."""
    from dataclasses import replace

    from ..dry.modal import string_velocity
    from ..dry.phrase import load_phrase

    p = load_phrase(dry_path)
    p = replace(p, notes=tuple(replace(n, strength=strength) for n in p.notes))
    a, b = design.coil_a, design.coil_b
    return string_velocity(p, sample_rate=settings.sample_rate, positions=(a.position, b.position), apertures=(a.aperture, b.aperture), seed=settings.seed, seconds=settings.seconds)


def _measure(args):
    from ..analysis.bias import onset, sine_distortion
    from ..analysis.recovery import burst_figures

    s, ref_v = args
    d = s.design
    burst = burst_figures(d, velocity_peak=ref_v)
    return {"setting": s.label, "ratio": s.ratio, "bias_top_ohm": s.top, "bias_bottom_ohm": s.bottom, "battery_v": s.battery,
            "bias_v": d.bias_v, "headroom_up_v": d.headroom_up_v, "headroom_down_v": d.headroom_down_v,
            "onset": onset(d), "sine": sine_distortion(d, velocity_peak=ref_v),
            "recovery_offset_v": burst["recovery_offset_v"], "recovery_tau_s": burst["recovery_tau_s"], "burst": burst}


def _clip(args):
    from ..chain.stream import render_signal
    from ..clips import dry_for

    design, dry, st, strength_m = args
    vel = _phrase_at_strength(dry, design, st, strength_m) if strength_m is not None else dry_for(design, dry, st).velocity
    return render_signal(design, vel, sample_rate=st.sample_rate, hum=True)["out"]


@click.command("bias")
@click.argument("model", type=click.Path(dir_okay=False))
@rig_option
@click.option("--ratios", default="0.3,0.4,0.5,0.6,0.7", show_default=True, help="Divider ratios bottom/(top+bottom) to sweep.")
@click.option("--top", "tops", default=None, help="Explicit bias_top values, comma-separated (with --bottom, instead of --ratios).")
@click.option("--bottom", "bottoms", default=None, help="Explicit bias_bottom values, comma-separated.")
@click.option("--keep-load/--keep-sum", default=True, show_default=True, help="Keep the divider's parallel resistance (the input loading) or its total resistance while the ratio moves.")
@click.option("--battery", "batteries", default=None, help="Battery voltages to sweep, e.g. 9,8,7 (default: the design's).")
@click.option("--dry", "dry_path", type=click.Path(dir_okay=False), default=None, help="Phrase for the clips (default: dry_signals/default.toml).")
@click.option("--strength", default=None, help="Pluck every note of the phrase this hard (initial displacement, e.g. 2mm).")
@click.option("--sine-velocity", type=float, default=None, help="Peak string velocity (m/s) of the 1 kHz test sine (default: 1.4 × the design's first clip onset, i.e. +3 dB past it).")
@click.option("--seconds", type=click.FloatRange(min=0.5, max=600), default=None, help="Length of the clips (default: the phrase's).")
@click.option("--seed", type=int, default=0, show_default=True)
@click.option("--target-lufs", type=click.FloatRange(min=-70, max=0), default=-23.0, show_default=True, help="Loudness of the matched copies (EBU R 128: -23 LUFS).")
@click.option("--out", "out_dir", type=click.Path(file_okay=False), default=None, help="Folder for clips and plots (default: a new outputs/bias-<time> folder).")
@click.option("--no-clips", is_flag=True, help="Measure only; write no audio.")
@click.option("--jobs", type=click.IntRange(min=1, max=64), default=1, show_default=True, help="Settings in this many processes (results identical to one).")
@json_option()
@overwrite_option
@friendly
def bias_command(model, rig_path, ratios, tops, bottoms, keep_load, batteries, dry_path, strength, sine_velocity, seconds, seed, target_lufs, out_dir, no_clips, jobs, json_path, overwrite):
    """Clipping of MODEL as its bias divider is unbalanced (and its battery runs down).

    For each setting: the bias voltage, the headroom up and down, the string
    velocity and EMF at which the output first enters the soft limit on
    each side, THD, H2 and H3 of a 1 kHz sine, the op-amp output's offset
    after a 60 ms burst of that sine and its recovery time constant, and a
    clip of the phrase with a loudness-matched copy, so the comparison is by
    ear and not by level.
    """
    import numpy as np

    from ..analysis.audio import integrated_loudness
    from ..analysis.bias import onset, sweep
    from ..parallel import pmap
    from ..chain.limit import design_window, soft_limit
    from ..clips import DEFAULT_DRY, Settings, choose_full_scale
    from ..errors import InputError
    from ..units import LENGTH

    check_new([json_path], overwrite)
    if (tops is None) != (bottoms is None):
        raise InputError("--top and --bottom go together: give both lists, of the same length")
    ratio_list = tops_list = bottoms_list = None
    if tops is not None:
        from ..units import RESISTANCE

        tops_list, bottoms_list = _floats(tops, "--top", kind=RESISTANCE), _floats(bottoms, "--bottom", kind=RESISTANCE)
        if len(tops_list) != len(bottoms_list) or any(x < 1 or x > 1e9 for x in tops_list + bottoms_list):
            raise InputError(f"--top={tops!r}, --bottom={bottoms!r}: need lists of equal length of resistances from 1 Ω to 1 GΩ")
    else:
        ratio_list = _floats(ratios, "--ratios")
        if any(not 0.02 <= r <= 0.98 for r in ratio_list):
            raise InputError(f"--ratios={ratios!r}: each ratio bottom/(top+bottom) must be from 0.02 to 0.98")
    battery_list = _floats(batteries, "--battery") if batteries else None
    if battery_list and any(not 1.5 <= v <= 60 for v in battery_list):
        raise InputError(f"--battery={batteries!r}: each battery voltage must be from 1.5 V to 60 V")
    strength_m = None
    if strength is not None:
        strength_m = _floats(strength, "--strength", kind=LENGTH)[0]
        if not 0 < strength_m <= 0.05:
            raise InputError(f"--strength={strength!r}: must be above 0 and at most 50 mm")
        if strength_m > REALISTIC_STRENGTH_M:
            click.echo(f"warning: --strength={strength} is far beyond realistic playing; rendering it anyway", err=True)
    out = dry = None
    if not no_clips:  # refuse before any work, so a refused run touches nothing
        out = prepare_out(out_dir, overwrite, prefix="bias")
        dry = Path(dry_path) if dry_path else DEFAULT_DRY
        if not dry.exists():
            raise InputError(f"--dry={dry}: no such file")
        if strength_m is not None and dry.suffix.lower() != ".toml":
            raise InputError(f"--strength goes with a phrase file, not {dry}; scale a recording with render clips --velocity-scale")
    (design,), _ = load_designs([model], rig_path)
    settings_list = sweep(design, ratios=ratio_list, tops=tops_list, bottoms=bottoms_list, batteries=battery_list, keep_load=keep_load)
    for s in settings_list:
        w = s.design.supply
        if w.battery - w.margin_low - w.margin_high - 2 * w.knee <= 0:
            raise InputError(f"--battery={s.battery:g}: leaves no room between margin_low + margin_high + 2·knee and the battery; raise it")
    first = onset(design)
    ref_v = sine_velocity or 1.4 * min(first["velocity_up_m_per_s"], first["velocity_down_m_per_s"])
    if ref_v > REALISTIC_VELOCITY:
        click.echo(f"warning: a {ref_v:.3g} m/s sine is far beyond realistic playing; measuring it anyway", err=True)
    rows = pmap(_measure, [(s, ref_v) for s in settings_list], jobs)
    click.echo(f"{design.name}  ({design.source}); divider {'parallel resistance kept' if keep_load else 'total resistance kept'}; test sine 1 kHz, {ref_v:.3g} m/s peak")
    click.echo(f"  {'setting':22s} {'bias':>7s} {'headroom up/down':>17s} {'onset velocity up/down (m/s)':>29s} {'THD':>8s} {'H2':>8s} {'H3':>8s} {'after a 60 ms burst':>22s}")
    for r in rows:
        o, q = r["onset"], r["sine"]
        tau = r["recovery_tau_s"]
        rec = f"{r['recovery_offset_v']:+7.3f} V, τ {tau * 1e3:5.1f} ms" if tau is not None else f"{r['recovery_offset_v']:+7.3f} V"
        click.echo(
            f"  {r['setting']:22s} {r['bias_v']:6.2f}V {r['headroom_up_v']:7.2f} / {r['headroom_down_v']:5.2f} V"
            f" {o['velocity_up_m_per_s']:13.3f} / {o['velocity_down_m_per_s']:7.3f}      {q['thd_percent']:6.2f} % {q['h2_db']:6.1f}dB {q['h3_db']:6.1f}dB {rec:>22s}"
        )
    payload = {"design": design.name, "file": design.source, "keep_load": keep_load, "sine_velocity_m_per_s": ref_v, "settings": rows}
    if not no_clips:
        make_folder(out)
        st = Settings(seconds=seconds, seed=seed, hum=True)
        renders = pmap(_clip, [(s.design, dry, st, strength_m) for s in settings_list], jobs)
        vfs = choose_full_scale([np.abs(x).max() for x in renders])
        from ..report.wav import write_float_wav

        for s, x, r in zip(settings_list, renders, rows):
            tag = f"r{s.ratio:.3f}-{s.battery:g}V".replace(".", "p")
            write_float_wav(out / f"{Path(design.source).stem}-{tag}.wav", x / vfs, st.sample_rate, overwrite=True)
            lufs = integrated_loudness(x, sample_rate=st.sample_rate)
            gain_db = None if lufs is None else target_lufs - lufs
            if gain_db is not None:
                y = x * 10 ** (gain_db / 20)
                write_float_wav(out / f"{Path(design.source).stem}-{tag}-matched.wav", y, st.sample_rate, overwrite=True)
            r["clip"] = {"file": f"{Path(design.source).stem}-{tag}.wav", "volts_full_scale": vfs, "loudness_lufs_1v_full_scale": lufs, "matched_gain_db": gain_db, "peak_v": float(np.abs(x).max())}
        payload["clips"] = {"dry": str(dry), "strength_m": strength_m, "seed": seed, "target_lufs": target_lufs, "volts_full_scale": vfs}
        _plots(out, design, settings_list, rows, soft_limit, design_window)
        click.echo(f"clips, loudness-matched copies ({target_lufs:g} LUFS) and plots in {out}/")
        click.echo("Start playback at a low volume: the matched copies are level-matched, but clipped ones still sound loud.")
    if json_path:
        emit_json(json_path, payload, overwrite=overwrite)


def _plots(out, design, settings_list, rows, soft_limit, design_window):
    import numpy as np

    from ..report.plots import lines_plot, transfer_plot

    stem = Path(design.source).stem
    batteries = sorted({r["battery_v"] for r in rows})
    series_h, series_d = [], []
    for v in batteries:
        sel = [r for r in rows if r["battery_v"] == v]
        xs = [r["ratio"] for r in sel]
        series_h += [(f"up, {v:g} V", [r["headroom_up_v"] for r in sel], False), (f"down, {v:g} V", [r["headroom_down_v"] for r in sel], True)]
        series_d += [(f"H2, {v:g} V", [r["sine"]["h2_db"] for r in sel], False), (f"H3, {v:g} V", [r["sine"]["h3_db"] for r in sel], True)]
    lines_plot(out / f"{stem}-headroom.png", xs, series_h, xlabel="divider ratio bottom/(top+bottom)", ylabel="headroom (V)", title=f"{design.name}: headroom against the divider", overwrite=True)
    lines_plot(out / f"{stem}-harmonics.png", xs, series_d, xlabel="divider ratio bottom/(top+bottom)", ylabel="level re fundamental (dB)", title=f"{design.name}: 1 kHz sine harmonics", overwrite=True)
    curves = []
    for v in batteries:
        sel = [(s, r) for s, r in zip(settings_list, rows) if r["battery_v"] == v]
        win = design_window(sel[0][0].design)
        xx = np.linspace(0, v, 800)
        curves.append((f"{v:g} V battery", xx, soft_limit(xx, window=win), [(r["bias_v"], f"{r['ratio']:.2f}") for _, r in sel]))
    transfer_plot(out / f"{stem}-transfer.png", curves, title=f"{design.name}: the soft limit, bias points marked", overwrite=True)
