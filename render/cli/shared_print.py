"""Printers more than one command uses (a command module never imports another: each imports these)."""

from __future__ import annotations

import click

from .options import warn


def ladder_words(series_h: float, sections: int, eng) -> str:
    """ "L0 1.36 H + 2 R∥L sections", "L0 1.36 H + 1 R∥L section", or "L0 39.96 mH alone, no R∥L sections"."""
    if sections == 0:
        return f"L0 {eng(series_h, 'H')} alone, no R∥L sections"
    return f"L0 {eng(series_h, 'H')} + {sections} R∥L section{'s' if sections != 1 else ''}"


def report_from_di(made) -> None:
    """What ``--from-di`` did, on standard error: warnings and the trusted band."""
    for w in made.warnings:
        warn(w)
    band, r = made.trusted_band_hz, made.record
    click.echo(f"un-voiced {r['di']} through {r['model']}'s passive reference: trusted {band[0]:.0f} Hz to {band[1]:.0f} Hz" if band else f"un-voiced {r['di']}: no trusted band", err=True)


CAUTION = "(start with the volume low: a clipped clip stays loud even when matched)"


def print_blind_session(session) -> None:
    """What a built session holds, on standard output (warnings go to standard error first)."""
    from ..listening.score import fewest_trials_for

    for w in session.warnings:
        click.echo(f"note: {w}", err=True)
    match = session.loudness
    root = session.paths.root
    click.echo(f"wrote {root}: {session.method}, {session.trials} trials, clips of {session.seconds:.2f} s at {session.sample_rate} Hz")
    for name, lufs, peak, gain in zip(session.names, match.measured_lufs, match.true_peak_dbtp, match.gains_db):
        click.echo(f"  {name:<24} {lufs:6.1f} LUFS, true peak {peak:+6.1f} dBTP before matching; gain {gain:+.1f} dB")
    if match.lowered_db > 0:
        click.echo(
            f"  both lowered {match.lowered_db:.1f} dB below {match.target_lufs:g} LUFS to keep the true peak under {match.ceiling_dbtp:g} dBTP"
            f" (at most {match.aim_dbtp:g} as measured, a margin for what the meter misses between samples); they play at {match.target_lufs - match.lowered_db:.1f} LUFS"
        )
    else:
        click.echo(f"  both play at {match.target_lufs:g} LUFS, true peak at most {max(match.final_true_peak_dbtp):+.1f} dBTP")
    if session.headroom:
        from .headroom_print import headroom_lines, headroom_title

        click.echo("  " + headroom_title(list(zip(session.names, session.headroom))))
        for line in headroom_lines(list(zip(session.names, session.headroom)), indent="    "):
            click.echo(line)
    if max(session.clipped_fraction) > 0:
        click.echo("  note: at least one design clips in this render; a clipped clip stays loud and harsh even when matched")
    if session.method == "abx" and session.trials < fewest_trials_for():
        click.echo(f"  note: with {session.trials} trials even a perfect ABX score cannot reach p < 0.05; use at least {fewest_trials_for()}")
    click.echo(f"next: render listen {root}   {CAUTION}")
