"""Bad command-line values are refused as the command line is read, before any work.

Each case: exit code 1, one line on stderr (``Error: …``, the option, the value, what is
wrong and the fix, as README's "Refusals and their fixes" prints it), no traceback,
nothing on stdout (no report was begun) and no output file or folder left behind.
The project's rule for bad input (common practice for command-line tools, no source).
The seed's bound is numpy's legacy RandomState and scipy's optimisers' (seeds from 0 to
2**32 - 1, as their documentation states); a NaN passing a range check is IEEE 754's
rule that every comparison with NaN is false.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from render.cli import main

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
PHRASE = ROOT / "dry_signals" / "default.toml"
DI = ROOT / "dry_signals" / "last_chord_2s.wav"
FIT = ROOT / "models" / "fits" / "brighter-reference.toml"


def refused(args, *, left=()) -> str:
    """The one line of a refusal (``Error: `` taken off); every check above made."""
    res = CliRunner().invoke(main, [str(a) for a in args])
    assert res.exception is None or isinstance(res.exception, SystemExit), repr(res.exception)
    assert res.exit_code == 1, res.output
    assert "Traceback" not in res.output
    assert res.stdout == "", res.stdout  # refused before any report was begun
    lines = res.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), res.stderr
    for p in left:
        assert not Path(p).exists(), p
    return lines[0].removeprefix("Error: ")


@pytest.fixture()
def here(tmp_path, monkeypatch):
    """tmp_path as the working folder (a default outputs/ folder would appear here), with a file in it."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "afile").write_text("not a folder\n", encoding="utf-8")
    return tmp_path


# --------------------------------------------------------------------------
# Numbers: NaN, infinities, text, out of range


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["clips", REF, "--volts-full-scale", "nan"], "--volts-full-scale=nan: not a finite number; give one above 0.001 and at most 100 V"),
        (["clips", REF, "--seconds", "inf"], "--seconds=inf: not a finite number; give one from 0.05 to 3600 s"),
        (["clips", REF, "--velocity-scale", "-inf"], "--velocity-scale=-inf: not a finite number; give one above 1e-06 and at most 1000 m/s"),
        (["bias", REF, "--sine-velocity", "nan"], "--sine-velocity=nan: not a finite number; give one from 0.001 to 100 m/s"),
        (["bias", REF, "--sine-velocity", "0"], "--sine-velocity=0: out of range; give a number from 0.001 to 100 m/s"),
        (["bias", REF, "--sine-velocity", "-1"], "--sine-velocity=-1: out of range; give a number from 0.001 to 100 m/s"),
        (["bias", REF, "--sine-velocity", "1e9"], "--sine-velocity=1e9: out of range; give a number from 0.001 to 100 m/s"),
        (["bias", REF, "--sine-velocity", "fast"], "--sine-velocity=fast: not a number; give one from 0.001 to 100 m/s"),
        (["bias", REF, "--target-lufs", "nan"], "--target-lufs=nan: not a finite number; give one from -70 to 0 LUFS"),
        (["bias", REF, "--seconds", "700"], "--seconds=700: out of range; give a number from 0.5 to 600 s"),
        (["noise", REF, "--temperature", "nan"], "--temperature=nan: not a finite number; give one from 200 to 400 K; kelvin, not °C: 25 °C is 298.15 K"),
        (["noise", REF, "--reference-velocity", "inf"], "--reference-velocity=inf: not a finite number; give one from 0.0001 to 10 m/s rms"),
        (["response", REF, "--fmin", "nan"], "--fmin=nan: not a finite number; give one from 1 to 100000 Hz"),
        (["check", REF, "--turns-sweep", "nan"], "--turns-sweep=nan: not a finite number; give one from 0.1 to 50 %"),
        (["watch", REF, "--seconds", "nan", "--no-browser"], "--seconds=nan: not a finite number; give one from 0.05 to 600 s"),
    ],
    ids=lambda x: " ".join(map(str, x[2:])) if isinstance(x, list) else None,
)
def test_numbers_must_be_finite_and_in_range(here, args, message):
    if args[0] in ("clips", "bias"):  # a run folder that must not appear
        args = [*args, "--out", "o"]
    assert refused(args, left=[here / "o", here / "outputs"]) == message


