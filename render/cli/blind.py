"""``render blind MODEL_A MODEL_B``: build a blind listening session (ABX or paired preference).

Both designs play the same dry signal (synthesised at each design's own
sensing points, or one recording) into the same rig; the two renders are
matched in integrated loudness (ITU-R BS.1770-4) to ``--target-lufs`` under
a ``--true-peak-dbtp`` ceiling, and the session folder is written whole or
not at all. Serve it with ``render listen SESSION``; score it with
``render score SESSION``.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
from pathlib import Path

import click

from .options import friendly, overwrite_option, rig_option

MAX_SECONDS = 120.0  # per clip: longer clips make ABX slow and sessions large (common practice, no source)
DRY_SEED = 0  # the phrase's small per-note variations: the same for both designs


def _file_record(path) -> dict:
    raw = Path(path).read_bytes()
    return {"path": str(path), "sha256": hashlib.sha256(raw).hexdigest()}


def _text_record(path) -> dict:
    raw = Path(path).read_bytes()
    return {"path": str(path), "sha256": hashlib.sha256(raw).hexdigest(), "toml": raw.decode("utf-8")}


@click.command("blind")
@click.argument("model_a", type=click.Path(dir_okay=False))
@click.argument("model_b", type=click.Path(dir_okay=False))
@click.option("--dry", "dry_path", type=click.Path(dir_okay=False), default=None, help="What is played: a phrase (.toml) or a recording (default dry_signals/default.toml).")
@rig_option
@click.option("--trials", default=16, show_default=True, type=int, help="Number of trials.")
@click.option("--method", default="abx", show_default=True, type=click.Choice(["abx", "preference"]), help="abx: is X the same as A or B; preference: A, B or no preference.")
@click.option("--seed", default=None, type=int, help="Seed of the trial draws (default: a fresh random one, kept in the key). Anyone who knows the seed can redraw the key: leave it unset for a real session.")
@click.option("--out", "out", type=click.Path(file_okay=False), default=None, help="Session folder to create (default: outputs/blind-<time>).")
@click.option("--target-lufs", default=-23.0, show_default=True, type=float, help="Integrated loudness both clips are matched to (EBU R 128: -23).")
@click.option("--true-peak-dbtp", default=-1.0, show_default=True, type=float, help="True-peak ceiling; both clips are lowered together if either would pass it.")
@click.option("--seconds", default=None, help='Clip length ("8s", 4.5; default: the dry signal\'s own, at most 120 s).')
@click.option("--sample-rate", default=48000, show_default=True, type=int, help="Sample rate in Hz.")
@click.option("--hum/--no-hum", default=True, show_default=True, help="Render the room's hum with the signal.")
@click.option("--from-di", "from_di", type=click.Path(dir_okay=False), default=None, help="--dry is a DI recorded through this design's passive reference: un-voice it (render unvoice) and play the estimate.")
@overwrite_option
@friendly
def blind_command(model_a, model_b, dry_path, rig_path, trials, method, seed, out, target_lufs, true_peak_dbtp, seconds, sample_rate, hum, from_di, overwrite):
    """Build a blind listening session comparing MODEL_A and MODEL_B.

    Writes SESSION/public (the clips under random names and the trial plan),
    SESSION/private/key.json (which clip is which: never served) and prints
    the next step, `render listen SESSION`.
    """
    import math
    import secrets

    from ..dry import default_dry_path
    from ..errors import InputError
    from ..listening.build import MAX_TRIALS, build_session, check_out
    from ..units import TIME, QuantityError, parse_quantity

    if not 1 <= trials <= MAX_TRIALS:
        raise InputError(f"--trials={trials}: must be from 1 to {MAX_TRIALS}; 16 is usual")
    if not (math.isfinite(target_lufs) and -60.0 <= target_lufs <= -5.0):
        raise InputError(f"--target-lufs={target_lufs:g}: must be from -60 to -5 LUFS; -23 is EBU R 128")
    if not (math.isfinite(true_peak_dbtp) and -30.0 <= true_peak_dbtp <= 0.0):
        raise InputError(f"--true-peak-dbtp={true_peak_dbtp:g}: must be from -30 to 0 dBTP; -1 is usual")
    if not 8000 <= sample_rate <= 192000:
        raise InputError(f"--sample-rate={sample_rate}: must be from 8000 to 192000 Hz; 48000 is usual")
    if seed is not None and not 0 <= seed < 2**63:
        raise InputError(f"--seed={seed}: must be from 0 to 2**63-1")
    length = None
    if seconds is not None:
        try:
            length = parse_quantity(seconds, TIME)
        except QuantityError as exc:
            raise InputError(f"--seconds={seconds}: {exc}") from None
        if not 0.5 <= length <= MAX_SECONDS:
            raise InputError(f"--seconds={seconds}: must be from 0.5 s to {MAX_SECONDS:g} s")
    if out is None:
        stamp = _dt.datetime.now().strftime("%Y%m%d-%H%M%S")
        Path("outputs").mkdir(exist_ok=True)
        out = Path("outputs") / f"blind-{stamp}"
    out = Path(out)
    check_out(out, overwrite=overwrite)
    dry_file = Path(dry_path) if dry_path else default_dry_path()
    if not dry_file.is_file():
        raise InputError(f"--dry={dry_file}: no such file; pass a phrase (.toml) or a recording")
    from_di_record = None
    if from_di:
        import tempfile

        from ..runs.unvoice import velocity_from_di
        from .unvoice import report_from_di

        scratch = tempfile.TemporaryDirectory(prefix="render-unvoice-")  # removed when the command ends
        made = velocity_from_di(dry_path, from_di, folder=scratch.name, rig=rig_path, plot=False)
        report_from_di(made)
        dry_file, from_di_record = made.wav, made.record

    from ..design import load_designs

    designs, rig = load_designs([model_a, model_b], rig=rig_path)
    from ..chain.stream import render_signal
    from ..dry import load_dry
    from ..listening.loudness import match_loudness

    names = [d.name for d in designs]
    if names[0] == names[1]:
        names = [f"{names[0]} (MODEL_A)", f"{names[1]} (MODEL_B)"]
    outs, clipped = [], []
    dry_info = None
    for d, name in zip(designs, names):
        dry = load_dry(
            dry_file,
            sample_rate=sample_rate,
            positions=(d.coil_a.position, d.coil_b.position),
            apertures=(d.coil_a.aperture, d.coil_b.aperture),
            seed=DRY_SEED,
            seconds=length,
        )
        if dry_info is None:
            for w in dry.warnings:
                click.echo(f"note: {w}", err=True)
            dry_info = dry.description
        n = dry.velocity.shape[1]
        if n > MAX_SECONDS * sample_rate:
            raise InputError(f"--dry={dry_file}: plays {n / sample_rate:.1f} s; a session clip is at most {MAX_SECONDS:g} s, pass --seconds")
        result = render_signal(d, dry.velocity, sample_rate=sample_rate, hum=hum)
        for w in result.get("warnings", ()):
            click.echo(f"note: {name}: {w}", err=True)
        outs.append(result["out"])
        clipped.append(float(result.get("clipped_fraction", 0.0)))
    signals, match = match_loudness(outs, sample_rate=sample_rate, target_lufs=target_lufs, ceiling_dbtp=true_peak_dbtp, names=names)
    if seed is None:
        seed = secrets.randbits(63)
    design_records = [{"name": name, **_text_record(p)} for name, p in zip(names, (model_a, model_b))]
    record = {
        "rig": _text_record(rig_path) if rig_path else None,
        "dry": {**_file_record(dry_file), "seed": DRY_SEED, "seconds": length, "description": dry_info, "from_di": from_di_record},
        "render": {
            "function": "render.chain.stream.render_signal",
            "hum": bool(hum),
            "clipped_fraction": clipped,
            "wav_scale": "1.0 full scale = 1 V at the amp input, times the loudness gain",
        },
        "loudness": match.record(),
    }
    paths = build_session(out, signals, sample_rate=sample_rate, method=method, trials=trials, seed=seed, designs=design_records, record=record, overwrite=overwrite)

    seconds_out = min(s.shape[-1] for s in signals) / sample_rate
    click.echo(f"wrote {paths.root}: {method}, {trials} trials, clips of {seconds_out:.2f} s at {sample_rate} Hz")
    for name, m, tp, g in zip(names, match.measured_lufs, match.true_peak_dbtp, match.gains_db):
        click.echo(f"  {name:<24} {m:6.1f} LUFS, true peak {tp:+6.1f} dBTP before matching; gain {g:+.1f} dB")
    if match.lowered_db > 0:
        click.echo(
            f"  both lowered {match.lowered_db:.1f} dB below {target_lufs:g} LUFS to keep the true peak under {true_peak_dbtp:g} dBTP; they play at {target_lufs - match.lowered_db:.1f} LUFS"
        )
    else:
        click.echo(f"  both play at {target_lufs:g} LUFS, true peak at most {max(match.final_true_peak_dbtp):+.1f} dBTP")
    if max(clipped) > 0:
        click.echo("  note: at least one design clips in this render; a clipped clip stays loud and harsh even when matched")
    if method == "abx":
        from ..listening.score import fewest_trials_for

        if trials < fewest_trials_for():
            click.echo(f"  note: with {trials} trials even a perfect ABX score cannot reach p < 0.05; use at least {fewest_trials_for()}")
    click.echo(f"next: render listen {paths.root}   (start with the volume low: a clipped clip stays loud even when matched)")
