"""Every command on every shipped design, every phrase, and designs at the edges: no traceback.

A user's first runs must never end in a Python traceback. Each command runs
here, in one process through click's CliRunner, on

- every design shipped under ``models/``, subfolders included, with the default phrase
  (``--seconds 2`` where it renders); a file there is a design, a passive comparison
  pickup (``kind = "passive"``: those run through ``--compare`` in test_compare_smoke.py)
  or a fit (an ``[aim]`` table: each runs through ``render fit`` on its own),
- every command that takes ``--rig`` with each shipped rig (``rigs/``), on every design
  (the renders, 1 s, through ``render clips``; ``bias``, ``fit``, ``unvoice`` and ``blind``
  on the designs of :data:`RIG_RENDERS`, to keep the matrix's time modest),
- every phrase and recording in ``dry_signals/`` through ``render clips`` on one design,
- the edge designs in ``tests/smoke/designs/`` (invented values): matched coils whose
  hum cancels exactly, both coils at one sensing point, zero aperture, no ``gbw``
  (an ideal op-amp), an 18 V supply, coil_b wired in reverse, and coil_b wired in
  reverse at coil_a's point with an ideal op-amp (the string signal cancels exactly).

Each run must exit 0, or 1 with one of the refusals below, whose wording the
README's refusal table documents; no exception may escape (CliRunner keeps it),
and no numeric RuntimeWarning (a log of zero, 0/0) may reach the user. Every
JSON file written must be strict JSON (no NaN or Infinity), and every figure
written as null must carry its reason beside it (``<key>_reason``), the one
convention the README documents. Printed output and CSV files must not show
``nan`` or ``inf``.

The expectations are the README's own contract (no outside source): what a
command refuses, and how an undefined figure is written.
"""

from __future__ import annotations

import json
import re
import warnings
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]


def _model_kind(path: Path) -> str:
    """What a TOML file under models/ is: "passive" (a comparison pickup), "fit" (it has aims) or "design"."""
    from render.io.toml import loads

    data = loads(path.read_text(encoding="utf-8"))
    return "passive" if data.get("kind") == "passive" else "fit" if "aim" in data else "design"


MODEL_FILES = sorted((ROOT / "models").rglob("*.toml"))
SHIPPED = [p for p in MODEL_FILES if _model_kind(p) == "design"]
PASSIVES = [p for p in MODEL_FILES if _model_kind(p) == "passive"]
FITS = [p for p in MODEL_FILES if _model_kind(p) == "fit"]
RIGS = sorted((ROOT / "rigs").glob("*.toml"))
EDGES = sorted((Path(__file__).parent / "designs").glob("*.toml"))
PHRASES = sorted(p for p in (ROOT / "dry_signals").iterdir() if p.suffix in (".toml", ".wav"))
REFERENCE = ROOT / "models" / "studio-reference.toml"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"
DI = ROOT / "dry_signals" / "last_chord_2s.wav"  # any mono recording serves as a DI here

# (design stem, command) -> the refusal expected, as the README's refusal table words it
REFUSALS = {
    ("odd-pair", "fit"): "no design met every aim",  # its mismatch caps the hum rejection below the aim
    ("edge-reversed-coil", "fit"): "no design met every aim",
    ("edge-reversed-same-point", "fit"): "no design met every aim",
    ("edge-reversed-coil", "unvoice"): "its passive reference gives no signal",
    ("edge-reversed-same-point", "unvoice"): "its passive reference gives no signal",
    ("edge-reversed-same-point", "bias"): "the two coils cancel the string signal exactly",
    # coils from their construction or a measurement: the fit file's aims (a 4.8 kHz peak of 3 dB or
    # more) are out of reach of these coils' inductance and loss with the free parts it allows
    ("slipway-steel-blades", "fit"): "no design met every aim",
    ("slipway-steel-poles", "fit"): "no design met every aim",
    ("slipway-magnet-blades", "fit"): "no design met every aim",
    ("measured-blade", "fit"): "no design met every aim",
}
# with a shipped rig, as above, and: every rig puts a source near the pickup (rigs/near-transformer.toml: a
# dipole 0.5 m away in line with the strings), whose gradient caps the rejection near 20 dB, below the
# fit file's aim of 50 dB
RIG_REFUSALS = {
    **REFUSALS,
    **{(p.stem, "fit"): "no design met every aim" for p in [*MODEL_FILES, *EDGES]},
    # the string signal cancels and the hum left (38 µV peak at the amp input) lies under BS.1770-4's absolute
    # gate of -70 LUFS on blind's 1 V full scale: nothing to match loudness on (without the rig, 958 µV is above it)
    ("edge-reversed-same-point", "blind"): "the render is silent (under BS.1770-4's -70 LUFS gate): no string signal reaches the output",
}
# the designs that also render bias, fit, unvoice and blind with each rig: coils with a geometry, a matched
# pair (exact cancellation) and a pair that cancels the string signal
RIG_RENDERS = {"studio-bobbin", "edge-matched-coils", "edge-reversed-same-point"}
# `render sense` needs a [construction]; the shipped designs that have one
NO_CONSTRUCTION = "no [construction] table; render sense needs one"
CONSTRUCTED = {p.stem for p in SHIPPED if "[construction]" in p.read_text(encoding="utf-8")}
# keys whose null is an undefined figure (the rest are absent parts or unset options: "load_r", "rig", …)
FIGURE_KEY = re.compile(r"(_db|_hz|_v|_v_rms|_s|_lufs|_lufs_1v_full_scale|^q|^pole_q|^db)$")
NUMBER_WORDS = re.compile(r"\b(nan|inf|-inf|infinity)\b", re.IGNORECASE)


