"""``render unvoice`` and the ``--from-di`` shortcut of ``clips`` and ``blind``: files, records, refusals."""

from __future__ import annotations

import hashlib
import json
import math

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

import render.runs.unvoice as run_unvoice
from render.analysis import unvoice as U
from render.circuit.engine import design_responses
from render.cli import main
from render.cli.unvoice import unvoice_command
from render.design import load_designs
from render.dry.modal import string_velocity
from render.dry.phrase import load_phrase
from render.io.wav import float_wav_bytes

from .helpers import GLASS, PHRASE, REF, SAMPLE_RATE, band_levels_db, engine_di, write_wav

KEYS = {"di", "design", "design_file", "design_sha256", "rig", "velocity", "trusted_band_hz", "trust_rule", "regularisation", "model_error", "bands", "warnings", "software_version"}
REG_KEYS = {"method", "max_boost_db", "lambda_gain", "gain_limit_db", "max_inverse_gain_db", "noise_floor", "low_taper_hz", "fir_taps", "passband_cost_db"}


@pytest.fixture(scope="module")
def di(tmp_path_factory):
    """A 1.2 s DI of the test phrase through the reference's passive circuit (engine response by FFT), with a little noise."""
    (d,), _ = load_designs([REF])
    v = string_velocity(load_phrase(PHRASE), sample_rate=SAMPLE_RATE, positions=(d.coil_a.position,), apertures=(d.coil_a.aperture,), seed=0, seconds=1.2)[0]
    y = engine_di(d, v, sample_rate=SAMPLE_RATE) + 1e-5 * np.random.default_rng(1).standard_normal(v.size)
    folder = tmp_path_factory.mktemp("di")
    return write_wav(folder / "take.wav", y), y


def run(*args, command=unvoice_command):
    return CliRunner().invoke(command, [str(a) for a in args], catch_exceptions=False)


