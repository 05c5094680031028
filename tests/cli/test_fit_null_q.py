"""`render fit` with a Q aim where a design has no Q: words, never a traceback (project rule, DEVELOPERS.md "Errors")."""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from render.analysis import undefined as U
from render.cli import main

ROOT = Path(__file__).resolve().parents[2]


def test_a_q_aim_on_a_design_without_a_q_is_refused_in_words(tmp_path):
    # studio-reference with 10 nF loads behind 10 kΩ: its hump is under 3 dB above the 1 kHz level, so it has no Q
    text = (ROOT / "models" / "studio-reference.toml").read_text()
    text = text.replace('load_c = "3n9"', 'load_c = "10n"').replace('series_r = "22k"', 'series_r = "10k"')
    (tmp_path / "start.toml").write_text(text)
    (tmp_path / "fit.toml").write_text('from = "start.toml"\n[aim]\nq = { value = 2.0, within = 0.2 }\n[free]\n"feedback.r" = { min = "200k", max = "240k", series = "E24" }\n')
    res = CliRunner().invoke(main, ["fit", str(tmp_path / "fit.toml"), "--out", str(tmp_path / "out.toml")])
    assert res.exception is None or isinstance(res.exception, SystemExit), res.output
    assert res.exit_code == 1, res.output
    assert "no Q (no peak 3 dB above the 1 kHz level, or one whose -3 dB width takes in a higher peak)" in res.output, res.output
    assert "Traceback" not in res.output


def test_a_q_not_defined_reads_as_words_in_fits_table():
    from render.cli.fit import _fig

    assert _fig({"q": None, "q_reason": U.Q_SPANS_HIGHER}, "q") == "not defined"
    assert _fig({"q": 1.94}, "q") == "1.94"