def _refusal_table() -> str:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    return text[text.index("## Refusals and their fixes") :]


def _strict(name):
    raise ValueError(f"{name} in JSON")


def check_json(path: Path) -> list[str]:
    """Problems with one JSON file: NaN/Infinity, or a null figure without its reason."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"), parse_constant=_strict)
    except ValueError as exc:
        return [f"{path.name}: {exc}"]
    problems: list[str] = []

    def walk(x, where):
        if isinstance(x, dict):
            for k, v in x.items():
                if v is None and FIGURE_KEY.search(k) and not isinstance(x.get(f"{k}_reason"), str):
                    problems.append(f"{path.name}: {where}{k} is null without {k}_reason")
                walk(v, f"{where}{k}.")
        elif isinstance(x, list):
            for v in x:
                walk(v, where)

    walk(data, "")
    return problems


class Runner:
    """Runs commands in this process and collects every problem instead of stopping at the first."""

    def __init__(self, design: str, refusals: dict | None = None):
        self.design = design
        self.refusals = REFUSALS if refusals is None else refusals
        self.problems: list[str] = []
        self.cli = CliRunner()

    def __call__(self, name: str, *args) -> int:
        argv = [name, *(str(a) for a in args)]
        with warnings.catch_warnings():
            warnings.simplefilter("error", RuntimeWarning)  # a numeric warning would reach the user's terminal
            res = self.cli.invoke(main, argv)
        shown = f"render {' '.join(argv)}"
        if res.exception is not None and not isinstance(res.exception, SystemExit):
            self.problems.append(f"{shown}: raised {type(res.exception).__name__}: {res.exception}")
            return -1
        expected = self.refusals.get((self.design, name)) or (NO_CONSTRUCTION if name == "sense" and self.design not in CONSTRUCTED else None)
        if res.exit_code == 1 and expected:
            if "Error: " not in res.output or expected not in res.output:
                self.problems.append(f"{shown}: exit 1 without the expected refusal {expected!r}: {res.output[-300:]}")
        elif res.exit_code != 0:
            self.problems.append(f"{shown}: exit code {res.exit_code}: {res.output[-300:]}")
        elif expected:
            self.problems.append(f"{shown}: expected the refusal {expected!r}, but it ran")
        if "Traceback" in res.output or NUMBER_WORDS.search(res.output):
            self.problems.append(f"{shown}: printed a traceback or a non-finite number: {res.output[-300:]}")
        return res.exit_code


def answer_every_trial(session: Path) -> None:
    """Answer a built session's trials through the library, as the listening page does."""
    from render.listening.answers import AnswerLog
    from render.listening.layout import SessionPaths, load_plan

    paths = SessionPaths(session)
    plan = load_plan(paths)
    with AnswerLog(paths, plan) as log:
        for i in range(len(plan["trials"])):
            log.record({"trial": i, "answer": "A", "comment": ""})


def watch_problems(design: Path) -> list[str]:
    """``render watch``'s render and page state for one design, through the library it calls (the command
    itself serves until stopped; tests/compare/test_watch.py drives it whole): problems as Runner's."""
    from render.clip import RenderSettings
    from render.runs.watch import WatchRun

    shown = f"render watch {design}"
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", RuntimeWarning)
            run = WatchRun([design], settings=RenderSettings(seconds=1.0, sample_rate=16000))
            lines = run.start().lines
            state = json.dumps(run.state()[0], allow_nan=False)  # the page's JSON: no NaN or infinity
    except Exception as exc:  # noqa: BLE001 - every exception is a problem to report, none is expected
        return [f"{shown}: raised {type(exc).__name__}: {exc}"]
    problems = [f"{shown}: {line}" for line in lines if line.startswith("Error: ")]
    if run.problems():
        problems.append(f"{shown}: the page shows problems {run.problems()}")
    if NUMBER_WORDS.search(state):
        problems.append(f"{shown}: the page state holds nan or inf")
    return problems