# --------------------------------------------------------------------------
# Seeds: 0 to 2**32 - 1 (render blind's key seed: 0 to 2**63 - 1, its own check)

SEED_REFUSAL = "a seed must be a whole number from 0 to 4294967295 (2**32-1); 0 is the default"


@pytest.mark.parametrize(
    "args",
    [
        ["clips", REF, "--out", "o"],
        ["bias", REF, "--out", "o"],
        ["hum", REF, "--tolerance", "1%", "--json", "o"],  # numpy's SeedSequence raised ValueError here
        ["fit", FIT, "--out", "o"],  # scipy's optimiser raised ValueError here
        ["dry", PHRASE, "--out", "o.wav"],
        ["watch", REF, "--no-browser"],
    ],
    ids=lambda a: a[0],
)
@pytest.mark.parametrize("seed", ["-1", str(2**32), str(2**70)])
def test_seeds_out_of_range_are_refused(here, args, seed):
    assert refused([*args, "--seed", seed], left=[here / "o", here / "outputs"]) == f"--seed={seed}: {SEED_REFUSAL}"


def test_the_largest_seed_is_accepted(here):
    res = CliRunner().invoke(main, ["dry", str(PHRASE), "--out", "v.wav", "--seconds", "0.1", "--no-spectrogram", "--seed", str(2**32 - 1)])
    assert res.exit_code == 0, res.output
    assert (here / "v.wav").is_file()


# --------------------------------------------------------------------------
# Output files and folders

PNG_OPTIONS = [
    (["noise", REF, "--png"], "noise.png"),
    (["response", REF, "--png"], "response.png"),
    (["hum", REF, "--png"], "hum.png"),
    (["hum", REF, "--tolerance", "1%", "--histogram"], "histogram.png"),
    (["hum", REF, "--map-png"], "map.png"),
    (["coil", REF, "--png"], "coils.png"),
    (["coil", REF, "--csv"], "coils.csv"),
    (["sense", REF, "--png"], "sense.png"),
    (["dry", PHRASE, "--out"], "phrase.wav"),
    (["unvoice", DI, REF, "--out"], "velocity.wav"),
    (["score", ROOT, "--png"], "difference.png"),
    (["coil", "fit", DI, "--out"], "coil.toml"),
]


@pytest.mark.parametrize(("args", "example"), PNG_OPTIONS, ids=lambda x: " ".join(str(a) for a in x[-2:]) if isinstance(x, list) else None)
def test_standard_output_only_where_a_file_can_go_there(here, args, example):
    assert refused([*args, "-"], left=[here / "-"]) == f"{args[-1]}=-: this file cannot go to standard output; give a file name such as {example}"


@pytest.mark.parametrize(
    "args",
    [["noise", REF, "--json"], ["check", REF, "--json"], ["response", REF, "--csv"], ["hum", REF, "--png"], ["netlist", REF, "--out"], ["coil", REF, "--csv"], ["bias", REF, "--no-clips", "--json"]],
    ids=lambda a: f"{a[0]} {a[-1]}",
)
def test_an_output_in_a_missing_folder_is_refused_before_the_work(here, args):
    name = "missing/x.png" if args[-1] == "--png" else "missing/x.out"  # a PNG goes under its own ending
    line = refused([*args, name], left=[here / "missing"])
    assert line == f"{args[-1]}={name}: folder missing does not exist; create it first or choose another path"


def test_an_output_file_that_is_a_folder_or_inside_a_file(here):
    (here / "plots").mkdir()
    assert refused(["noise", REF, "--png", "plots"]) == "--png=plots: is a folder; give a file name inside it, such as plots/noise.png"
    assert refused(["noise", REF, "--json", "afile/x.json"]) == "--json=afile/x.json: afile is a file, not a folder; choose another path"
    assert refused(["clips", REF, "--out", "afile/run"]) == "--out=afile/run: afile is a file, not a folder; choose another path"


