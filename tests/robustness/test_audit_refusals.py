"""Implausible or broken inputs that are not command-line options: each refused in one line, exit 1,
no traceback, nothing left behind; and ``--overwrite`` leaving only the new run's files.

No check values that need a source here: exit codes, message text, file names and lengths
(the 10 cm near-dipole threshold is a rule of thumb, "common practice, no source", in
``render.magnetics.schema.NEAR_DIPOLE_M``, as is a clip's 0.05 s minimum in ``render.dry``;
a blind session's 0.5 s holds one 400 ms ITU-R BS.1770-4 loudness block, and is its --seconds' minimum too).
"""

from __future__ import annotations

import os

import numpy as np
import pytest

from .conftest import DARK, REF, ROOT, assert_refused, run

MEASURED = ROOT / "models" / "measured-blade.toml"
CSV = ROOT / "models" / "coils" / "harbour-blade-coil.synthetic.csv"


def design_with(tmp_path, extra: str, base=REF, name="d.toml"):
    path = tmp_path / name
    path.write_text(base.read_text(encoding="utf-8") + "\n" + extra, encoding="utf-8")
    return path


def dipole(at: str, moment: str = "0.05") -> str:
    return f'[hum]\nmains = "50Hz"\n\n[[hum.source]]\nkind = "dipole"\nmoment = {moment}\nat = {at}\n'


def wav(path, seconds: float, rate: int = 48000):
    import soundfile as sf

    n = int(round(seconds * rate))
    sf.write(str(path), (0.1 * np.sin(2 * np.pi * 440 * np.arange(n) / rate)).astype(np.float32), rate, subtype="FLOAT")
    return path


@pytest.mark.parametrize("command", ["check", "hum", "response", "noise"])
def test_all_zero_harmonics_are_refused(tmp_path, command):
    path = design_with(tmp_path, "[hum]\nharmonics = [0, 0, 0]\n")
    assert_refused(run(command, path), "[hum] harmonics=[0, 0, 0]: every amplitude is 0, so there is no hum field; give the fundamental 1.0")


def test_a_sources_own_all_zero_profile_is_refused(tmp_path):
    text = dipole('["0.5m", "0m", "0m"]') + "harmonics = [0, 0, 0, 0, 0, 0, 0, 0, 0]\n"
    assert_refused(run("check", design_with(tmp_path, text)), "[hum.source 1] harmonics=[0, 0, 0, 0, 0, 0, 0, 0, 0]: every amplitude is 0")


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        (dipole('["0.5m", "0m", "0m"]', "0"), "[hum.source 1] moment=0: a source of no strength makes no hum; give its moment"),
        ('[hum]\n[[hum.source]]\nkind = "uniform"\nfield = "0T"\n', "[hum.source 1] field=0: a source of no strength makes no hum; give its field"),
    ],
)
def test_a_source_of_no_strength_is_refused(tmp_path, text, fragment):
    assert_refused(run("hum", design_with(tmp_path, text)), fragment)


@pytest.mark.parametrize("at", ['["0.05m", "0m", "0m"]', '["0m", "0m", "0m"]', '["0m", "0.08m", "0.02m"]'])
def test_a_dipole_nearer_than_10_cm_to_a_coil_is_refused(tmp_path, at):
    for command in ("check", "hum", "clips"):
        out = tmp_path / f"out-{command}"
        extra = ("--out", out, "--seconds", 0.5) if command == "clips" else ()
        msg = assert_refused(run(command, design_with(tmp_path, dipole(at)), *extra), "closer than 10 cm: a point dipole there stands for no real source")
        assert "move it 10 cm or more from both coils" in msg
        assert not out.exists()


