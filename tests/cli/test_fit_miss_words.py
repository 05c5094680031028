"""`render fit`'s message when only values between a series' steps meet the aims: exact balance in words, finer series only."""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]


def test_exact_balance_is_words_and_only_finer_series_are_offered(tmp_path):
    # studio-reference without its feedback capacitor: with feedback.r = 110k = 220k || 220k (its bias divider)
    # the difference stage's two gains match and the hum cancels exactly (the balance condition of a
    # difference amplifier, R_f = R_top || R_bottom), so E24's 110k scores an infinite rejection, not 200 dB
    text = (ROOT / "models" / "studio-reference.toml").read_text()
    (tmp_path / "start.toml").write_text("\n".join(line for line in text.splitlines() if not line.startswith('c = "47p"')) + "\n")
    (tmp_path / "fit.toml").write_text('from = "start.toml"\n[aim]\nhum_rejection_db = { value = 80, within = 5 }\n[free]\n"feedback.r" = { min = "100k", max = "120k", series = "E24" }\n')
    res = CliRunner().invoke(main, ["fit", str(tmp_path / "fit.toml"), "--out", str(tmp_path / "out.toml")])
    assert res.exit_code == 1
    assert "infinite (an exact balance)" in res.output and " 200" not in res.output, res.output
    assert "try a finer series (E48, E96)" in res.output, res.output
