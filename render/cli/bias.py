"""``render bias``: hear and measure clipping as the bias divider is unbalanced."""

from __future__ import annotations

import click

from ..analysis.bias import SINE_VELOCITY_RANGE
from .options import emit_json, friendly, jobs_option, json_option, overwrite_option, pluck_strength, rig_option, warn
from .values import Finite, InFile, OutFolder, Seed


def _floats(text, name, *, kind=None, like="0.3,0.5,0.7", once=True):
    from ..errors import InputError
    from ..units import QuantityError, parse_quantity

    if text is None:
        return None
    out = []
    for part in str(text).split(","):
        part = part.strip()
        try:
            out.append(parse_quantity(part, kind) if kind is not None else float(part))
        except (ValueError, QuantityError):
            raise InputError(f"{name}={text!r}: cannot read {part!r}; give a comma-separated list like {like}") from None
        if once and out[-1] in out[:-1]:  # the same setting twice: the same row solved and printed twice
            raise InputError(f"{name}={text!r}: {part!r} is given twice; give each setting once")
    return out


def print_sweep(sw) -> None:
    from ..report.bias import sweep_lines

    for line in sweep_lines(sw):
        click.echo(line)


def print_bias_phrase(sw, clips) -> None:
    """The phrase's headroom at each setting (see :func:`render.cli.headroom_print.bias_phrase_lines`)."""
    from ..analysis.headroom import from_record
    from .headroom_print import bias_phrase_lines

    played = [h for c in clips if (h := from_record(c.get("headroom", {}))) is not None]
    if len(played) == len(clips):
        for line in bias_phrase_lines([r["setting"] for r in sw.rows], played, [r.get("rests_on_limit") for r in sw.rows]):
            click.echo(line)


@click.command("bias")
@click.argument("model", type=click.Path(dir_okay=False))
@rig_option
@click.option("--ratios", default="0.3,0.4,0.5,0.6,0.7", show_default=True, help="Divider ratios bottom/(top+bottom) to sweep.")
@click.option("--top", "tops", default=None, help="Explicit bias_top values, comma-separated (with --bottom, instead of --ratios).")
@click.option("--bottom", "bottoms", default=None, help="Explicit bias_bottom values, comma-separated.")
@click.option("--keep-load/--keep-sum", default=True, show_default=True, help="Keep the divider's parallel resistance (the input loading) or its total resistance while the ratio moves.")
@click.option("--battery", "batteries", default=None, help="Battery voltages to sweep, e.g. 9,8,7 or 9V,8V (default: the design's).")
@click.option("--dry", "dry_path", type=InFile(), default=None, help="Phrase for the clips (default: dry_signals/default.toml here, else the copy shipped with render).")
@click.option("--strength", default=None, help="Pluck every note of the phrase this hard (initial displacement, e.g. 2mm).")
@click.option(
    "--sine-velocity",
    type=Finite(*SINE_VELOCITY_RANGE, unit="m/s"),
    default=None,
    help=f"Peak string velocity (m/s, {SINE_VELOCITY_RANGE[0]:g} to {SINE_VELOCITY_RANGE[1]:g}) of the 1 kHz test sine (default: 1.4 × the design's first clip onset, i.e. +3 dB past it).",
)
@click.option("--seconds", type=Finite(0.5, 600, unit="s"), default=None, help="Length of the clips (default: the phrase's).")
@click.option("--seed", type=Seed(), default=0, show_default=True, help="Seed for the phrase's small variations.")
@click.option("--target-lufs", type=Finite(-70, 0, unit="LUFS"), default=-23.0, show_default=True, help="Loudness of the matched copies (EBU R 128: -23 LUFS).")
@click.option("--out", "out_dir", type=OutFolder(), default=None, help="Folder for clips and plots (default: a new outputs/bias-<time> folder).")
@click.option("--no-clips", is_flag=True, help="Measure only; write no audio.")
@jobs_option("Settings in this many processes (results identical to one).")
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
    from ..design import load_designs
    from ..errors import InputError
    from ..io.folders import output_folder, refuse_existing
    from ..runs.bias import bias_run
    from ..units import RESISTANCE, VOLTAGE

    refuse_existing([json_path], overwrite=overwrite)
    strength_m = pluck_strength(strength)
    if no_clips and out_dir is not None:
        raise InputError(f"--out={out_dir}: --no-clips writes no folder; drop --out, or drop --no-clips to write the clips there")
    out = None if no_clips else output_folder(out_dir, overwrite=overwrite, prefix="bias")  # the default: a new outputs/bias-<time>
    (design,), _ = load_designs([model], rig=rig_path)
    kinds = {"tops": _floats(tops, "--top", kind=RESISTANCE, like="100k,220k", once=False), "bottoms": _floats(bottoms, "--bottom", kind=RESISTANCE, like="100k,220k", once=False)}
    batteries = _floats(batteries, "--battery", kind=VOLTAGE, like="9,8,7 or 9V,8V,7V")
    settings = {"keep_load": keep_load, "sine_velocity": sine_velocity, "dry": dry_path, "strength_m": strength_m, "seconds": seconds, "seed": seed, "target_lufs": target_lufs}
    run = bias_run(design, ratios=_floats(ratios, "--ratios"), **kinds, batteries=batteries, **settings, out=out, jobs=jobs, overwrite=overwrite)
    for w in run.warnings:
        warn(w)
    sw, clips = run.sweep, run.clips
    print_sweep(sw)
    if clips is not None:
        print_bias_phrase(sw, clips.clips)
        low = clips.record["matched_lowered_db"]
        level = (
            f"{target_lufs:g} LUFS"
            if low == 0
            else f"{target_lufs - low:.1f} LUFS: all lowered {low:.1f} dB from {target_lufs:g} LUFS to keep true peaks at or below {clips.record['matched_ceiling_dbtp']:g} dBTP"
        )
        click.echo(f"clips, loudness-matched copies ({level}) and plots in {run.folder}/")
        click.echo("Start playback at a low volume: the matched copies are level-matched, but clipped ones still sound loud.")
    emit_json(json_path, run.record, overwrite=overwrite)
