"""README.md's figures that are not printed by an example match what the code computes.

The README is the contract (no outside source): its table of the demo designs'
noise floors, and the sentences drawn from it, are recomputed here from the
shipped designs, in the README's own rounding. (The printed examples are
checked by tests/test_readme_examples.py.)
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from render.analysis.noise import noise_reports
from render.design import load_design

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")
LABELS = {"opamp.voltage": "op-amp", "input_b.bias": "bias divider", "feedback.r": "feedback.r"}


def noise_table() -> dict[str, list[str]]:
    """The README's noise table: design -> its cells after the name."""
    start = README.index("**The demo designs' noise floors**")
    rows = {}
    for line in README[start:].split("\n"):
        m = re.fullmatch(r"\| `([\w-]+)` \|(.*)\|", line)
        if m:
            rows[m.group(1)] = [c.strip() for c in m.group(2).split("|")]
        elif rows and not line.startswith("|"):
            break
    return rows


def computed_row(name: str) -> list[str]:
    (r,) = noise_reports([load_design(ROOT / "models" / f"{name}.toml")])
    a, p = r.active, r.passive
    share = {c.key: c.share for c in a.contributors}
    series = share["input_a.series_r"] + share["input_b.series_r"]
    other = next(c for c in a.contributors if c.key not in ("input_a.series_r", "input_b.series_r"))
    return [
        f"{a.density_1k_v_per_rthz * 1e9:.3g} nV/√Hz",
        f"{a.total_v * 1e6:#.3g} µV",
        f"{a.a_weighted_v * 1e6:#.3g} µV",
        f"{a.snr_db:.1f} dB ({a.snr_a_db:.1f})",
        f"input series_r ×2 {100 * series:.0f} %, {LABELS.get(other.key, other.key)} {100 * other.share:.0f} %",
        f"{p.total_v * 1e6:#.3g} µV",
        f"{p.snr_db:.1f} dB ({p.snr_a_db:.1f})",
    ]


def test_the_noise_table_lists_every_shipped_design():
    assert sorted(noise_table()) == sorted(p.stem for p in (ROOT / "models").glob("*.toml"))


@pytest.mark.parametrize("name", sorted(noise_table()))
def test_noise_table_row_matches_render_noise(name):
    assert noise_table()[name] == computed_row(name)


def test_the_sentences_drawn_from_the_noise_table():
    rows = {name: computed_row(name) for name in noise_table()}
    snr = {name: (float(r[3].split()[0]), float(r[6].split()[0])) for name, r in rows.items()}
    worse = sorted(round(p - a, 1) for a, p in snr.values() if a < p)
    better = [name for name, (a, p) in snr.items() if a > p]
    said = re.search(r"(\w+) of the (\w+) have a ([\d.]+)–([\d.]+) dB \*worse\*", README)
    assert said, "README.md: the sentence on the demo designs' SNR"
    words = {5: "five", 6: "six", 7: "seven", 8: "eight", 9: "nine", 10: "ten", 11: "eleven", 12: "twelve"}
    assert (said.group(1), said.group(2)) == (words.get(len(worse)), words.get(len(rows)))
    assert (float(said.group(3)), float(said.group(4))) == (worse[0], worse[-1])
    assert better == ["ember-dark"] and "`ember-dark`'s 15 kΩ is the one demo that beats the passive reference" in " ".join(README.split())
