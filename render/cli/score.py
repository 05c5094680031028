"""``render score SESSION``: the result of a finished blind session.

ABX: correct of total with the one-sided exact binomial p-value; preference:
counts with the two-sided test; a per-trial table; and a plot of the two
designs' response difference (SESSION/results/response-difference.png by
default). Before the last trial is answered it refuses and reveals nothing.
"""

from __future__ import annotations

from pathlib import Path

import click

from ..io.folders import refuse_existing as check_new
from .options import emit_json, friendly, json_option, overwrite_option


@click.command("score")
@click.argument("session", type=click.Path(file_okay=False))
@json_option("Write the score (every trial included) as JSON to FILE ('-' for standard output).")
@click.option("--png", "png_path", type=click.Path(dir_okay=False), default=None, help="Where to draw the response difference (default SESSION/results/response-difference.png).")
@click.option("--no-plot", is_flag=True, help="Skip the response difference plot.")
@overwrite_option
@friendly
def score_command(session, json_path, png_path, no_plot, overwrite):
    """Score the blind listening session SESSION once every trial is answered."""
    from ..listening.score import difference_plot, score_session, summary_lines

    check_new([json_path, png_path], overwrite=overwrite)
    paths, key, result = score_session(session)
    if json_path != "-":
        for line in summary_lines(result):
            click.echo(line)
    if not no_plot:
        target = Path(png_path) if png_path else paths.results / "response-difference.png"
        if png_path is None and target.exists() and not overwrite:
            if json_path != "-":
                click.echo(f"kept {target} (pass --overwrite to draw it again)")
        else:
            target.parent.mkdir(exist_ok=True)
            difference_plot(target, key, overwrite=overwrite)
            if json_path != "-":
                click.echo(f"wrote {target}")
    if json_path:
        emit_json(json_path, {"session": key["session"], **result}, overwrite=overwrite)