@pytest.mark.parametrize(("option", "value", "twice"), [("--ratios", "0.3,0.5,0.3", "0.3"), ("--battery", "9,9V", "9V"), ("--ratios", "0.5,0.50", "0.50")])
def test_a_bias_setting_given_twice_is_refused(here, option, value, twice):
    assert refused(["bias", REF, "--no-clips", option, value]) == f"{option}={value!r}: {twice!r} is given twice; give each setting once"


def test_an_output_folder_with_no_clips_is_refused(here):
    assert refused(["bias", REF, "--no-clips", "--out", "run"], left=[here / "run"]) == "--out=run: --no-clips writes no folder; drop --out, or drop --no-clips to write the clips there"


def test_an_output_file_in_a_folder_that_cannot_be_written_is_refused_before_the_work(here, monkeypatch):
    # the folder is tried with an unnamed temporary file (Linux's O_TMPFILE), which touches nothing; a folder that
    # refuses it (EACCES here, as a folder without write permission gives a user other than root) is refused as
    # the command line is read, before the report is printed, and the folder's own mtime is left alone
    import errno
    import os

    if getattr(os, "O_TMPFILE", None) is None:
        pytest.skip("needs O_TMPFILE (Linux)")
    locked = here / "locked"
    locked.mkdir()
    real_open = os.open

    def refusing_open(path, flags, *args, **kwargs):
        if Path(path) == locked and flags & os.O_TMPFILE == os.O_TMPFILE:
            raise PermissionError(errno.EACCES, "Permission denied")
        return real_open(path, flags, *args, **kwargs)

    monkeypatch.setattr(os, "open", refusing_open)
    before = locked.stat().st_mtime_ns
    line = refused(["noise", REF, "--json", str(locked / "x.json")])
    assert line == f"--json={locked / 'x.json'}: {locked}: cannot write here (Permission denied); check the folder's permissions or choose another folder"
    assert locked.stat().st_mtime_ns == before and not list(locked.iterdir())


@pytest.mark.parametrize("command", [["clips", REF], ["bias", REF], ["blind", REF, REF], ["hum", REF], ["fit", FIT]], ids=lambda a: a[0])
def test_an_output_folder_that_is_a_file(here, command):
    assert refused([*command, "--out", "afile"], left=[here / "outputs"]) == "--out=afile: is a file; give a folder"
    assert (here / "afile").read_text(encoding="utf-8") == "not a folder\n"


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["clips", REF, "--out", ""], "--out='': give a folder's name, such as outputs/run-1"),
        (["hum", REF, "--out", ""], "--out='': give a folder's name, such as outputs/run-1"),
        (["dry", PHRASE, "--out", ""], "--out='': an empty path; give a file name such as phrase.wav"),  # was a ValueError
        (["hum", REF, "--json", ""], "--json='': an empty path; give a file name such as out.json"),
        (["netlist", REF, "--out", ""], "--out='': an empty path; give a file name such as pickup.cir"),
        (["clips", REF, "--dry", "", "--out", "o"], "--dry='': an empty path; give the file's path, or leave the option out"),
        (["check", REF, "--rig", ""], "--rig='': an empty path; give the file's path, or leave the option out"),
        (["check", REF, "--compare", ""], "--compare='': an empty path; give the file's path, or leave the option out"),
        (["fit", FIT, "--from", "", "--out", "o"], "--from='': an empty path; give the file's path, or leave the option out"),
        (["check", ""], "MODELS='': an empty path; give the file's path, or leave the option out"),
    ],
    ids=lambda x: " ".join(map(str, x[2:4])) if isinstance(x, list) else None,
)
def test_an_empty_path_is_refused(here, args, message):
    assert refused(args, left=[here / "o", here / "outputs"]) == message


# --------------------------------------------------------------------------
# Values that go together, and command-specific limits


def test_hum_trials_need_a_tolerance(here):
    line = refused(["hum", REF, "--trials", "100", "--json", "o.json"], left=[here / "o.json"])
    assert line == ("--trials counts the tolerance Monte Carlo's draws: add --tolerance (e.g. --tolerance 1%), or leave --trials out (--positions N sets the random sources' count)")


