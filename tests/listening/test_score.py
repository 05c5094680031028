"""Scoring: the binomial tests against their published values, the table, the plot, the CLI.

Source of the check values: the binomial distribution (exact sums), as scipy.stats.binomtest
computes it; 12/16 → 0.0384, 9/10 → 0.0107, 14/20 → 0.0577.
"""

from __future__ import annotations

import json
import math

import pytest
from click.testing import CliRunner

from render.cli.score import score_command
from render.listening.answers import AnswerLog
from render.listening.build import slot_design
from render.listening.layout import load_plan
from render.listening.score import abx_p_value, fewest_trials_for, preference_p_value


def upper_tail(k, n):
    """P(X >= k), X ~ binomial(n, 1/2), summed exactly (the binomial distribution)."""
    return sum(math.comb(n, i) for i in range(k, n + 1)) / 2**n


@pytest.mark.parametrize(
    "correct, total, p",
    [
        (12, 16, 0.0384),  # scipy.stats.binomtest(12, 16, 0.5, alternative="greater"); = 2517/65536
        (9, 10, 0.0107),  # scipy.stats.binomtest(9, 10, ...); = 11/1024
        (14, 20, 0.0577),  # scipy.stats.binomtest(14, 20, ...); = 60460/1048576
    ],
)
def test_abx_p_values(correct, total, p):
    assert round(abx_p_value(correct, total), 4) == p
    assert abx_p_value(correct, total) == pytest.approx(upper_tail(correct, total), rel=1e-12)  # binomial distribution, exact sum


def test_abx_edges_and_the_shortest_useful_session():
    assert abx_p_value(0, 16) == 1.0  # P(X >= 0) = 1 (binomial distribution)
    assert abx_p_value(16, 16) == pytest.approx(2.0**-16, rel=1e-12)  # all correct: (1/2)^n
    # 5 trials: a perfect score gives 1/32 = 0.03125 < 0.05, 4 trials 1/16 = 0.0625 (binomial distribution)
    assert fewest_trials_for(0.05) == 5


@pytest.mark.parametrize(
    "p, text, percent",
    [
        (2.0**-16, "p = 0.000015", "0.0015 %"),  # 16 of 16 ABX right: (1/2)^16 = 1.52587890625e-5 (binomial distribution)
        (2517 / 65536, "p = 0.0384", "3.8 %"),  # 12 of 16, as above
        (42 / 64, "p = 0.6563", "66 %"),  # 3 of 6: an exact tie at four places, rounded half up
        (2.0**-20, "p < 0.000001", "under 0.0001 %"),  # 20 of 20: 9.5e-7, under the floor: words, not 0.0000
        (1.0, "p = 1.0000", "100 %"),  # 0 of 16: P(X >= 0) = 1
    ],
)
def test_p_values_are_shown_without_rounding_to_zero(p, text, percent):
    from render.listening.score import p_shown, percent_shown

    assert p_shown(p) == text and percent_shown(p) == percent


def test_preference_two_sided():
    # two-sided exact binomial, p = 1/2, symmetric: 2 · P(X <= 1 | n = 10) = 2 · 11/1024 = 0.021484375
    # (binomial distribution; scipy.stats.binomtest(9, 10, 0.5).pvalue)
    assert preference_p_value(9, 1) == pytest.approx(22 / 1024, rel=1e-12)
    assert preference_p_value(1, 9) == pytest.approx(22 / 1024, rel=1e-12)
    assert preference_p_value(5, 5) == pytest.approx(1.0)  # an even split (binomial distribution)
    assert preference_p_value(0, 0) is None  # no decided answer: no test (said in words by the score)


def _answer_all(paths, answers):
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        for i, (value, comment) in enumerate(answers):
            log.record({"trial": i, "answer": value, "comment": comment})


def test_score_refuses_an_unfinished_session_and_reveals_nothing(make_session):
    paths = make_session(trials=4)
    _answer_all(paths, [("A", ""), ("B", "")])
    result = CliRunner().invoke(score_command, [str(paths.root)])
    assert result.exit_code == 1
    assert result.output.strip() == (f"Error: SESSION={paths.root}: 2 of 4 trials answered; the key stays closed until the last one; finish with `render listen {paths.root}`")
    assert not (paths.root / "results").exists()