def coil_a_point(design: Path) -> tuple[str, str]:
    from render.io.toml import loads

    coil = loads(design.read_text(encoding="utf-8"))["coil_a"]
    return str(coil["position"]), str(coil.get("aperture", "0mm"))


@pytest.mark.parametrize("design", SHIPPED + EDGES, ids=lambda p: p.stem)
def test_every_command_runs_on_the_design(design, tmp_path):
    run = Runner(design.stem)
    edge = design in EDGES
    run("check", design, "--turns-sweep", 5, "--json", tmp_path / "check.json")
    run("response", design, "--csv", tmp_path / "response.csv", *(["--png", tmp_path / "response.png"] if edge else []))
    run("noise", design, "--json", tmp_path / "noise.json", *(["--png", tmp_path / "noise.png"] if edge else []))
    run("coil", design, "--csv", tmp_path / "coil.csv", "--json", tmp_path / "coil.json", *(["--png", tmp_path / "coil.png"] if edge else []))
    run("hum", design, "--json", tmp_path / "hum.json")
    run("hum", design, "--tolerance", "1%", "--json", tmp_path / "hum-tolerance.json", "--histogram", tmp_path / "hist.png")
    if design.stem in ("edge-matched-coils", "edge-reversed-same-point"):  # hum-only renders (3 × 4 s), measured: exact and added hum
        run("hum", design, "--out", tmp_path / "hum-audio", "--json", tmp_path / "hum-audio.json", "--png", tmp_path / "hum.png")
    if edge:
        run("clips", design, "--seconds", 2, "--no-plots", "--no-hum", "--out", tmp_path / "clips-no-hum")
    run("clips", design, "--seconds", 2, "--no-plots", "--passive", "--noise", "--out", tmp_path / "clips")
    run("bias", design, "--seconds", 2, "--ratios", "0.3,0.5", "--out", tmp_path / "bias", "--json", tmp_path / "bias.json")
    position, aperture = coil_a_point(design)
    run("dry", ROOT / "dry_signals" / "default.toml", "--position", position, "--aperture", aperture, "--seconds", 2, "--no-spectrogram", "--out", tmp_path / "dry.wav")
    run("fit", FIT, "--from", design, "--top", 1, "--out", tmp_path / "fit")
    run("unvoice", DI, design, "--no-plot", "--out", tmp_path / "velocity.wav")
    run("netlist", design, "--out", tmp_path / "design.cir")
    run("sense", design, "--json", tmp_path / "sense.json", *(["--png", tmp_path / "sense.png"] if edge else []))
    run.problems += watch_problems(design)
    if run("blind", design, REFERENCE, "--seconds", 2, "--trials", 5, "--out", tmp_path / "blind") == 0:
        answer_every_trial(tmp_path / "blind")
        run("score", tmp_path / "blind", "--json", tmp_path / "score.json")
    for path in sorted(tmp_path.rglob("*.json")):
        run.problems += check_json(path)
    for path in sorted(tmp_path.rglob("*.csv")):  # an exactly zero response leaves its cells empty
        if NUMBER_WORDS.search(path.read_text(encoding="utf-8")):
            run.problems.append(f"{path.name}: holds nan or inf")
    assert not run.problems, "\n".join(run.problems)


@pytest.mark.parametrize("rig", RIGS, ids=lambda p: p.stem)
@pytest.mark.parametrize("design", SHIPPED + EDGES, ids=lambda p: p.stem)
def test_every_rig_command_runs_with_each_shipped_rig(design, rig, tmp_path):
    run = Runner(design.stem, RIG_REFUSALS)
    with_rig = ("--rig", rig)
    run("check", design, *with_rig, "--json", tmp_path / "check.json")
    run("response", design, *with_rig, "--csv", tmp_path / "response.csv")
    run("noise", design, *with_rig, "--json", tmp_path / "noise.json")
    run("hum", design, *with_rig, "--map", "--json", tmp_path / "hum.json")
    run("netlist", design, *with_rig, "--out", tmp_path / "design.cir")
    run("clips", design, *with_rig, "--seconds", 1, "--no-plots", "--passive", "--out", tmp_path / "clips")
    if design.stem in RIG_RENDERS:
        run("bias", design, *with_rig, "--seconds", 1, "--ratios", "0.3,0.5", "--out", tmp_path / "bias", "--json", tmp_path / "bias.json")
        run("fit", FIT, "--from", design, *with_rig, "--top", 1, "--out", tmp_path / "fit")
        run("unvoice", DI, design, *with_rig, "--no-plot", "--out", tmp_path / "velocity.wav")
        run("blind", design, REFERENCE, *with_rig, "--seconds", 2, "--trials", 5, "--out", tmp_path / "blind")
    check_outputs(run, tmp_path)