def test_a_near_dipole_in_a_rig_names_the_rig(tmp_path):
    rig = tmp_path / "rig.toml"
    rig.write_text(dipole('["0.09m", "0m", "0m"]'), encoding="utf-8")
    msg = assert_refused(run("hum", REF, "--rig", rig), "closer than 10 cm")
    assert msg.startswith(f"Error: {rig}: [hum.source 1]")
    rig.write_text(dipole('["0.105m", "0m", "0m"]'), encoding="utf-8")  # coil_b's centre sits at x = +9 mm: 9.6 cm from it
    assert_refused(run("hum", REF, "--rig", rig), "9.6 cm from coil_b's centre, closer than 10 cm")
    rig.write_text(dipole('["0.12m", "0m", "0m"]'), encoding="utf-8")  # 11.1 cm and 12.9 cm: used
    assert run("hum", REF, "--rig", rig).exit_code == 0


def scaled_csv(tmp_path, factor: float):
    out = []
    for line in CSV.read_text(encoding="utf-8").splitlines():
        if line[:1].isdigit():
            f, z, p = line.split(",")
            line = f"{f},{float(z) * factor:g},{p}"
        out.append(line)
    (tmp_path / "coils").mkdir(exist_ok=True)
    path = tmp_path / "coils" / f"x{factor:g}.csv"
    path.write_text("\n".join(out) + "\n", encoding="utf-8")
    design = tmp_path / f"m{factor:g}.toml"
    design.write_text(MEASURED.read_text(encoding="utf-8").replace("coils/harbour-blade-coil.synthetic.csv", f"coils/{path.name}"), encoding="utf-8")
    return design


@pytest.mark.parametrize("command", ["check", "coil", "response"])
def test_a_measured_coil_outside_the_typed_limits_is_refused(tmp_path, command):
    design = scaled_csv(tmp_path, 1000.0)  # |Z| in kΩ read as Ω: R_dc 4.1 MΩ, past the 1 MΩ a typed resistance may have
    msg = assert_refused(run(command, design), "[coil_a] measured='coils/x1000.csv': the fitted resistance 4.1 MΩ: expected a plausible value, at least 1 Ω and at most 1 MΩ")
    assert "check the file's units" in msg


@pytest.mark.parametrize("seconds", [1 / 48000, 0.02, 0.049])
def test_a_recording_too_short_for_a_clip_is_refused(tmp_path, seconds):
    short = wav(tmp_path / "short.wav", seconds)
    out = tmp_path / "out"
    msg = assert_refused(run("clips", REF, "--dry", short, "--out", out), "too short:")
    assert "at least 0.05 s is needed to measure a clip; give a longer recording" in msg and not out.exists()
    assert "(1 sample at 48000 Hz)" in msg if seconds < 1e-3 else "samples at 48000 Hz" in msg


def test_a_recording_too_short_for_a_blind_session_is_refused(tmp_path):
    short = wav(tmp_path / "short.wav", 0.45)
    out = tmp_path / "out"
    msg = assert_refused(run("blind", REF, DARK, "--dry", short, "--out", out), "too short: 450 ms (21600 samples at 48000 Hz)")
    assert "at least 0.5 s is needed to level a blind session's clips" in msg and not out.exists()
    # the same least length as --seconds takes
    assert_refused(run("blind", REF, DARK, "--seconds", "0.45", "--out", out), "--seconds=0.45: must be from 0.5 s")


def test_a_di_too_short_to_unvoice_is_refused_and_leaves_no_folder(tmp_path):
    di = wav(tmp_path / "di.wav", 0.45)
    out = tmp_path / "new" / "run"
    msg = assert_refused(run("clips", REF, "--dry", di, "--from-di", REF, "--out", out), "too short: 450 ms")
    assert "at least 0.5 s is needed to read its noise floor" in msg
    assert not (tmp_path / "new").exists()  # neither the run's folder nor the parent it would have made


def test_a_silent_di_refused_after_the_folder_was_made_leaves_nothing(tmp_path):
    import soundfile as sf

    di = tmp_path / "silent.wav"
    sf.write(str(di), np.zeros(48000), 48000)
    out = tmp_path / "run"
    assert_refused(run("clips", REF, "--dry", di, "--from-di", REF, "--out", out), "every sample is 0")
    assert not out.exists()


