"""``render blind MODEL_A MODEL_B``: build a blind listening session (ABX or paired preference).

The work is :func:`render.runs.blind.build_blind_session`; this module reads
the options and prints. Serve the session with ``render listen SESSION``;
score it with ``render score SESSION``.
"""

from __future__ import annotations

import click

from .options import friendly, overwrite_option, pluck_strength, rig_option, sample_rate_option
from .shared_print import print_blind_session
from .values import Finite, InFile, OutFolder


@click.command("blind")
@click.argument("model_a", type=InFile())
@click.argument("model_b", type=InFile())
@click.option("--dry", "dry_path", type=InFile(), default=None, help="What is played: a phrase (.toml) or a recording (default dry_signals/default.toml).")
@rig_option
@click.option("--trials", default=16, show_default=True, type=int, help="Number of trials.")
@click.option("--method", default="abx", show_default=True, type=click.Choice(["abx", "preference"]), help="abx: is X the same as A or B; preference: A, B or no preference.")
@click.option(
    "--seed", default=None, type=int, help="Seed of the trial draws (default: a fresh random one, kept in the key). Anyone who knows the seed can redraw the key: leave it unset for a real session."
)
@click.option("--out", "out", type=OutFolder(), default=None, help="Session folder to create (default: outputs/blind-<time>).")
@click.option("--target-lufs", default=-23.0, show_default=True, type=float, help="Integrated loudness both clips are matched to (EBU R 128: -23).")
@click.option(
    "--true-peak-dbtp",
    default=-1.0,
    show_default=True,
    type=float,
    help="True-peak ceiling; both clips are lowered together if either would pass it (held 0.7 dB under it as measured: what 4x over-sampling can miss).",
)
@click.option("--seconds", default=None, help='Clip length ("8s", 4.5; default: the dry signal\'s own, at most 120 s).')
@sample_rate_option
@click.option("--hum/--no-hum", default=True, show_default=True, help="Render the room's hum with the signal.")
@click.option("--strength", default=None, help="Pluck the phrase harder or softer: every pluck scaled alike so that its strongest is this (e.g. 2mm).")
@click.option("--velocity-scale", type=Finite(1e-6, 1e3, lo_open=True, unit="m/s"), default=1.0, show_default=True, help="m/s at full scale of a recorded dry file.")
@click.option("--from-di", "from_di", type=InFile(), default=None, help="--dry is a DI recorded through this design's passive reference: un-voice it (render unvoice) and play the estimate.")
@overwrite_option
@friendly
def blind_command(model_a, model_b, dry_path, rig_path, trials, method, seed, out, target_lufs, true_peak_dbtp, seconds, sample_rate, hum, strength, velocity_scale, from_di, overwrite):
    """Build a blind listening session comparing MODEL_A and MODEL_B.

    Writes SESSION/public (the clips under random names and the trial plan),
    SESSION/private/key.json (which clip is which: never served) and prints
    the next step, `render listen SESSION`.
    """
    import contextlib
    import tempfile

    from ..design import load_designs
    from ..runs.blind import BlindSettings, build_blind_session, session_dry_file, session_folder

    settings = BlindSettings(
        trials=trials,
        method=method,
        seed=seed,
        target_lufs=target_lufs,
        true_peak_dbtp=true_peak_dbtp,
        seconds=seconds,
        sample_rate=sample_rate,
        hum=hum,
        velocity_scale=velocity_scale,
        strength=pluck_strength(strength),
    )
    out = session_folder(out, overwrite=overwrite)
    dry = session_dry_file(dry_path, velocity_scale=velocity_scale, strength=settings.strength)
    designs, rig = load_designs([model_a, model_b], rig=rig_path)
    with contextlib.ExitStack() as scratch:
        made = None
        if from_di:
            from ..runs.unvoice import velocity_from_di
            from .shared_print import report_from_di

            folder = scratch.enter_context(tempfile.TemporaryDirectory(prefix="render-unvoice-"))  # the velocity lives only while the session is built
            made = velocity_from_di(dry_path, from_di, folder=folder, rig=rig_path, plot=False)
            report_from_di(made)
        session = build_blind_session(designs, made.wav if made else dry, out=out, rig=rig, settings=settings, from_di=made.record if made else None, overwrite=overwrite)
    print_blind_session(session)
