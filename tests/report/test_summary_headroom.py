"""summary.md's and the comparison page's headroom cells: the played margin and where the limit is reached,
the same as the terminal prints and the JSON holds.

A sine of known level: a linear, time-invariant network turns a sine of peak V into a sine of peak |H(f)|·V
(Oppenheim & Willsky, *Signals and Systems*, 2nd ed., 1997, §3.2, eigenfunction property), so the op-amp's
excursion is v·|H(1 kHz)| and its margin 20·log10(onset / (v·|H|)) dB by the decibel's definition (IEC 60027-3).
|H| is the engine's, checked against ngspice in tests/circuit.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from render.analysis.bias import velocity_to_amp_output
from render.analysis.headroom import from_record
from render.chain.limit import design_window
from render.chain.loop import dc_output
from render.cli.headroom_print import headroom_lines
from render.clip import render_clip
from render.compare.folders import clips_cells
from render.design import load_design
from render.report.clips import CLIPS_COLUMNS, summary_markdown
from render.report.records import measurements

ROOT = Path(__file__).resolve().parents[2]
FS = 48000
SETTINGS = {"sample_rate": FS, "seed": 0, "hum": False, "noise": False}


def _sine(v_peak: float, seconds: float = 0.4) -> np.ndarray:
    t = np.arange(int(seconds * FS)) / FS
    return v_peak * np.sin(2 * np.pi * 1000.0 * t) * (0.5 - 0.5 * np.cos(np.pi * np.minimum(1.0, t / 0.05)))


def _row(text: str, design: str) -> dict[str, str]:
    """summary.md's row of ``design`` as {column: cell}."""
    lines = [line for line in text.splitlines() if line.startswith("|")]
    head = [c.strip() for c in lines[0].strip("|").split("|")]
    for line in lines[2:]:
        cells = [c.strip() for c in line.strip("|").split("|")]
        if cells[0] == design:
            return dict(zip(head, cells))
    raise AssertionError(f"no row for {design}")


@pytest.mark.parametrize("margin_wanted_db", [9.0, 2.5])
def test_a_sine_of_known_level_reads_its_margin_in_the_summary(margin_wanted_db):
    d = load_design(ROOT / "models" / "studio-reference.toml")
    win, bias = design_window(d), dc_output(d)
    up, down = win.linear_high - bias, bias - win.linear_low
    g = velocity_to_amp_output(d, 1000.0)
    v = min(up, down) / g * 10 ** (-margin_wanted_db / 20)
    clip = render_clip(d, _sine(v), sample_rate=FS, hum=False)
    m = measurements(d, clip.figures, clip.stats, volts_full_scale=1.0)
    row = _row(summary_markdown([{"design": d.name, "measurements": m}], dry="sine", rig="default", settings=SETTINGS, volts_full_scale=1.0), d.name)
    # each side 20·log10(onset / (v·|H|)), to the cell's 0.1 dB rounding and the render's 0.035 dB (tests/analysis/test_headroom.py)
    cell_up, cell_down = (float(x.split()[0]) for x in row["margin (played) up / down"].split(" / "))
    assert cell_up == pytest.approx(20 * math.log10(up / (v * g)), abs=0.05 + 0.035)
    assert cell_down == pytest.approx(20 * math.log10(down / (v * g)), abs=0.05 + 0.035)
    # a recording has no pluck: only the dB above it, 20·log10(onset / peak) of the nearer side
    assert row["limit reached at"] == f"{m['limit_db_above_played']:+.1f} dB above"
    assert float(row["limit reached at"].split()[0]) == pytest.approx(margin_wanted_db, abs=0.05 + 0.035)


def test_each_cell_equals_the_terminal_line_and_the_json():
    from render.clip import RenderSettings
    from render.runs.clips import dry_for

    PHRASE = ROOT / "dry_signals" / "default.toml"
    rows, terminal = {}, []
    for name in ("studio-reference", "ember-dark"):
        d = load_design(ROOT / "models" / f"{name}.toml")
        clip = render_clip(d, dry_for(d, PHRASE, RenderSettings(seconds=1.0)))
        m = measurements(d, clip.figures, clip.stats, volts_full_scale=1.0)
        rows[name] = m
        terminal.append((name, from_record(m)))
    text = summary_markdown([{"design": k, "measurements": m} for k, m in rows.items()], dry="phrase", rig="default", settings=SETTINGS, volts_full_scale=1.0)
    lines = headroom_lines(terminal)
    for name, m in rows.items():
        row = _row(text, name)
        printed = next(line for line in lines if line.split()[0] == name)
        margin, reach = row["margin (played) up / down"], row["limit reached at"]
        # the terminal's cells, word for word (its columns padded with spaces)
        assert " ".join(printed.split()[1:6]) == margin and reach in printed
        # the JSON's figures, in the cells' rounding
        assert margin == f"{m['played_margin_up_db']:+.1f} dB / {m['played_margin_down_db']:+.1f} dB"
        assert reach == f"{m['limit_strength_m'] * 1e3:#.3g} mm ({m['limit_db_above_played']:+.1f} dB)"
        # the comparison page shows the same cells under the same columns
        assert dict(zip(CLIPS_COLUMNS, clips_cells(m))) == {k: v for k, v in row.items() if k != "design"}


def test_every_peak_is_listed_highest_first():
    m = {"peaks": [{"frequency_hz": 4800.2, "height_db": 5.9}, {"frequency_hz": 3730.0, "height_db": 3.96}], "resonance_hz": 4800.2, "resonance_db": 5.9}
    from render.report.clips import _peaks

    assert _peaks(m) == "4800 Hz, +5.9 dB; 3730 Hz, +4.0 dB"
