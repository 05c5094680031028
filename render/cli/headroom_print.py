"""Printing the headroom for what was played (:mod:`render.analysis.headroom`): one table, one line per render."""

from __future__ import annotations

import click

from ..analysis.bias import RESTS_PLAYED
from ..analysis.headroom import GUESS_NOTE, PlayedHeadroom, format_share, format_strength, margin_cell, reach_cell, strength_cell


def headroom_lines(rows: list[tuple[str, PlayedHeadroom]], *, indent: str = "  ") -> list[str]:
    """The table's lines: per render the margin above and below, where the limit is reached, and the share limited.

    Columns keep their usual widths and widen to the widest cell, so words ("limited at rest") never push a row out of line.
    """
    width = max([len(name) for name, _ in rows] + [20])
    cells = []
    for name, h in rows:
        reach = reach_cell(h)
        up, down = margin_cell(h, "up"), margin_cell(h, "down")
        cells.append((name, up, down, reach, format_share(h.limited_fraction)))
    wu = max([8] + [len(c[1]) for c in cells])
    wd = max([8] + [len(c[2]) for c in cells])
    wm = max(19, wu + wd + 3)
    wr = max([20] + [len(c[3]) for c in cells])
    lines = [f"{indent}{'':{width}s}  {'margin up / down':^{wm}s}   {'limit reached at':^{wr}s}   {'limited':>9s}"]
    for name, up, down, reach, share in cells:
        margins = f"{up:>{wu}s} / {down:<{wd}s}"
        lines.append(f"{indent}{name:{width}s}  {margins:{wm}s}   {reach:^{wr}s}   {share:>9s}")
    if any(h.guessed for _, h in rows):
        lines.append(f"{indent}{GUESS_NOTE}")
    return lines


def headroom_title(rows: list[tuple[str, PlayedHeadroom]]) -> str:
    """The line above the table: what the figures mean, with the phrase's strongest pluck when every render has the same."""
    plucks = {h.strongest_pluck_m for _, h in rows}
    pluck = plucks.pop() if len(plucks) == 1 else None
    what = f"strongest pluck {format_strength(pluck)}" if pluck is not None else "a recording"
    return f"headroom for what is played ({what}): op-amp swing against the limit's onset, and where it is reached"


def print_headroom(rows: list[tuple[str, PlayedHeadroom]]) -> None:
    """The title and the table on standard output (nothing for no rows)."""
    if not rows:
        return
    click.echo(headroom_title(rows))
    for line in headroom_lines(rows):
        click.echo(line)


def bias_phrase_lines(labels: list[str], played: list[PlayedHeadroom], rests: list | None = None) -> list[str]:
    """``render bias``'s phrase table: per setting, the limit's onsets as the phrase's strongest pluck and as dB above the phrase, and the share limited
    (``rests``: per setting, whether its output rests on a limit, :func:`render.analysis.bias.resting_limit`; then in words)."""
    from ..report.table import aligned_pairs, table_lines

    plucks = {h.strongest_pluck_m for h in played}
    pluck = plucks.pop() if len(plucks) == 1 else None
    what = f"strongest pluck {format_strength(pluck)}" if pluck is not None else "a recording"
    rests = rests or [None] * len(played)
    mm = aligned_pairs([RESTS_PLAYED if rest else f"{strength_cell(h, 'up')} / {strength_cell(h, 'down')}" for h, rest in zip(played, rests)])
    db = aligned_pairs([RESTS_PLAYED if rest else f"{margin_cell(h, 'up')} / {margin_cell(h, 'down')}" for h, rest in zip(played, rests)])
    rows = [(label, a, b, format_share(h.limited_fraction)) for label, a, b, h in zip(labels, mm, db, played)]
    lines = [
        f"the phrase at each setting ({what}): where the op-amp output reaches the limit's onset, up / down",
        *table_lines(("setting", "as strongest pluck", "as dB above phrase", "limited"), rows, "lrrr"),
    ]
    if any(h.guessed for h in played):
        lines.append(f"  {GUESS_NOTE}")
    return lines