def test_writes_the_velocity_json_and_plot(di, tmp_path):
    path, y = di
    out = tmp_path / "v.wav"
    res = run(path, REF, "--out", out)
    assert res.exit_code == 0, res.output
    assert "trusted band" in res.output and "gain limit" in res.output
    for p in (out, tmp_path / "v.json", tmp_path / "v-spectra.png"):
        assert p.is_file(), p
    info = sf.info(out)
    assert (info.samplerate, info.channels, info.subtype, info.frames) == (SAMPLE_RATE, 1, "FLOAT", y.size)
    rec = json.loads((tmp_path / "v.json").read_text())
    assert KEYS <= set(rec) and REG_KEYS <= set(rec["regularisation"])
    assert rec["di"]["volts_full_scale"] == 1.0 and rec["velocity"]["velocity_scale"] == 1.0
    assert rec["design_sha256"] == hashlib.sha256(REF.read_bytes()).hexdigest()
    assert rec["di"]["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    lo, hi = rec["trusted_band_hz"]
    assert lo < 80 and hi > 5000  # the band the round trip checks (IEC 61260-1 nominal 80 Hz … 5 kHz)
    assert rec["regularisation"]["max_inverse_gain_db"] <= rec["regularisation"]["gain_limit_db"]  # the stated limit holds
    assert {"coil_inductance", "coil_capacitance", "cable_capacitance"} <= set(rec["model_error"])
    # no temporary files left beside the outputs
    assert sorted(p.name for p in tmp_path.iterdir()) == ["v-spectra.png", "v.json", "v.wav"]


def test_streamed_file_equals_the_one_shot_writer_and_the_pure_function(di, tmp_path, monkeypatch):
    path, y = di
    out = tmp_path / "a.wav"
    assert run(path, REF, "--out", out, "--no-plot").exit_code == 0
    x, _ = sf.read(out, dtype="float64")  # libsndfile reads it
    # the streamed header matches render.io.wav byte for byte
    assert out.read_bytes() == float_wav_bytes(x, SAMPLE_RATE)
    (d,), _ = load_designs([REF])
    passive = design_responses([d]).passive_velocity()(U.design_grid(sample_rate=SAMPLE_RATE))[0]
    v, _ = U.unvoice_array(y.astype(np.float32).astype(float), passive=passive, sample_rate=SAMPLE_RATE)
    assert np.array_equal(x, v.astype(np.float32).astype(float))
    # the read block size does not change a byte
    monkeypatch.setattr(run_unvoice, "BLOCK", 1000)
    other = tmp_path / "b.wav"
    assert run(path, REF, "--out", other, "--no-plot").exit_code == 0
    assert other.read_bytes() == out.read_bytes()


def test_volts_full_scale_scales_the_estimate(di, tmp_path):
    path, _ = di
    a, b = tmp_path / "a.wav", tmp_path / "b.wav"
    assert run(path, REF, "--out", a, "--no-plot").exit_code == 0
    assert run(path, REF, "--out", b, "--no-plot", "--volts-full-scale", "2.5").exit_code == 0
    va, _ = sf.read(a)
    vb, _ = sf.read(b)
    # the inverse depends on the recording only through the ratio N/S, which a scale leaves alone: linear
    # (closed form), up to the noise floor's 0.1 dB histogram steps, which move the Wiener term a little
    # in the boost region (common practice, no source: 1e-4 of the peak, 0.001 dB per third octave)
    assert np.max(np.abs(vb - 2.5 * va)) <= 1e-4 * np.max(np.abs(vb))
    centres = 1000.0 * 10.0 ** (np.arange(-17, 14) / 10.0)  # 20 Hz … 20 kHz, IEC 61260-1 base-10 centres
    diff = band_levels_db(vb, sample_rate=SAMPLE_RATE, centres=centres) - band_levels_db(2.5 * va, sample_rate=SAMPLE_RATE, centres=centres)
    assert np.all(np.abs(diff) <= 0.001), diff
    assert json.loads(b.with_suffix(".json").read_text())["di"]["volts_full_scale"] == 2.5


def test_refuses_to_overwrite_and_touches_nothing(di, tmp_path):
    path, _ = di
    out = tmp_path / "v.wav"
    assert run(path, REF, "--out", out).exit_code == 0
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    res = run(path, REF, "--out", out)
    assert res.exit_code == 1
    assert "exists; pass --overwrite" in res.output and len(res.output.strip().splitlines()) == 1
    assert {p.name: p.read_bytes() for p in tmp_path.iterdir()} == before
    # the JSON alone existing is refused as well
    out.unlink()
    res = run(path, REF, "--out", out)
    assert res.exit_code == 1 and "v.json: exists" in res.output and not out.exists()
    assert run(path, REF, "--out", out, "--overwrite").exit_code == 0


def _stereo(folder):
    return write_wav(folder / "stereo.wav", np.zeros((SAMPLE_RATE, 2)) + 0.01)


def _three(folder):
    return write_wav(folder / "three.wav", np.zeros((SAMPLE_RATE, 3)) + 0.01)


def _short(folder):
    return write_wav(folder / "short.wav", 0.01 * np.ones(SAMPLE_RATE // 5))


def _nan(folder):
    x = 0.01 * np.random.default_rng(0).standard_normal(SAMPLE_RATE)
    x[1234] = np.nan
    return write_wav(folder / "nan.wav", x)


def _rate(rate):
    # one second of noise at ``rate``: the velocity WAV keeps the DI's rate, so it must be one render writes (8000 to 384000 Hz)
    return lambda folder: write_wav(folder / f"r{rate}.wav", 0.01 * np.random.default_rng(0).standard_normal(rate), sample_rate=rate)


def _silent(folder):
    return write_wav(folder / "silent.wav", np.zeros(SAMPLE_RATE))


def _text(folder):
    p = folder / "notes.wav"
    p.write_text("not audio")
    return p


def _damaged(folder):
    # a FLAC whose header reads but whose audio stops decoding: 2000 bytes zeroed in the middle
    p = folder / "damaged.flac"
    sf.write(p, 0.01 * np.random.default_rng(0).standard_normal(2 * SAMPLE_RATE), SAMPLE_RATE, format="FLAC", subtype="PCM_16")
    b = p.read_bytes()
    m = len(b) // 2
    p.write_bytes(b[:m] + bytes(2000) + b[m + 2000 :])
    return p


# project rule, no outside source (one-line errors)
@pytest.mark.parametrize(
    "make, extra, expect",
    [
        (lambda f: f / "missing.wav", (), "DI="),
        (_stereo, (), "channels=2: at most 1 (mono)"),
        (_three, (), "channels=3: at most 1 (mono)"),
        (_short, (), "too short: 200 ms"),
        (_nan, (), "sample 1234"),
        (_silent, (), "every sample is 0"),
        (_rate(7999), (), "sample_rate=7999: must be from 8000 to 384000 Hz; resample the recording"),
        (_rate(400000), (), "sample_rate=400000: must be from 8000 to 384000 Hz; resample the recording"),
        (_text, (), "cannot be read as audio"),
        (_damaged, (), "damaged.flac: damaged: its header reads but its audio does not decode ("),
        (None, ("--volts-full-scale", "0"), "--volts-full-scale=0.0"),
        (None, ("--volts-full-scale", "nan"), "--volts-full-scale=nan"),
        (None, ("--max-boost", "55"), "--max-boost=55.0"),
        (None, ("--max-boost", "3"), "--max-boost=3.0: must be from 3.2 to 40"),
        (None, ("--velocity-scale", "-1"), "--velocity-scale=-1.0"),
    ],
)
def test_bad_input_is_one_line_exit_1_and_writes_nothing(di, tmp_path, make, extra, expect):
    src = di[0] if make is None else make(tmp_path)
    before = set(tmp_path.iterdir())
    out = tmp_path / "out.wav"
    res = run(src, REF, "--out", out, *extra)
    assert res.exit_code == 1, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("Error: ") and expect in lines[0], res.output
    assert "Traceback" not in res.output
    assert set(tmp_path.iterdir()) == before  # nothing written, no temporary file left


def test_out_must_be_a_new_wav_in_a_folder_and_the_model_must_load(di, tmp_path):
    res = run(di[0], REF, "--out", tmp_path / "v.flac")
    assert res.exit_code == 1 and "--out=" in res.output and ".wav" in res.output
    res = run(di[0], REF, "--out", tmp_path / "nowhere" / "v.wav")
    assert res.exit_code == 1 and "does not exist" in res.output
    copy = write_wav(tmp_path / "copy.wav", di[1])
    res = run(copy, REF, "--out", copy, "--overwrite")
    assert res.exit_code == 1 and "is the DI itself" in res.output
    bad = tmp_path / "bad.toml"
    bad.write_text(REF.read_text().replace('inductance = "350mH"', 'inductance = "350"', 1))
    res = run(di[0], bad, "--out", tmp_path / "v.wav")
    assert res.exit_code == 1 and "inductance" in res.output and len(res.output.strip().splitlines()) == 1
    assert not (tmp_path / "v.wav").exists()


def test_clips_from_di_unvoices_into_the_run_folder(di, tmp_path):
    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), str(GLASS), "--dry", str(di[0]), "--from-di", str(REF), "--seconds", "0.6", "--out", str(out), "--no-plots"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    vel = out / "take-velocity.wav"
    assert vel.is_file() and (out / "take-velocity.json").is_file()
    for stem in ("studio-reference", "glasswing-bright"):
        rec = json.loads((out / f"{stem}.json").read_text())
        assert "take-velocity.wav" in json.dumps(rec["dry"])
    assert "trusted" in res.output
    # again into the same folder: the velocity is the run's own first file (un-voiced inside the run's
    # folder), so --overwrite's clean-up of the earlier run's files keeps it, and lists it
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(di[0]), "--from-di", str(REF), "--seconds", "0.6", "--out", str(out), "--no-plots", "--overwrite"], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    assert vel.is_file() and (out / "take-velocity.json").is_file() and not (out / "glasswing-bright.wav").exists()
    listed = (out / ".run-files").read_text(encoding="utf-8").splitlines()
    assert "take-velocity.wav" in listed and "studio-reference.wav" in listed and not (out / ".run-claimed").exists()


def test_clips_from_di_unvoices_inside_the_marked_run_folder(di, tmp_path, monkeypatch):
    # the project's own contract (README, "Stopping a run"): a folder without INCOMPLETE.txt holds a finished
    # run, whatever stopped it, SIGKILL included; so the marker is there before the un-voicing writes anything
    real = run_unvoice.unvoice
    seen = []

    def marked_then_stopped(di_path, design, *, out, **kw):
        seen.append(sorted(p.name for p in out.parent.iterdir()))  # what a SIGKILL now would leave
        real(di_path, design, out=out, **kw)
        raise KeyboardInterrupt  # what Ctrl-C, SIGTERM and SIGHUP become in the command, after the velocity is written

    monkeypatch.setattr(run_unvoice, "unvoice", marked_then_stopped)
    out = tmp_path / "new" / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(di[0]), "--from-di", str(REF), "--seconds", "0.6", "--out", str(out), "--no-plots"])
    assert res.exit_code == 1
    assert seen == [["INCOMPLETE.txt"]]
    names = sorted(p.name for p in out.iterdir())
    assert names == [".run-files", "INCOMPLETE.txt", "take-velocity.json", "take-velocity.wav"], names
    # each file the stopped run began is listed, so the folder's next --overwrite removes it
    assert sorted((out / ".run-files").read_text(encoding="utf-8").splitlines()) == ["take-velocity.json", "take-velocity.wav"]