def test_a_note_after_the_phrases_end_is_refused(tmp_path):
    phrase = tmp_path / "late.toml"
    phrase.write_text('seconds = 1.0\n[[note]]\ntime = 0\npitch = "A2"\n[[chord]]\ntime = 1.0\nfrets = [0, 2, 2, 1, 0, 0]\n', encoding="utf-8")
    out = tmp_path / "late.wav"
    assert_refused(run("dry", phrase, "--out", out), "[[chord]] #1 time=1.0: starts at or after the phrase's end (seconds = 1), so it is never heard; raise seconds above 1, or move the event earlier")
    assert not out.exists()


def test_velocity_scale_with_a_phrase_is_refused(tmp_path):
    out = tmp_path / "out"
    assert_refused(run("clips", REF, "--velocity-scale", 2, "--out", out), "--velocity-scale=2: scales a recorded dry file, not the phrase")
    assert not out.exists()


def test_overwrite_leaves_only_this_runs_files(tmp_path):
    out = tmp_path / "run"
    assert run("clips", REF, DARK, "--seconds", 0.5, "--out", out, "--no-plots").exit_code == 0
    assert (out / "ember-dark.wav").exists() and (out / "ember-dark.json").exists()
    (out / "notes.txt").write_text("mine\n", encoding="utf-8")
    res = run("clips", REF, "--seconds", 0.5, "--out", out, "--no-plots", "--overwrite")
    assert res.exit_code == 0, res.output
    names = sorted(p.name for p in out.iterdir())
    assert names == [".run-files", "index-clips.js", "index.html", "notes.txt", "studio-reference.json", "studio-reference.wav", "summary.md"]
    assert (out / ".run-files").read_text(encoding="utf-8").splitlines() == [n for n in names if n not in (".run-files", "notes.txt")]
    # plots come back with the next run and go with the one after
    assert run("clips", REF, "--seconds", 0.5, "--out", out, "--overwrite").exit_code == 0
    assert (out / "studio-reference-response.png").exists()
    assert run("clips", REF, "--seconds", 0.5, "--out", out, "--no-plots", "--overwrite").exit_code == 0
    assert not list(out.glob("*.png")) and (out / "notes.txt").exists()


def test_a_stopped_runs_files_are_listed_as_they_are_begun_and_go_with_the_next_overwrite(tmp_path):
    # the list is the project's own record (render.io.folders.run_folder): a stopped run never writes its whole list,
    # so each name is appended before its file exists; a file written while no run of this process marks the folder
    # (another command, after the stop) is not the run's, and stays
    from render.io.atomic import write_text
    from render.io.folders import INCOMPLETE, run_folder

    out = tmp_path / "run"
    with pytest.raises(KeyboardInterrupt), run_folder(out):
        write_text(out / "a.wav", "x")
        (out / "sub").mkdir()
        write_text(out / "sub" / "b.json", "{}")
        raise KeyboardInterrupt  # what a stop becomes in the command
    assert (out / INCOMPLETE).exists()
    assert (out / ".run-files").read_text(encoding="utf-8").splitlines() == ["a.wav", "sub/b.json"]
    marker = out / INCOMPLETE
    marker.write_text(marker.read_text(encoding="utf-8").replace(f"process {os.getpid()}.", "process 1."), encoding="utf-8")  # a run long gone
    write_text(out / "c.md", "by another command\n")
    (out / ".tmp-d.wav.abcdefgh").write_bytes(b"RIFF")
    assert (out / ".run-files").read_text(encoding="utf-8").splitlines() == ["a.wav", "sub/b.json"]
    with run_folder(out):
        write_text(out / "d.wav", "y")
    assert sorted(p.name for p in out.iterdir()) == [".run-files", "c.md", "d.wav"]
    assert (out / ".run-files").read_text(encoding="utf-8") == "d.wav\n"


def test_a_near_dipole_names_the_nearer_coil(tmp_path):
    # coil_b's centre sits at x = +9 mm (positions 38 and 56 mm, the origin midway): a dipole 3 cm beyond it is
    # 3 cm from coil_b and 4.8 cm from coil_a (arithmetic): the refusal names coil_b
    msg = assert_refused(run("check", design_with(tmp_path, dipole('["0.039m", "0m", "0m"]'))), "closer than 10 cm")
    assert "3 cm from coil_b's centre" in msg
