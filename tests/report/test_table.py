"""Printed tables whose columns fit their cells: words for undefined figures never run together or overflow.

The words are render.analysis.undefined's and render.analysis.bias's own (NO_OUTPUT's short form
"no output", RESTS "none: rests on limit"); the rule checked is layout only (each column as wide as its
widest cell, two spaces between columns), common practice, no source.
"""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from render.analysis.bias import RESTS
from render.analysis.undefined import NO_OUTPUT, SHORT
from render.cli import main
from render.report.table import GAP, aligned_pairs, table_lines

REF = Path(__file__).resolve().parents[2] / "models" / "studio-reference.toml"


def _ends(header_line: str, headings) -> list[int]:
    """Where each heading ends in the heading line (a right-aligned column's cells end there too)."""
    ends, at = [], 0
    for h in headings:
        at = header_line.index(h, at) + len(h)
        ends.append(at)
    return ends


def test_columns_take_the_width_of_their_widest_cell():
    lines = table_lines(("a", "b"), [("x", "no output"), ("longer words", "1.0")], "lr", indent="")
    assert lines == ["a                     b", "x             no output", "longer words        1.0"]
    assert all(GAP in line for line in lines)


def test_pairs_line_up_and_words_stay_whole():
    assert aligned_pairs(["10.423 / 2.606", "6.514 / 16.5", RESTS]) == ["10.423 / 2.606", " 6.514 /  16.5", RESTS]


def test_render_bias_prints_undefined_figures_in_their_own_columns():
    # ratio 0.02 of a 9 V battery puts the bias (0.18 V) below the 1 V low limit: the test sine does not move the
    # output, so THD, H2 and H3 are "no output" and the onset and recovery "none: rests on limit"
    res = CliRunner().invoke(main, ["bias", str(REF), "--ratios", "0.02", "--no-clips"])
    assert res.exit_code == 0, res.output
    lines = [x for x in res.output.splitlines() if x.startswith("  ")]
    headings = ("setting", "bias", "headroom up/down", "onset velocity up/down (m/s)", "THD", "H2", "H3", "after a 60 ms burst")
    ends = _ends(lines[0], headings)
    rest = next(x for x in lines if x.lstrip().startswith("ratio 0.02"))
    words = SHORT[NO_OUTPUT]
    assert rest.count(words) == 3 and f"{words}{GAP}{words}{GAP}{words}" in rest
    for line in lines[1:]:
        for end in ends[1:]:  # right-aligned columns: every cell ends under its heading's end, a space after it
            assert line[end - 1] != " " and (end == len(line) or line[end] == " "), (line, end)
    assert rest.count(RESTS) == 2