@pytest.mark.parametrize("shell", [("2m", "0.3m"), ("-1m", "2m")])
def test_hum_shell_radii_in_order(here, shell):
    line = refused(["hum", REF, "--positions", "10", "--shell", *shell, "--json", "o.json"], left=[here / "o.json"])
    assert line == f"--shell {' '.join(shell)}: expected 0 < inner ≤ outer radius; give two radii such as 0.3m 2m"


def test_hum_shell_keeps_its_dipoles_as_far_as_a_design_source(here):
    # 10 cm, the distance a [[hum.source]] dipole must keep from each coil (common practice, no source); the shell's
    # radii are from the midpoint, so 10.5 cm is 9.6 cm from the nearer coil of a pair 18 mm apart: refused too
    for inner, near in (("0.05m", "4.1"), ("0.105m", "9.6")):
        line = refused(["hum", REF, "--positions", "10", "--shell", inner, "2m", "--json", "o.json"], left=[here / "o.json"])
        assert line == (
            f"--shell {inner} 2m: the shell's nearest places are {near} cm from coil_a's centre, closer than 10 cm: a point dipole there stands"
            " for no real source (the pickup's own field region); give an inner radius of 0.109 m or more"
        )


def test_dry_renders_at_most_600_seconds(here):
    line = refused(["dry", PHRASE, "--out", "v.wav", "--seconds", "700"], left=[here / "v.wav", here / "v-spectrogram.png"])
    assert line == "--seconds=700s: must be at least 0.05 s (a pluck's first periods) and at most 600 s (a phrase renders in memory)"


def test_battery_takes_volts_with_or_without_the_unit(here):
    """ "9V" and "9 V" are the same sweep as "9" (SI: a plain number is in volts)."""
    runs = {}
    for text in ("9", "9V", "9 V"):
        res = CliRunner().invoke(main, ["bias", str(REF), "--no-clips", "--ratios", "0.5", "--battery", text, "--json", "-"])
        assert res.exit_code == 0, res.output
        runs[text] = json.loads(res.stdout)
    assert runs["9V"] == runs["9"] == runs["9 V"]
    assert refused(["bias", REF, "--no-clips", "--battery", "9F"]).startswith("--battery='9F': cannot read '9F'; give a comma-separated list like 9,8,7 or 9V,8V,7V")


@pytest.mark.skipif(not Path("/proc/self").is_dir(), reason="needs /proc, a folder no one can create files in")
def test_score_refuses_a_plot_it_cannot_write(here):
    """A finished session whose --png cannot be written: refused, the score not printed, nothing written."""
    from render.listening.answers import AnswerLog
    from render.listening.build import build_session
    from render.listening.layout import load_plan
    from render.listening.loudness import match_loudness
    from tests.listening.conftest import MODELS, design_record, synthetic_pair

    signals, match = match_loudness(synthetic_pair(16000, 1.0), sample_rate=16000, names=["a", "b"])
    paths = build_session(here / "s", signals, sample_rate=16000, method="abx", trials=2, seed=5, designs=[design_record(p) for p in MODELS], record={"rig": None, "loudness": match.record()})
    key = json.loads(paths.key.read_text(encoding="utf-8"))
    with AnswerLog(paths, load_plan(paths)) as log:
        for t in key["trials"]:
            log.record({"trial": t["index"], "answer": t["x"]})
    line = refused(["score", paths.root, "--png", "/proc/difference.png"], left=[paths.results])
    assert line.startswith("/proc: cannot write here (") and line.endswith("); choose another folder"), line


@pytest.mark.parametrize(
    "command",
    [["clips", "{bad}"], ["bias", "{bad}"], ["blind", "{bad}", REF], ["blind", REF, "{bad}"], ["fit", "{bad}"], ["fit", FIT, "--from", "{bad}"]],
    ids=lambda a: " ".join(Path(str(x)).name for x in a),
)
def test_a_refused_design_leaves_no_default_outputs_folder(here, command):
    # no --out: the run's folder would go under outputs/, which must not appear for a run refused before its work
    # (render blind made outputs/ before it read its designs: found by a sweep of the real command line)
    (here / "bad.toml").write_text("x = = 1\n", encoding="utf-8")
    message = refused([str(a).format(bad="bad.toml") for a in command], left=[here / "outputs"])
    assert message.startswith("bad.toml: not valid TOML"), message
