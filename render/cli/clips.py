"""``render clips``: one clip per candidate design, through one dry signal and one rig."""

from __future__ import annotations

import os
from pathlib import Path

import click

from ..dry.phrase import MIN_SECONDS
from .compare_print import compare_option
from .options import friendly, jobs_option, overwrite_option, rig_option, sample_rate_option, warn
from .values import Finite, InFile, OutFolder, Seed


@click.command("clips")
@click.argument("models", nargs=-1, type=click.Path(dir_okay=False))
@click.option("--dry", "dry_path", type=InFile(), default=None, help="Phrase (.toml) or recorded velocity file (default: dry_signals/default.toml here, else the copy shipped with render).")
@rig_option
@click.option("--out", "out_dir", type=OutFolder(), default=None, help="Output folder (default: a new outputs/clips-<time> folder).")
@overwrite_option
@click.option("--seconds", type=Finite(MIN_SECONDS, 3600, unit="s"), default=None, help="Length of every clip (default: the dry signal's own).")
@sample_rate_option
@click.option("--velocity-scale", type=Finite(1e-6, 1e3, lo_open=True, unit="m/s"), default=1.0, show_default=True, help="m/s at full scale of a recorded dry file.")
@click.option(
    "--from-di",
    "from_di",
    type=InFile(),
    default=None,
    help="--dry is a DI recorded through this design's passive reference: un-voice it into the run folder (render unvoice) and play the estimate.",
)
@click.option("--hum/--no-hum", default=True, show_default=True, help="Add the rig's mains hum field.")
@click.option("--passive/--no-passive", default=False, show_default=True, help="Also render each design's passive reference (S-passive.wav).")
@click.option("--noise/--no-noise", default=False, show_default=True, help="Add the circuit's noise floor (seeded).")
@click.option("--seed", type=Seed(), default=0, show_default=True, help="Seed for the phrase's small variations and the noise.")
@click.option("--strength", default=None, help="Pluck the phrase harder or softer: every pluck scaled alike so that its strongest is this (e.g. 2mm).")
@click.option(
    "--volts-full-scale",
    type=Finite(1e-3, 100, lo_open=True, unit="V"),
    default=None,
    help="Volts at WAV full scale, the same for every clip (default: the smallest of 0.1, 0.2, 0.5, 1, 2, 5 … V above the run's largest peak).",
)
@jobs_option("Render designs in this many processes (default: one per core; results identical to one).", default=None)
@click.option("--plots/--no-plots", default=True, show_default=True, help="Write the response, spectrum and spectrogram plots.")
@compare_option
@click.option(
    "--reference", default=None, metavar="NAME", help="Take the loudness-matched brightness differences against this design or --compare pickup (name or file stem; default: the first design)."
)
@friendly
def clips_command(
    models, dry_path, rig_path, out_dir, overwrite, seconds, sample_rate, velocity_scale, from_di, hum, passive, noise, seed, strength, volts_full_scale, jobs, plots, reference=None, compare_path=None
):
    """Render one clip per design (default: every models/*.toml).

    Every design plays the same dry signal into the same rig, and every WAV
    uses one fixed volts-per-full-scale, so levels compare honestly. Writes
    per design S.wav (float32), S.json, S-response.png, S-spectrum.png and
    S-spectrogram.png, and for the run summary.md and responses.png.
    """
    from ..analysis.brightness import reference_index
    from ..clip import RenderSettings
    from ..design import load_designs
    from ..dry import check_dry_file
    from ..io.folders import output_folder

    dry = check_dry_file(dry_path, seconds=seconds, recorded=not from_di, velocity_scale=velocity_scale)
    strength_m = read_strength(strength, dry)
    designs, rig = load_designs(models, rig=rig_path)
    from ..runs.clips import check_stems
    from .compare_print import load_compare

    compared = load_compare(compare_path, rig_path)
    check_stems(designs, compared)  # refused, as render_clips refuses it, before the folder is made
    reference_index(designs, reference, compare=compared)  # a wrong name is refused before the folder is made
    out = output_folder(out_dir, overwrite=overwrite)
    if from_di and dry_path is None:
        from ..errors import InputError

        raise InputError("--from-di needs --dry DI: the recording made through that design's passive reference")
    settings = RenderSettings(sample_rate=sample_rate, seconds=seconds, seed=seed, velocity_scale=velocity_scale, hum=hum, passive=passive, noise=noise, strength=strength_m)
    run = render_and_report(
        designs, dry, settings, out, rig=rig, jobs=jobs, plots=plots, volts_full_scale=volts_full_scale, reference=reference, compare=compared, overwrite=overwrite, from_di=from_di
    )
    if run.compare is not None:
        from ..runs.compare_clip import compare_stem

        rec = run.compare
        if rec["peak_v"] > run.volts_full_scale:
            warn(f"{compared.name}: peak above the {run.volts_full_scale:g} V full scale; the float WAV keeps those samples, but many players clip them")
        from ..analysis.undefined import figure_or_reason

        click.echo(
            f"comparison pickup {compared.name} (passive): {out / (compare_stem(compared) + '.wav')}, peak {rec['peak_v']:.3g} V, loudness {figure_or_reason(rec, 'loudness_lufs_1v_full_scale', '.1f', ' LUFS')} at 1 V full scale"
        )


def read_strength(text, dry) -> float | None:
    """``--strength`` in metres, checked against the dry file (a phrase only) as ``render bias`` checks it; warnings printed."""
    from ..runs.bias import check_strength
    from .options import pluck_strength

    if text is None:
        return None
    strength_m = pluck_strength(text)
    for w in check_strength(strength_m, Path(dry)):
        warn(w)
    return strength_m


def render_and_report(designs, dry, settings, out, *, rig=None, jobs=None, plots=True, volts_full_scale=None, reference=None, compare=None, overwrite=False, from_di=None):
    """Run :func:`render.runs.clips.render_clips` with a progress bar, then print its warnings and where the clips went."""
    from ..runs.clips import render_clips
    from .clips_print import progress_bar, report_clips
    from .shared_print import report_from_di

    jobs = jobs or min(len(designs), os.cpu_count() or 1)
    with progress_bar(len(designs)) as update:
        run = render_clips(
            designs,
            dry,
            settings=settings,
            out=out,
            rig=rig,
            jobs=jobs,
            plots=plots,
            volts_full_scale=volts_full_scale,
            progress=update,
            reference=reference,
            compare=compare,
            overwrite=overwrite,
            from_di=from_di,
            on_unvoiced=report_from_di,
        )
    report_clips(run)
    return run
