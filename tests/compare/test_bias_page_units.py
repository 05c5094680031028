"""``render bias``'s comparison page gives the phrase's onsets in playing units, as the console does.

The console's phrase table is the contract (README, "render bias"): per
setting, the strongest pluck (mm) and the dB above the phrase at which the
op-amp output reaches the limit's onset on each side, and the share limited.
The page's table must show the same words. The figures themselves are
checked from their definition (:mod:`render.analysis.headroom`): the strongest
pluck at the limit is s·10^(margin/20) for a linear design, s the phrase's.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]


def test_the_bias_page_shows_the_onsets_as_pluck_strength_and_db_above_the_phrase(tmp_path):
    out = tmp_path / "bias"
    args = ["bias", str(ROOT / "models" / "studio-reference.toml"), "--ratios", "0.3,0.5", "--battery", "9", "--strength", "3mm", "--seconds", "1.5", "--jobs", "1", "--out", str(out)]
    res = CliRunner().invoke(main, args, catch_exceptions=False)
    assert res.exit_code == 0, res.output
    html = (out / "index.html").read_text(encoding="utf-8")
    data = json.loads(re.search(r'<script type="application/json" id="page-data">(.*?)</script>', html, re.S).group(1))
    cols = data["columns"]
    i_mm, i_db, i_lim = cols.index("phrase reaches the limit at, up / down"), cols.index("as dB above the phrase, up / down"), cols.index("phrase limited")
    console = [line for line in res.output.splitlines() if line.startswith("  ratio") and " mm " in line]  # the phrase table's rows
    assert len(console) == len(data["designs"]) == 2
    for line, d in zip(console, data["designs"]):
        cells = d["cells"]
        mm_up, mm_down = cells[i_mm].split(" / ")
        db_up, db_down = cells[i_db].split(" / ")
        words = line.split()
        # the console's line, its layout only (figures illustrative): "ratio 0.30, 9 V  2.98 mm / 0.771 mm  -0.1 dB / -11.8 dB  3.2 %"
        assert f"{mm_up} / {mm_down}" in " ".join(words) and f"{db_up} / {db_down}" in " ".join(words) and line.rstrip().endswith(cells[i_lim])
        # from the definition: strength = 3 mm · 10^(margin/20), allowing for the printed rounding
        # (dB to 0.1, so ±0.05 dB; mm to three figures, so ±0.005 mm at most)
        for mm, db in ((mm_up, db_up), (mm_down, db_down)):
            s = float(mm.split()[0]) * (1e-3 if mm.endswith(" mm") else 1.0)
            g = float(db.split()[0])
            assert abs(s - 3e-3 * 10 ** (g / 20)) <= 3e-3 * 10 ** (g / 20) * (10 ** (0.05 / 20) - 1) + 0.005e-3
    assert "m/s" in data["designs"][0]["cells"][cols.index("onset up / down")]  # the test sine's onsets stay, in their own unit
