"""Headroom for what is played, checked against first principles.

- A sine of known level: a linear, time-invariant network turns a sine of
  peak V into a sine of peak |H(f)|·V (Oppenheim & Willsky, *Signals and
  Systems*, 2nd ed., 1997, §3.2, eigenfunction property), so the op-amp's
  excursion is v·|H(1 kHz)| and the margin to the limit's onset is
  20·log10(onset / (v·|H|)) dB by definition of the decibel (IEC 60027-3).
  |H| is the engine's, itself checked against ngspice in tests/circuit.
- Pluck strength: the string's motion is linear in the initial displacement
  (the wave equation is linear; Fletcher & Rossing, *The Physics of Musical
  Instruments*, 2nd ed., 1998, §2.7), so scaling every pluck by k moves every
  excursion by 20·log10(k) dB, and a phrase scaled to the printed "limit
  reached at" strength sits at the onset (0 dB) exactly.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from render.analysis.headroom import format_share, margin_db, played_headroom
from render.chain.limit import Window, design_window
from render.chain.loop import dc_output
from render.chain.stream import render_signal
from render.clip import RenderSettings, render_clip
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
FS = 48000


def _faded_sine(v_peak: float, seconds: float = 0.4, f0: float = 1000.0) -> np.ndarray:
    """A 1 kHz sine of peak v, faded in over 50 ms (raised cosine) so no start-up transient overshoots the steady peak."""
    n = int(seconds * FS)
    t = np.arange(n) / FS
    fade = np.minimum(1.0, t / 0.05)
    return v_peak * np.sin(2 * np.pi * f0 * t) * (0.5 - 0.5 * np.cos(np.pi * fade))


def _gain_to_amp_output(design, f0=1000.0) -> float:
    from render.analysis.bias import velocity_to_amp_output

    return velocity_to_amp_output(design, f0)


@pytest.mark.parametrize("margin_wanted_db", [12.0, 3.0, 0.5])
def test_a_sine_of_known_level_has_the_margin_of_its_peak(margin_wanted_db):
    d = load_design(REF)
    win, bias = design_window(d), dc_output(d)
    onset = min(win.linear_high - bias, bias - win.linear_low)
    g = _gain_to_amp_output(d)
    v = onset / g * 10 ** (-margin_wanted_db / 20)  # the sine's peak velocity for that margin
    r = render_signal(d, _faded_sine(v), sample_rate=FS, hum=False)
    h = played_headroom(linear_min_v=r["linear_min_v"], linear_max_v=r["linear_max_v"], bias_v=bias, window=win, limited_fraction=r["clipped_fraction"])
    # the excursion is v·|H| on both sides (to the discretisation's 0.03 dB and the 16-point-per-sample peak search)
    assert h.excursion_up_v == pytest.approx(v * g, rel=4e-3)
    assert h.excursion_down_v == pytest.approx(v * g, rel=4e-3)
    expect_up = 20 * math.log10((win.linear_high - bias) / (v * g))
    expect_down = 20 * math.log10((bias - win.linear_low) / (v * g))
    assert h.margin_up_db == pytest.approx(expect_up, abs=0.035)
    assert h.margin_down_db == pytest.approx(expect_down, abs=0.035)
    assert h.margin_db == pytest.approx(margin_wanted_db, abs=0.035)
    # inside the identity part the output stage never limits: exactly zero, printed "none"
    assert r["clipped_fraction"] == 0.0 and format_share(r["clipped_fraction"]) == "none"


def test_past_the_onset_the_margin_is_negative_and_the_share_limited_is_not_zero():
    d = load_design(REF)
    win, bias = design_window(d), dc_output(d)
    g = _gain_to_amp_output(d)
    v = (win.linear_high - bias) / g * 10 ** (1.0 / 20)  # 1 dB past the onset
    r = render_signal(d, _faded_sine(v), sample_rate=FS, hum=False)
    h = played_headroom(linear_min_v=r["linear_min_v"], linear_max_v=r["linear_max_v"], bias_v=bias, window=win, limited_fraction=r["clipped_fraction"])
    # the linear excursion is the unlimited one: 1 dB past the onset, though the limited output stays inside the window
    assert h.margin_up_db == pytest.approx(-1.0, abs=0.035)
    assert r["clipped_fraction"] > 0 and format_share(r["clipped_fraction"]) != "none"


def test_margin_definition():
    # 20·log10 of an amplitude ratio (IEC 60027-3): half the onset is +6.02 dB, the onset itself 0 dB
    assert margin_db(2.0, 1.0) == pytest.approx(20 * math.log10(2))
    assert margin_db(1.0, 1.0) == 0.0
    assert margin_db(1.0, 0.0) is None
    h = played_headroom(linear_min_v=4.0, linear_max_v=4.5, bias_v=4.0, window=Window(1.0, 8.0, 0.5), limited_fraction=0.0, strongest_pluck_m=1e-3)
    assert h.margin_up_db == pytest.approx(20 * math.log10(3.5 / 0.5))
    assert h.margin_down_db is None and h.margin_db == h.margin_up_db
    assert h.strength_at_limit_m() == pytest.approx(1e-3 * 3.5 / 0.5)
    rec = h.record()
    assert rec["played_margin_down_db"] is None and rec["played_margin_down_db_reason"]
    assert rec["limited"] is False


@pytest.mark.parametrize(
    "fraction,text",
    [
        (0.0, "none"),
        (8e-8, "8.0e-06 %"),
        (3.5e-3, "0.35 %"),
        (0.02, "2.0 %"),
        (0.0994, "9.9 %"),
        (0.0996, "10 %"),  # not "10. %"
        (0.5, "50 %"),
        (0.9999, "99.99 %"),  # short of every sample: never "100 %"
        (1.0, "100 %"),
    ],
)
def test_the_share_limited_never_rounds_to_zero_or_to_all(fraction, text):
    assert format_share(fraction) == text


def _phrase_dry(design, strength=None, seconds=2.0):
    from render.runs.clips import dry_for

    return dry_for(design, PHRASE, RenderSettings(seconds=seconds, strength=strength))


def test_scaling_the_plucks_scales_the_excursion_linearly():
    d = load_design(REF)
    a = render_clip(d, _phrase_dry(d), hum=False).stats
    b = render_clip(d, _phrase_dry(d, strength=0.5e-3), hum=False).stats
    k = 0.5e-3 / a["strongest_pluck_m"]
    assert b["strongest_pluck_m"] == pytest.approx(0.5e-3)
    # linear in the displacement: every excursion scales by k (to float rounding of the filters)
    assert b["linear_excursion_up_v"] == pytest.approx(k * a["linear_excursion_up_v"], rel=1e-6)
    assert b["linear_excursion_down_v"] == pytest.approx(k * a["linear_excursion_down_v"], rel=1e-6)
    assert b["played_margin_up_db"] == pytest.approx(a["played_margin_up_db"] - 20 * math.log10(k), abs=1e-5)
    # so the strength at which the limit is reached does not depend on how hard the phrase was played
    assert b["limit_strength_m"] == pytest.approx(a["limit_strength_m"], rel=1e-6)


def test_the_phrase_at_its_limit_strength_sits_at_the_onset():
    d = load_design(REF)
    a = render_clip(d, _phrase_dry(d), hum=False).stats
    at = render_clip(d, _phrase_dry(d, strength=a["limit_strength_m"]), hum=False).stats
    assert at["limit_db_above_played"] == pytest.approx(0.0, abs=1e-5)
    louder = render_clip(d, _phrase_dry(d, strength=a["limit_strength_m"] * 10 ** (1 / 20)), hum=False).stats
    assert louder["clipped_fraction"] > 0 and louder["limited"] is True


def test_a_recording_has_margins_but_no_pluck_strength():
    d = load_design(REF)
    c = render_clip(d, _faded_sine(0.1), sample_rate=FS, hum=False)
    assert c.stats["played_margin_up_db"] is not None
    assert c.stats["limit_strength_m"] is None and "not a phrase" in c.stats["limit_strength_m_reason"]


def test_a_nonlinear_design_without_a_search_shows_a_linear_guess():
    # the project's own rule (README, "limit reached at"): where the sensing is not linear and no
    # render searched for the strength, the mm figure is marked as a guess and the JSON says so
    from render.analysis.headroom import GUESS_NOTE, from_record, played_headroom
    from render.chain.limit import Window
    from render.cli.headroom_print import bias_phrase_lines, headroom_lines

    window = Window(low=1.0, high=8.0, knee=0.5)
    h = played_headroom(linear_min_v=3.0, linear_max_v=6.0, bias_v=4.5, window=window, limited_fraction=0.0, strongest_pluck_m=0.001, nonlinear=True)
    rec = h.record()
    assert rec["limit_strength_method"] == "linear-guess" and from_record(rec).guessed
    assert "≈" in headroom_lines([("d", h)])[1] and headroom_lines([("d", h)])[-1].strip() == GUESS_NOTE
    assert bias_phrase_lines(["s"], [h])[-1].strip() == GUESS_NOTE
    linear = played_headroom(linear_min_v=3.0, linear_max_v=6.0, bias_v=4.5, window=window, limited_fraction=0.0, strongest_pluck_m=0.001)
    assert linear.record()["limit_strength_method"] == "linear" and all("≈" not in x for x in headroom_lines([("d", linear)]))


def test_strengths_print_three_digits_without_a_bare_point():
    from render.analysis.headroom import format_strength

    assert [format_strength(m) for m in (0.002, 0.0125, 0.175, 0.274)] == ["2.00 mm", "12.5 mm", "175 mm", "274 mm"]
    assert format_strength(None) == "—" and format_strength(0.003, guessed=True) == "≈3.00 mm"


def test_the_headroom_table_keeps_its_columns_when_a_side_is_limited_at_rest():
    # a bias inside the knee (1.2 V, with the knee from 1.0 to 1.5 V) is limited at rest on its low side
    # (README, "limited at rest"); its cell's words widen the column for every row instead of pushing
    # that row's later cells out of line
    from render.analysis.headroom import AT_REST_MARGIN_CELL, played_headroom
    from render.chain.limit import Window
    from render.cli.headroom_print import headroom_lines

    window = Window(low=1.0, high=8.0, knee=0.5)
    rest = played_headroom(linear_min_v=1.1, linear_max_v=1.3, bias_v=1.2, window=window, limited_fraction=0.5, strongest_pluck_m=0.001)
    fine = played_headroom(linear_min_v=3.0, linear_max_v=6.0, bias_v=4.5, window=window, limited_fraction=0.0, strongest_pluck_m=0.001)
    assert rest.at_rest("down")
    lines = headroom_lines([("resting", rest), ("centred", fine)])
    assert AT_REST_MARGIN_CELL in lines[1]
    # the last column (share limited) ends at the same place on every line, the heading's included
    assert len({len(line) for line in lines}) == 1, lines
    # and a table of ordinary rows keeps its usual widths (the README's printed tables)
    plain = headroom_lines([("centred", fine)])
    assert len(plain[0]) == 2 + 20 + 2 + 19 + 3 + 20 + 3 + 9


def test_coils_that_cancel_the_strings_say_so_instead_of_a_margin_above(tmp_path):
    # Two equal coils at one point, the second's signal reversed, through matched networks: by superposition
    # the strings' EMFs cancel exactly and only the hum moves the op-amp output. No pluck then reaches the
    # limit: the cell says "no string signal" and the record gives that reason (README, "limit reached at").
    from click.testing import CliRunner

    from render.analysis.headroom import NO_STRING, NO_STRING_CELL, from_record, reach_cell
    from render.cli import main

    edge = ROOT / "tests" / "smoke" / "designs" / "edge-reversed-same-point.toml"
    d = load_design(edge)
    c = render_clip(d, _phrase_dry(d, seconds=1.0), hum=True)
    m = c.stats
    assert m["string_excursion_up_v"] == 0 and m["string_excursion_down_v"] == 0 and m["hum_excursion_up_v"] > 0
    assert m["limit_db_above_played"] is None and m["limit_db_above_played_reason"] == NO_STRING
    assert m["limit_strength_m"] is None and m["limit_strength_m_reason"] == NO_STRING
    assert reach_cell(from_record(m)) == NO_STRING_CELL
    res = CliRunner().invoke(main, ["clips", str(edge), "--seconds", "1", "--no-plots", "--out", str(tmp_path / "c")])
    assert res.exit_code == 0, res.output
    row = next(x for x in res.output.splitlines() if x.strip().startswith("edge-reversed-same-point") and "dB" in x)
    assert NO_STRING_CELL in row and "above" not in row