def test_abx_score_table_and_plot(make_session):
    paths = make_session(method="abx", trials=16, seed=5)
    key = json.loads(paths.key.read_text())
    flip = {"A": "B", "B": "A"}
    # right in the first 12 trials, wrong in the last 4: 12 of 16
    given = [t["x"] if t["index"] < 12 else flip[t["x"]] for t in key["trials"]]
    _answer_all(paths, [(g, "crisper" if i == 0 else "") for i, g in enumerate(given)])
    result = CliRunner().invoke(score_command, [str(paths.root), "--json", str(paths.root / "score.json")])
    assert result.exit_code == 0, result.output
    out = result.output
    assert "12 of 16 correct, p = 0.0384" in out  # scipy.stats.binomtest one-sided, as above
    assert "told the designs apart" in out
    names = [d["name"] for d in key["designs"]]
    row1 = next(line for line in out.splitlines() if line.strip().startswith("1 "))
    t0 = key["trials"][0]
    assert row1.split()[1:4] == [names[slot_design(t0, s)] for s in "ABX"] and "right" in row1 and "crisper" in row1
    header = next(line for line in out.splitlines() if line.strip().startswith("trial "))
    assert header.split()[4:7] == ["X", "copies", "result"]
    assert row1.split()[4] == given[0]  # the clip the listener said X copies
    assert row1[header.index("X copies")] == given[0]  # printed under its header
    png = paths.root / "results" / "response-difference.png"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    data = json.loads((paths.root / "score.json").read_text())
    assert data["abx"]["correct"] == 12 and len(data["table"]) == 16 and data["session"] == key["session"]
    # a second run keeps the plot and refuses to overwrite the JSON
    again = CliRunner().invoke(score_command, [str(paths.root)])
    assert again.exit_code == 0 and f"kept {png}" in again.output
    refused = CliRunner().invoke(score_command, [str(paths.root), "--json", str(paths.root / "score.json")])
    assert refused.exit_code == 1 and "exists; pass --overwrite" in refused.output


def test_preference_score(make_session):
    paths = make_session(method="preference", trials=10, seed=8)
    key = json.loads(paths.key.read_text())
    # prefer design 0 nine times, then no preference once
    given = [("A" if t["a"] == 0 else "B") for t in key["trials"][:9]] + ["none"]
    _answer_all(paths, [(g, "") for g in given])
    result = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert result.exit_code == 0, result.output
    names = [d["name"] for d in key["designs"]]
    assert f"{names[0]}: 9, {names[1]}: 0, no preference: 1" in result.output
    # two-sided exact binomial of 9 against 0: 2 · (1/2)^9 = 0.00390625 (binomial distribution)
    assert "p = 0.0039: an even split gives a lean at least this strong 0.39 % of the time" in result.output and "an even split is unlikely" in result.output
    assert not (paths.root / "results").exists()


def test_score_refuses_a_folder_that_is_not_a_session(tmp_path):
    result = CliRunner().invoke(score_command, [str(tmp_path)])
    assert result.exit_code == 1 and "not a listening session" in result.output


def test_score_warns_when_a_measured_coils_file_changed_after_the_session(tmp_path):
    # the key keeps each measured coil's SHA-256 (the bytes its clips were rendered from); a file edited since
    # is named, with both digests (hashlib over the file's bytes), while the score itself stands
    import hashlib
    import shutil
    from pathlib import Path

    from listening.conftest import design_record, synthetic_pair

    from render.design import load_design
    from render.design.provenance import design_provenance
    from render.listening.build import build_session
    from render.listening.loudness import match_loudness

    root = Path(__file__).resolve().parents[2]
    shutil.copytree(root / "models" / "coils", tmp_path / "coils")
    design = tmp_path / "measured-blade.toml"
    shutil.copy(root / "models" / "measured-blade.toml", design)
    records = [design_record(design) | design_provenance(load_design(design)), design_record(root / "models" / "studio-reference.toml")]
    signals, match = match_loudness(synthetic_pair(16000, 1.0), sample_rate=16000, names=["a", "b"])
    paths = build_session(tmp_path / "s", signals, sample_rate=16000, method="abx", trials=5, seed=3, designs=records, record={"rig": None, "loudness": match.record()})
    key = json.loads(paths.key.read_text())
    _answer_all(paths, [(t["x"], "") for t in key["trials"]])
    csv = tmp_path / "coils" / "harbour-blade-coil.synthetic.csv"
    before = hashlib.sha256(csv.read_bytes()).hexdigest()
    csv.write_text(csv.read_text() + "# a note added after the session\n")
    after = hashlib.sha256(csv.read_bytes()).hexdigest()
    res = CliRunner().invoke(score_command, [str(paths.root), "--no-plot"])
    assert res.exit_code == 0, res.output
    assert f"warning: measured-blade: coil_a's measurement coils/harbour-blade-coil.synthetic.csv changed since the session was rendered (SHA-256 {before[:12]}… then, {after[:12]}… now)" in res.output
    assert "5 of 5 correct" in res.output
    # the file gone: the score stands, with a line saying so, and the plot that needs it is not drawn
    csv.unlink()
    res = CliRunner().invoke(score_command, [str(paths.root), "--overwrite"])
    assert res.exit_code == 0, res.output
    assert "coil_a's measurement coils/harbour-blade-coil.synthetic.csv is no longer at" in res.output
    assert "warning: the response difference was not drawn:" in res.output and "5 of 5 correct" in res.output


def test_a_preference_score_with_no_decided_answer_is_words_not_a_p_value():
    # every trial "no preference": the exact binomial of the decided answers has n = 0, so there is no test
    from render.listening.score import NO_DECIDED, score, summary_lines

    plan = {"trials": [{}, {}]}
    key = {"method": "preference", "designs": [{"name": "one"}, {"name": "two"}], "trials": [{"index": i, "clips": {"A": 0, "B": 1}, "a": 0} for i in range(2)]}
    result = score(plan, key, [{"answer": "none"}, {"answer": "none"}])
    assert result["preference"]["p_value"] is None and result["preference"]["p_value_reason"] == NO_DECIDED
    text = "\n".join(summary_lines(result))
    assert NO_DECIDED in text and "p = " not in text
