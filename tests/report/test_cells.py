"""A table cell shows a figure with its unit, or words where it has no finite value.

Project rule, no outside source (DEVELOPERS.md, "Errors"): an undefined figure is printed as words,
never a crash or a bare dash, and rounding never shows a non-zero figure as zero.
"""

from __future__ import annotations

import pytest

from render.analysis import undefined as U
from render.report.brightness import brightness_cells
from render.report.clips import peak_cell


@pytest.mark.parametrize("volts, text", [(1.5763, "1.576 V"), (0.0456712, "45.67 mV"), (4.567e-4, "456.7 µV"), (0.0, "0 V")])
def test_a_quiet_peak_keeps_its_figures(volts, text):
    assert peak_cell(volts) == text


def _brightness(diffs):
    m = {"reference_design": "a", "band_2k_4k_re_1k_db": 1.0, "band_4k_8k_re_1k_db": 2.0}
    for key, value in zip(("matched_diff_2k_4k_db", "matched_diff_4k_8k_db"), diffs):
        U.put(m, key, value, U.NO_LOUDNESS)
    return brightness_cells(m)[-1]


def test_a_loudness_matched_difference_with_no_loudness_is_words():
    assert _brightness((1.25, -3.14)) == "+1.2 / -3.1 dB"
    assert _brightness((None, None)) == "silent"
    m = {"reference_design": "a", "band_2k_4k_re_1k_db": 1.0, "band_4k_8k_re_1k_db": 2.0}
    U.mark(m, "matched_diff_2k_4k_db", U.NO_REFERENCE_LOUDNESS)
    U.mark(m, "matched_diff_4k_8k_db", U.NO_REFERENCE_LOUDNESS)
    assert brightness_cells(m)[-1] == "reference silent"


def test_a_reason_with_no_short_form_shows_its_first_words():
    m: dict = {}
    U.mark(m, "feedback_hz", "no feedback.c, so no feedback corner")
    assert U.cell(m, "feedback_hz", ".0f", " Hz") == "no feedback.c"
    U.mark(m, "q", "")
    assert U.cell(m, "q", ".2f") == "undefined"
