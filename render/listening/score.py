"""Scoring a finished session.

ABX: the number of trials where the listener matched X correctly, against
chance (one half), with the one-sided exact binomial test
(:func:`scipy.stats.binomtest`, ``alternative="greater"``): the chance that
guessing alone scores at least that many.

Preference: how often each design was preferred, and the two-sided exact
binomial test of the decided answers against an even split; "no
preference" answers are left out of the test, as the sign test leaves out
ties.

Nothing here is computed before every trial is answered.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ArgumentError, InputError
from .answers import read_answers
from .build import slot_design
from .layout import SessionPaths, load_key, load_plan, session_paths

ALPHA = 0.05  # the conventional threshold (common practice, no source)


def abx_p_value(correct: int, total: int) -> float:
    """P(at least ``correct`` of ``total`` by guessing), one-sided exact binomial, p = 1/2 (a session has at least one trial)."""
    from scipy.stats import binomtest

    if int(total) < 1:
        raise ValueError("an ABX score needs at least one trial")
    return float(binomtest(int(correct), int(total), 0.5, alternative="greater").pvalue)


NO_DECIDED = "no test: no trial was decided (every answer was 'no preference')"
P_FLOOR = 1e-6  # a p value below this is shown as "p < 0.000001" (20 of 20 ABX trials right gives 9.5e-7)


def _decimal_text(x: float, *, places: int | None = None, figures: int = 2) -> str:
    """``x`` ≥ 0 in plain decimals (never exponent notation), rounded half up: to ``places`` decimal places,
    or else to ``figures`` significant figures with trailing zeros dropped (0.000015, 3.8, 66, 100)."""
    from decimal import ROUND_HALF_UP, Decimal

    d = Decimal(float(x))  # exact: the float's own binary value
    if places is not None:
        return format(d.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_UP), "f")
    if d == 0:
        return "0"
    q = d.quantize(Decimal(1).scaleb(d.adjusted() - figures + 1), rounding=ROUND_HALF_UP)
    if q.adjusted() > d.adjusted():  # rounded up into the next decade (0.0000996 -> 0.00010): one figure fewer
        q = d.quantize(Decimal(1).scaleb(q.adjusted() - figures + 1), rounding=ROUND_HALF_UP)
    text = format(q, "f")
    return text.rstrip("0").rstrip(".") if "." in text else text


def p_shown(p: float) -> str:
    """A p value as the CLI and the listening page show it: ``p = 0.0384`` (four decimal places from 0.001 up),
    ``p = 0.000015`` (two significant figures below 0.001), ``p < 0.000001`` (below :data:`P_FLOOR`)."""
    if p < P_FLOOR:
        return f"p < {_decimal_text(P_FLOOR, places=6)}"
    return f"p = {_decimal_text(p, places=4) if p >= 0.001 else _decimal_text(p)}"


def percent_shown(p: float) -> str:
    """A probability in per cent, two significant figures, trailing zeros dropped: ``66 %``, ``3.8 %``,
    ``0.0015 %``; ``under 0.0001 %`` below :data:`P_FLOOR`."""
    if p < P_FLOOR:
        return f"under {_decimal_text(100 * P_FLOOR, places=4)} %"
    return f"{_decimal_text(100 * p)} %"


def preference_p_value(first: int, second: int) -> float | None:
    """Two-sided exact binomial test of ``first`` against ``second`` (p = 1/2); None when both are zero (:data:`NO_DECIDED`)."""
    from scipy.stats import binomtest

    n = int(first) + int(second)
    return None if n == 0 else float(binomtest(int(first), n, 0.5, alternative="two-sided").pvalue)


def fewest_trials_for(alpha: float = ALPHA) -> int:
    """Smallest number of ABX trials in which a perfect score reaches p < alpha."""
    return int(math.floor(math.log(alpha) / math.log(0.5))) + 1


def score(plan: dict, key: dict, answers: list[dict]) -> dict:
    """The JSON-ready score of a finished session (refuses an unfinished one)."""
    total = len(plan["trials"])
    if len(answers) < total:
        raise InputError(f"SESSION: {len(answers)} of {total} trials answered; the key stays closed until the last one; finish with `render listen SESSION`")
    names = [d["name"] for d in key["designs"]]
    rows = []
    correct = 0
    counts = [0, 0]
    none = 0
    for t, ans in zip(key["trials"], answers):
        row = {"trial": t["index"] + 1, **{slot: names[slot_design(t, slot)] for slot in t["clips"]}, "answer": ans["answer"], "comment": ans.get("comment", "")}
        if key["method"] == "abx":
            row["correct"] = ans["answer"] == t["x"]
            correct += row["correct"]
        else:
            if ans["answer"] == "none":
                row["preferred"] = None
                none += 1
            else:
                d = slot_design(t, ans["answer"])
                row["preferred"] = names[d]
                counts[d] += 1
        rows.append(row)
    out = {"method": key["method"], "trials": total, "designs": names, "table": rows}
    if key["method"] == "abx":
        p = abx_p_value(correct, total)
        out["abx"] = {
            "correct": correct,
            "total": total,
            "p_value": p,
            "test": "one-sided exact binomial, chance 1/2",
            "alpha": ALPHA,
            "distinguished": p < ALPHA,
            **p_texts(p),
        }
    else:
        pp = preference_p_value(*counts)
        out["preference"] = {
            "counts": {names[0]: counts[0], names[1]: counts[1], "no preference": none},
            "p_value": pp,
            "test": "two-sided exact binomial of the decided answers, even split",
            "alpha": ALPHA,
            **p_texts(pp),
        }
        if pp is None:
            out["preference"]["p_value_reason"] = NO_DECIDED
    return out


def p_texts(p: float | None) -> dict:
    """The texts the CLI and the page print for ``p`` and for the threshold (:func:`p_shown`, :func:`percent_shown`)."""
    return {"p_shown": None if p is None else p_shown(p), "percent_shown": None if p is None else percent_shown(p), "alpha_shown": percent_shown(ALPHA)}


def summary_lines(result: dict) -> list[str]:
    """The score as text: headline, test, and the per-trial table."""
    names = result["designs"]
    lines = [f"{result['method']} session, {result['trials']} trials: MODEL_A = {names[0]}, MODEL_B = {names[1]}"]
    if "abx" in result:
        s = result["abx"]
        verdict = (
            "below 0.05: these answers are unlikely to be guesses; the listener told the designs apart"
            if s["distinguished"]
            else "not below 0.05: these answers could be guesses; no audible difference is shown (which does not prove there is none)"
        )
        lines.append(f"  ABX      {s['correct']} of {s['total']} correct, {s['p_shown']}: guessing alone does as well or better {s['percent_shown']} of the time ({s['test']})")
        lines.append(f"           {verdict}")
        if s["total"] < fewest_trials_for():
            lines.append(f"           with {s['total']} trials even a perfect score cannot reach p < 0.05; use at least {fewest_trials_for()}")
    else:
        s = result["preference"]
        c = s["counts"]
        lines.append(f"  prefer   {names[0]}: {c[names[0]]}, {names[1]}: {c[names[1]]}, no preference: {c['no preference']}")
        if s["p_value"] is None:
            lines.append(f"           {s['p_value_reason']}")
        else:
            lean = "an even split is unlikely" if s["p_value"] < ALPHA else "could be an even split"
            lines.append(f"           {s['p_shown']}: an even split gives a lean at least this strong {s['percent_shown']} of the time ({s['test']}); {lean}")
    slots = [k for k in ("A", "B", "X") if k in result["table"][0]]
    width = max(len(n) for n in names)
    abx = "abx" in result
    last = "result" if abx else "preferred"
    last_width = 6 if abx else max(width, 9)
    answer = "X copies" if abx else "answer"  # ABX: the clip the listener marked as the one X copies
    lines.append("")
    lines.append("  trial  " + "".join(f"{k:<{width}}  " for k in slots) + f"{answer}  {last:<{last_width}}  comment")
    for r in result["table"]:
        cells = "".join(f"{r[k]:<{width}}  " for k in slots)
        if abx:
            res = "right" if r["correct"] else "wrong"
        else:
            res = r["preferred"] or "-"
        comment = r["comment"].replace("\n", " ")
        lines.append(f"  {r['trial']:>5}  {cells}{r['answer']:<{len(answer)}}  {res:<{last_width}}  {comment}".rstrip())
    return lines


def designs_from_key(key: dict):
    """The two designs, rebuilt from the TOML text kept in the key (as they were rendered)."""
    from ..design import apply_rig, parse_design, parse_rig
    from ..io.toml import loads

    rig = None
    if key.get("rig"):
        r = key["rig"]
        rig = parse_rig(loads(r["toml"]), source=r["path"], sha256=r["sha256"])
    out = []
    for d in key["designs"]:
        changes = tuple(d.get("design_changes", {}).items())  # render.with_values' changes, already in the text
        out.append(apply_rig(parse_design(loads(d["toml"]), source=d["path"], name=d["name"], sha256=d["sha256"], text=d["toml"], changes=changes), rig))
    return out


def changed_measurements(key: dict, *, plotted: bool = True) -> list[str]:
    """A line for each measured coil whose file is gone, or no longer has the SHA-256 the session's key recorded
    when it was rendered (the answers are about the rendered clips). Each file is found as its design found it:
    relative to the design file's path in the key. Nothing is fitted or refused here.

    plotted : whether a response plot is drawn now (from today's file), for the wording
    """
    from ..design.coil_impedance import measurement_path
    from ..io.hashing import sha256_bytes

    lines = []
    for rec in key["designs"]:
        for m in rec.get("coil_measurements", []):
            path = measurement_path(m["file"], rec.get("path", ""))
            try:
                now = sha256_bytes(path.read_bytes())
            except OSError:
                lines.append(f"{rec['name']}: {m['coil']}'s measurement {m['file']} is no longer at {path}; the answers are about the clips as rendered from it")
                continue
            if now != m["sha256"]:
                plot = "; the response difference is drawn from today's file" if plotted else ""
                lines.append(
                    f"{rec['name']}: {m['coil']}'s measurement {m['file']} changed since the session was rendered (SHA-256 {m['sha256'][:12]}… then, "
                    f"{now[:12]}… now){plot}; the answers are about the rendered clips"
                )
    return lines


def difference_plot(path, key: dict, *, overwrite: bool = False, designs=None):
    """Both designs' responses and their difference in dB, raw and as played after loudness matching (``designs``: the key's, loaded)."""
    from ..circuit.engine import responses
    from ..circuit.params import from_designs
    from ..report.plots import PALETTE, _hz_axis, plot_level_db, pyplot, save

    designs = designs_from_key(key) if designs is None else designs
    f = np.geomspace(20.0, 20000.0, 600)
    h = responses(from_designs(designs)).velocity()(f)
    level = plot_level_db(h)
    gains = key.get("loudness", {}).get("gains_db", [0.0, 0.0])
    from ..analysis.brightness import loudness_matched_difference_db

    raw = level[0] - level[1]
    played = loudness_matched_difference_db(level[0], level[1], gain_db=gains[0], reference_gain_db=gains[1])
    plt = pyplot()
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(8, 6.2), sharex=True, gridspec_kw={"height_ratios": [3, 2]})
    for i, d in enumerate(designs):
        ax1.plot(f, level[i], color=PALETTE[i], lw=1.8, label=d.name)
    ax2.axhline(0.0, color="#999999", lw=0.8)
    ax2.plot(f, played, color=PALETTE[2], lw=1.8, label="as played (after loudness matching)")
    ax2.plot(f, raw, color=PALETTE[2], lw=1.1, ls="--", label="before matching")
    for ax in (ax1, ax2):
        _hz_axis(ax, f[0], f[-1])
    ax1.set_ylabel("level (dB re 1 V per m/s)")
    ax2.set_ylabel(f"{designs[0].name} − {designs[1].name} (dB)")
    ax2.set_xlabel("frequency (Hz)")
    ax1.legend(loc="lower center", fontsize=8, frameon=False, ncol=2)
    ax2.legend(loc="best", fontsize=8, frameon=False)
    ax1.set_title(f"{designs[0].name} against {designs[1].name}: string velocity to amp input", fontsize=10, loc="left")
    fig.tight_layout()
    return save(fig, path, overwrite=overwrite)


def score_session(path) -> tuple[SessionPaths, dict, dict]:
    """(paths, key, score) of the finished session at ``path``."""
    paths = session_paths(path)
    plan = load_plan(paths)
    answers = read_answers(paths, plan)
    if len(answers) < len(plan["trials"]):
        raise ArgumentError(
            "session", f"{path}", f"{len(answers)} of {len(plan['trials'])} trials answered; the key stays closed until the last one; finish with `render listen {path}`", option="SESSION"
        )
    key = load_key(paths, plan)
    return paths, key, score(plan, key, answers)
