"""What ``render clips`` (and ``render fit --render``) print: the progress bar, the warnings and notes, the headroom table, where the clips went."""

from __future__ import annotations

import contextlib
import sys

import click

from .options import warn

CAUTION = "Start playback at a low volume and raise it slowly: clips can be loud, and clipped ones stay loud."


@contextlib.contextmanager
def progress_bar(total: int):
    """A progress bar on standard error for ``total`` designs; its value takes the number done (None: no bar for one design)."""
    if total <= 1:
        yield None
        return
    with click.progressbar(length=total, label="rendering", file=sys.stderr, show_pos=True) as bar:
        yield bar.update


def print_record_headroom(records) -> None:
    """The headroom table of a run's records (those that carry it)."""
    from ..analysis.headroom import from_record
    from .headroom_print import print_headroom

    rows = [(r["design"], h) for r in records if (h := from_record(r["measurements"])) is not None]
    print_headroom(rows)


def report_clips(run) -> None:
    """A clips run's warnings, notes and headroom table, and where the clips went."""
    from ..report.clips import pickup_notes

    out = run.folder
    for w in run.warnings:
        warn(w)
    for note in pickup_notes(run.records):
        click.echo(f"note: {note}")
    print_record_headroom(run.records)
    if run.over_full_scale:
        warn(f"{', '.join(run.over_full_scale)} peak above the {run.volts_full_scale:g} V full scale; the float WAVs keep those samples, but many players clip them")
    n = len(run.records)
    plural = "s" if n != 1 else ""
    if run.streamed:
        from ..runs.clips import LONG_SECONDS

        how = (
            ""
            if run.full_scale_given
            else f", fixed in advance from the designs' output windows because a recording over {LONG_SECONDS:g} s is streamed "
            "(a shorter one's full scale follows its peak, so these clips may play much quieter); --volts-full-scale sets one"
        )
        click.echo(f"{n} clip{plural} of {run.seconds:.0f} s rendered block by block to {out}/ (full scale {run.volts_full_scale:g} V{how}; summary in {out / 'summary.md'})")
    else:
        click.echo(f"{n} clip{plural} written to {out}/ (full scale {run.volts_full_scale:g} V; summary in {out / 'summary.md'})")
    click.echo(CAUTION)