def test_clips_from_di_stopped_before_any_file_leaves_no_folder(di, tmp_path, monkeypatch):
    def stopped(*args, **kwargs):
        raise KeyboardInterrupt

    monkeypatch.setattr(run_unvoice, "unvoice", stopped)
    out = tmp_path / "new" / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(di[0]), "--from-di", str(REF), "--seconds", "0.6", "--out", str(out), "--no-plots"])
    assert res.exit_code == 1 and not (tmp_path / "new").exists()  # neither the folder nor the parent the run made


def test_clips_from_di_needs_a_recording(tmp_path):
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(PHRASE), "--from-di", str(REF), "--out", str(tmp_path / "r")], catch_exceptions=False)
    assert res.exit_code == 1 and "--from-di un-voices a recording" in res.output
    assert len(res.output.strip().splitlines()) == 1 and not (tmp_path / "r").exists()
    res = CliRunner().invoke(main, ["clips", str(REF), "--from-di", str(REF), "--out", str(tmp_path / "r")], catch_exceptions=False)
    assert res.exit_code == 1 and "--from-di needs --dry" in res.output and not (tmp_path / "r").exists()


def test_a_clipped_recording_is_flagged(di, tmp_path):
    y = di[1] / np.max(np.abs(di[1])) * 0.9
    y[5000:5010] = 1.0  # ten equal samples at full scale: a flat top
    src = write_wav(tmp_path / "clipped.wav", y)
    res = run(src, REF, "--out", tmp_path / "v.wav", "--no-plot")
    assert res.exit_code == 0 and "flat run(s) at full scale, the first at 0.104 s" in res.output, res.output  # 5000 / 48000 s (closed form)
    assert json.loads((tmp_path / "v.json").read_text())["warnings"]