def check_outputs(run, folder):
    """Every JSON under folder passes check_json and no CSV holds nan or inf; then no run reported a problem."""
    for path in sorted(folder.rglob("*.json")):
        run.problems += check_json(path)
    for path in sorted(folder.rglob("*.csv")):
        if NUMBER_WORDS.search(path.read_text(encoding="utf-8")):
            run.problems.append(f"{path.name}: holds nan or inf")
    assert not run.problems, "\n".join(run.problems)


@pytest.mark.parametrize("fit", FITS, ids=lambda p: p.stem)
def test_every_shipped_fit_runs_from_its_own_design(fit, tmp_path):
    run = Runner(fit.stem)
    run("fit", fit, "--top", 1, "--out", tmp_path / "fit")
    run.problems += [p for path in tmp_path.rglob("*.json") for p in check_json(path)]
    assert not run.problems, "\n".join(run.problems)


def test_every_shipped_file_is_covered():
    # every TOML under models/ is a design, a comparison pickup or a fit, and each class has a test above
    # (or in test_compare_smoke.py); the designs in subfolders are among them
    assert set(MODEL_FILES) == set(SHIPPED) | set(PASSIVES) | set(FITS)
    assert ROOT / "models" / "bobbins" / "studio-bobbin.toml" in SHIPPED and PASSIVES and FITS and RIGS


@pytest.mark.parametrize("phrase", PHRASES, ids=lambda p: p.name)
def test_every_phrase_plays_through_clips(phrase, tmp_path):
    run = Runner(REFERENCE.stem)
    run("clips", REFERENCE, "--dry", phrase, "--no-plots", "--out", tmp_path / "clips")
    run.problems += [p for path in tmp_path.rglob("*.json") for p in check_json(path)]
    assert not run.problems, "\n".join(run.problems)


def test_every_design_together(tmp_path):
    # one run over all designs, shipped and edge: the overlays, the summary and parallel workers
    run = Runner("all")
    every = SHIPPED + EDGES
    run("check", *every, "--json", tmp_path / "check.json")
    run("hum", *every, "--png", tmp_path / "hum.png", "--json", tmp_path / "hum.json")
    run("clips", *every, "--seconds", 2, "--jobs", 2, "--out", tmp_path / "clips")
    for path in sorted(tmp_path.rglob("*.json")):
        run.problems += check_json(path)
    assert not run.problems, "\n".join(run.problems)


def test_the_expected_refusals_are_documented():
    table = _refusal_table()
    for fragment in set(REFUSALS.values()) | {NO_CONSTRUCTION}:
        assert fragment in table, f"README.md's refusal table does not name {fragment!r}"


def test_undefined_figures_are_words_and_null_with_a_reason(tmp_path):
    # matched coils: hum cancels exactly (arithmetic: V_A = -V_B); reversed coil at one point: the signal does
    matched, silent = (Path(__file__).parent / "designs" / f"{n}.toml" for n in ("edge-matched-coils", "edge-reversed-same-point"))
    cli = CliRunner()
    res = cli.invoke(main, ["hum", str(matched), "--json", str(tmp_path / "m.json")])
    assert res.exit_code == 0 and "no hum: the coils cancel exactly" in res.output
    h = json.loads((tmp_path / "m.json").read_text())
    assert h["note_to_hum_db"] is None and h["note_to_hum_db_reason"] == "no hum: the coils cancel exactly"
    assert h["harmonics"][0]["rejection_db"] is None and h["harmonics"][0]["rejection_db_reason"].startswith("infinite")
    res = cli.invoke(main, ["check", str(silent), "--json", str(tmp_path / "s.json")])
    assert res.exit_code == 0 and "no signal: the coils cancel the string signal exactly" in res.output
    fig = json.loads((tmp_path / "s.json").read_text())["designs"][0]["figures"]
    for key in ("level_1k_db", "peak_hz", "q", "gain_vs_passive_db"):
        assert fig[key] is None and fig[f"{key}_reason"].startswith("no signal"), key
    res = cli.invoke(main, ["noise", str(silent), "--json", "-"])
    n = json.loads(res.stdout)
    assert n["snr_db"] is None and n["snr_db_reason"].startswith("no signal")
