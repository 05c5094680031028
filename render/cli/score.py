"""``render score SESSION``: the result of a finished blind session.

ABX: correct of total with the one-sided exact binomial p-value; preference:
counts with the two-sided test; a per-trial table; and a plot of the two
designs' response difference (SESSION/results/response-difference.png by
default). Before the last trial is answered it refuses and reveals nothing.
The work is :func:`render.runs.score.score_blind_session`.
"""

from __future__ import annotations

import click

from .options import emit_json, friendly, json_option, overwrite_option, warn
from .values import OutFile


@click.command("score")
@click.argument("session", type=click.Path(file_okay=False))
@json_option("Write the score (every trial included) as JSON to FILE ('-' for standard output).")
@click.option("--png", "png_path", type=OutFile("difference.png"), default=None, help="Where to draw the response difference (default SESSION/results/response-difference.png).")
@click.option("--no-plot", is_flag=True, help="Skip the response difference plot.")
@overwrite_option
@friendly
def score_command(session, json_path, png_path, no_plot, overwrite):
    """Score the blind listening session SESSION once every trial is answered."""
    from ..io.folders import refuse_existing
    from ..listening.score import summary_lines
    from ..runs.score import score_blind_session

    refuse_existing([json_path, png_path], overwrite=overwrite)
    scored = score_blind_session(session, png_path=png_path, plot=not no_plot, overwrite=overwrite)
    for w in scored.warnings:
        warn(w)
    for line in summary_lines(scored.result):
        click.echo(line)
    if scored.kept_plot is not None:
        click.echo(f"kept {scored.kept_plot} (pass --overwrite to draw it again)")
    if scored.plot is not None:
        click.echo(f"wrote {scored.plot}")
    if json_path:
        emit_json(json_path, {"session": scored.session_id, **scored.result}, overwrite=overwrite)