def test_blind_from_di_records_the_recording(di, tmp_path):
    out = tmp_path / "session"
    res = CliRunner().invoke(main, ["blind", str(REF), str(GLASS), "--dry", str(di[0]), "--from-di", str(REF), "--trials", "2", "--seed", "3", "--out", str(out)], catch_exceptions=False)
    assert res.exit_code == 0, res.output
    key = json.loads((out / "private" / "key.json").read_text())
    rec = key["dry"]["from_di"]
    assert rec["di_sha256"] == hashlib.sha256(di[0].read_bytes()).hexdigest()
    assert rec["model_sha256"] == hashlib.sha256(REF.read_bytes()).hexdigest()
    assert math.isfinite(rec["gain_limit_db"]) and rec["trusted_band_hz"][0] < 80  # IEC 61260-1 nominal 80 Hz band
    assert rec["rebuild"].startswith("render unvoice ")
    # no velocity file inside the session: only the clips, the plan and the key
    assert not list(out.rglob("*velocity*"))


def test_a_rig_at_volume_0_is_refused_and_an_implausible_estimate_is_flagged(di, tmp_path):
    """volume = 0: the passive wiring passes (next to) nothing, so the inverse would be absurd (it once gave 8.7e8 m/s).
    volume = 0.05 on a take made at full volume: an estimate far above a plucked string's few m/s is flagged
    with the same rule as a recorded dry file's (render.dry.recorded.PLAUSIBLE_VELOCITY, common practice, no source)."""
    from render.dry.recorded import PLAUSIBLE_VELOCITY

    zero = tmp_path / "v0.toml"
    zero.write_text("[rig]\nvolume = 0.0\n")
    before = set(tmp_path.iterdir())
    res = run(di[0], REF, "--rig", zero, "--out", tmp_path / "v.wav")
    assert res.exit_code == 1 and len(res.output.strip().splitlines()) == 1, res.output
    assert "volume=0: the passive wiring passes no signal at volume 0" in res.output and f"RIG={zero}" in res.output
    assert set(tmp_path.iterdir()) == before
    low = tmp_path / "v005.toml"
    low.write_text("[rig]\nvolume = 0.05\n")
    res = run(di[0], REF, "--rig", low, "--out", tmp_path / "low.wav", "--no-plot")
    assert res.exit_code == 0, res.output
    rec = json.loads((tmp_path / "low.json").read_text())
    assert rec["velocity"]["peak_m_per_s"] > PLAUSIBLE_VELOCITY
    assert "is far beyond a plucked string's few m/s" in res.output and any("far beyond" in w for w in rec["warnings"])
    res = run(di[0], REF, "--out", tmp_path / "full.wav", "--no-plot")
    assert res.exit_code == 0 and "far beyond" not in res.output


def test_a_velocity_scale_is_read_back_by_blind_and_clips(di, tmp_path):
    """unvoice --velocity-scale 4, then blind and clips: with --velocity-scale 4 the render is the one of the
    scale-1 WAV (a float32 sample over 4 times 4 is the same float: a power of two); without it, a warning names the scale."""
    one, four = tmp_path / "one.wav", tmp_path / "four.wav"
    assert run(di[0], REF, "--out", one, "--no-plot").exit_code == 0
    assert run(di[0], REF, "--out", four, "--no-plot", "--velocity-scale", "4").exit_code == 0
    assert np.array_equal(sf.read(one, dtype="float64")[0], 4 * sf.read(four, dtype="float64")[0])

    def blind(dry, name, *extra):
        out = tmp_path / name
        res = CliRunner().invoke(main, ["blind", str(REF), str(GLASS), "--dry", str(dry), "--trials", "2", "--seed", "3", "--seconds", "0.6", "--out", str(out), *extra], catch_exceptions=False)
        assert res.exit_code == 0, res.output
        return res.output, json.loads((out / "private" / "key.json").read_text())

    said = "(render unvoice) says a sample of 1.0 is 4 m/s, but it is read at velocity_scale=1 (every level -12.0 dB off); pass --velocity-scale 4"
    text_1, key_1 = blind(one, "s1")
    text_4, key_4 = blind(four, "s4", "--velocity-scale", "4")
    text_bare, key_bare = blind(four, "bare")
    assert "says a sample of 1.0" not in text_1 + text_4 and said in text_bare
    assert key_4["loudness"]["measured_lufs"] == key_1["loudness"]["measured_lufs"] and key_4["render"]["headroom"] == key_1["render"]["headroom"]
    assert key_4["dry"]["velocity_scale"] == 4.0
    # read at 1 instead of 4, the render is 20·log10(4) = 12.04 dB quieter (BS.1770-4 loudness is linear in level, the render near linear here)
    drop = np.subtract(key_1["loudness"]["measured_lufs"], key_bare["loudness"]["measured_lufs"])
    assert np.allclose(drop, 20 * math.log10(4), atol=0.05), drop
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(four), "--seconds", "0.6", "--out", str(tmp_path / "c"), "--no-plots"], catch_exceptions=False)
    assert res.exit_code == 0 and said in res.output, res.output
    # a phrase has no full scale to set
    res = CliRunner().invoke(main, ["blind", str(REF), str(GLASS), "--dry", str(PHRASE), "--velocity-scale", "2", "--out", str(tmp_path / "p")], catch_exceptions=False)
    assert res.exit_code == 1 and "--velocity-scale=2: scales a recorded dry file, not the phrase" in res.output and "pluck a phrase harder or softer with --strength" in res.output
    assert not (tmp_path / "p").exists()


def test_numpy_numbers_are_numbers(di, tmp_path):
    import render

    res = render.unvoice(di[0], REF, out=tmp_path / "v.wav", volts_full_scale=np.int64(2), velocity_scale=np.float32(0.5), max_boost_db=np.int32(20), plot=False)
    assert res.record["di"]["volts_full_scale"] == 2.0 and res.record["velocity"]["velocity_scale"] == 0.5
    with pytest.raises(render.ArgumentError, match="must be from 0.0001 to 100"):
        render.unvoice(di[0], REF, out=tmp_path / "w.wav", volts_full_scale=np.float64(1e3))


def test_the_least_max_boost_is_what_the_trust_rule_needs(di, tmp_path, monkeypatch):
    """The bound alone costs 20·log10(1 + 10^(−B/10)/4) dB where |H| is its 1 kHz level (closed form, x/(x² + λ)
    with λ = |H(1 kHz)|²·10^(−B/10)/4): over the 1 dB trust rule below 3.12 dB, so 3.2 dB is the least accepted;
    and when a smaller bound is what leaves no band trusted, the warning names --max-boost, not the recording."""

    def cost(b):
        return 20 * math.log10(1 + 10 ** (-b / 10) / 4)

    assert cost(run_unvoice.BOOST_RANGE[0]) <= U.TRUST_DB < cost(run_unvoice.BOOST_RANGE[0] - 0.1)
    assert cost(0.0) == pytest.approx(1.938, abs=1e-3)  # the 1.94 dB a 0 dB bound cost
    monkeypatch.setattr(run_unvoice, "BOOST_RANGE", (0.0, 40.0))
    res = run(di[0], REF, "--out", tmp_path / "v.wav", "--no-plot", "--max-boost", "0")
    assert res.exit_code == 0 and "--max-boost 0 dB bounds the inverse too close to its passband level; the default 20 dB trusts" in res.output, res.output
    assert "mostly noise" not in res.output


def test_swapped_arguments_and_audio_for_a_design_say_so(di, tmp_path):
    """MODEL then DI: the order is named; a recording over the design files' size limit given as MODEL: called audio, not too big."""
    from render.io.toml import MAX_FILE_BYTES

    res = run(REF, di[0], "--out", tmp_path / "v.wav")
    assert res.exit_code == 1 and len(res.output.strip().splitlines()) == 1
    assert "is a TOML file, not a recording: the order is DI then MODEL" in res.output and "must end in .toml" not in res.output
    big = write_wav(tmp_path / "big.wav", 0.01 * np.ones(MAX_FILE_BYTES // 4 + SAMPLE_RATE))
    assert big.stat().st_size > MAX_FILE_BYTES
    res = run(di[0], big, "--out", tmp_path / "v.wav")
    assert res.exit_code == 1 and "big.wav: is audio, not a TOML text file" in res.output and "bytes" not in res.output, res.output
    assert not (tmp_path / "v.wav").exists()
