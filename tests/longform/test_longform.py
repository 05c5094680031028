"""Long recordings: streamed reading, rendering, measuring and writing, in bounded memory."""

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner
from scipy.signal import welch

from render.analysis.loudness import LoudnessMeter, integrated_loudness
from render.analysis.spectrum import WelchSpectrum
from render.chain.stream import render_signal
from render.cli import main
from render.design import load_design
from render.dry.recorded import iter_recorded
from render.io.wav import FloatWavWriter
from render.runs.clips import LONG_SECONDS

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"


def test_wav_stream_equals_one_shot_writer(tmp_path):
    from render.io.wav import float_wav_bytes

    x = np.random.default_rng(1).normal(0, 0.2, 30001)
    w = FloatWavWriter(tmp_path / "a.wav", sample_rate=48000)
    for i in range(0, x.size, 4096):
        w.write(x[i : i + 4096])
    w.close()
    assert (tmp_path / "a.wav").read_bytes() == float_wav_bytes(x, 48000)
    assert [p.name for p in tmp_path.iterdir()] == ["a.wav"]  # no temporary file left


def test_wav_stream_abort_leaves_nothing(tmp_path):
    w = FloatWavWriter(tmp_path / "b.wav", sample_rate=48000)
    w.write(np.zeros(100))
    w.abort()
    assert list(tmp_path.iterdir()) == []


def test_streamed_loudness_equals_pyloudnorm():
    # ITU-R BS.1770-4 gating on 400 ms blocks with 75 % overlap, fed in odd-sized blocks, against
    # pyloudnorm's whole-signal meter (its "DeMan" K-weighting, the same analog prototypes)
    fs = 48000
    rng = np.random.default_rng(2)
    t = np.arange(12 * fs) / fs
    x = 0.3 * np.sin(2 * np.pi * 440 * t) * (t < 6) + 0.02 * rng.normal(size=t.size)
    m = LoudnessMeter(sample_rate=fs)
    for i in range(0, x.size, 10007):
        m.add(x[i : i + 10007])
    import pyloudnorm

    assert m.integrated() == pyloudnorm.Meter(fs, filter_class="DeMan").integrated_loudness(x)
    assert integrated_loudness(x, sample_rate=fs) == m.integrated()
    # BS.1770-4 self-check: a 997 Hz full-scale sine in one channel reads -3.01 LKFS
    s = LoudnessMeter(sample_rate=fs)
    s.add(np.sin(2 * np.pi * 997 * t))
    assert s.integrated() == pytest.approx(-3.01, abs=0.01)


def test_streamed_spectrum_equals_scipy_welch():
    fs = 48000
    x = np.random.default_rng(3).normal(size=5 * fs)
    s = WelchSpectrum(sample_rate=fs)
    for i in range(0, x.size, 7777):
        s.add(x[i : i + 7777])
    f, lv = s.value()
    f2, p = welch(x, fs=fs, window="hann", nperseg=8192, noverlap=4096, detrend=False)
    n = (x.size - 8192) // 4096 + 1  # whole segments only, as welch takes them
    assert np.allclose(f, f2) and np.allclose(lv, 10 * np.log10(p), atol=1e-9), n


def test_streamed_reader_matches_whole_file_read(tmp_path):
    from render.dry.recorded import load_recorded

    x = np.random.default_rng(4).normal(0, 0.1, (44100 * 3, 2))
    sf.write(tmp_path / "v.wav", x, 44100, subtype="FLOAT")
    whole, _ = load_recorded(tmp_path / "v.wav", sample_rate=48000)
    parts = np.concatenate(list(iter_recorded(tmp_path / "v.wav", sample_rate=48000, block=5000)), axis=1)
    assert parts.shape == whole.shape
    # soxr's streaming and one-shot resamplers agree to far below audibility (soxr documentation: same engine)
    assert np.max(np.abs(parts - whole)) < 1e-6


def test_streaming_render_equals_single_block(tmp_path):
    d = load_design(REF)
    v = np.random.default_rng(5).normal(0, 0.5, (2, 48000))
    one = render_signal(d, v, sample_rate=48000, block=v.shape[1])["out"]
    for block in (1000, 4096, 30000):
        many = render_signal(d, v, sample_rate=48000, block=block)["out"]
        assert np.max(np.abs(many - one)) <= 1e-12 * max(1.0, np.max(np.abs(one)))


def test_long_recording_renders_block_by_block(tmp_path):
    fs = 48000
    seconds = LONG_SECONDS + 10
    t = np.arange(int(seconds * fs)) / fs
    x = (0.05 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 2.0))).astype(np.float32)
    sf.write(tmp_path / "long.wav", x, fs, subtype="FLOAT")
    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(tmp_path / "long.wav"), "--out", str(out), "--no-plots"])
    assert res.exit_code == 0, res.output
    assert "block by block" in res.output
    # project rule, no outside source (README): the line names the full scale and why, and the option that sets it
    assert "(full scale 10 V, fixed in advance from the designs' output windows because a recording over 120 s is streamed" in res.output
    assert "so these clips may play much quieter); --volts-full-scale sets one;" in res.output
    info = sf.info(out / "studio-reference.wav")
    assert info.frames == x.size and info.subtype == "FLOAT"
    rec = json.loads((out / "studio-reference.json").read_text())
    assert rec["dry"]["streamed"] is True and rec["seconds"] == pytest.approx(seconds)
    # the streamed render equals an in-memory render of the same input
    y, _ = sf.read(out / "studio-reference.wav")
    ref = render_signal(load_design(REF), np.stack([x, x]).astype(float), sample_rate=fs)["out"] / rec["volts_full_scale"]
    assert np.max(np.abs(y - ref)) < 1e-6  # float32 rounding of the WAV
    assert rec["measurements"]["loudness_lufs_1v_full_scale"] == pytest.approx(integrated_loudness(ref * rec["volts_full_scale"], sample_rate=fs), abs=1e-3)
    import pyloudnorm  # the WAV as written, read back: pyloudnorm's BS.1770-4 meter ("DeMan": the standard's analog prototypes)

    assert rec["measurements"]["loudness_lufs"] == pytest.approx(pyloudnorm.Meter(fs, filter_class="DeMan").integrated_loudness(y), abs=1e-3)


def test_ten_minutes_render_in_bounded_memory(tmp_path):
    # the one-hour figure lives in tests/bench/bench_render.py; this ten-minute version checks
    # the same bound (peak resident memory under 500 MB) in the suite
    import subprocess
    import sys

    fs = 48000
    flac = tmp_path / "ten.flac"
    t = np.arange(fs * 10) / fs
    tile = (0.3 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 2.5))).astype(np.float32)
    with sf.SoundFile(flac, "w", samplerate=fs, channels=1, format="FLAC", subtype="PCM_16") as f:
        for _ in range(60):
            f.write(tile)
    # the child reports its own peak from /proc (VmHWM starts afresh at exec; ru_maxrss would
    # carry the forking parent's size across exec, and RUSAGE_CHILDREN counts earlier children); it reports from an
    # atexit function, since the command ends in os._exit once those have run (render.cli.ending): a `finally` never runs
    probe = (
        "import atexit, runpy, sys\n"
        "def peak():\n"
        "    hwm = [l for l in open('/proc/self/status') if l.startswith('VmHWM')][0].split()[1]\n"
        "    print('PEAK_KB', hwm, file=sys.stderr)\n"
        "atexit.register(peak)\n"
        "sys.argv = ['render'] + sys.argv[1:]\n"
        "runpy.run_module('render', run_name='__main__')\n"
    )
    # with a passive comparison pickup, which streams to its WAV as the design does
    passive = REF.parent / "compare" / "workshop-passive.toml"
    args = ["clips", str(REF), "--dry", str(flac), "--velocity-scale", "4", "--compare", str(passive), "--no-plots", "--out", str(tmp_path / "o")]
    res = subprocess.run([sys.executable, "-c", probe, *args], capture_output=True, text=True, cwd=ROOT)
    assert res.returncode == 0, res.stderr
    peak_mb = int(res.stderr.split("PEAK_KB")[-1].split()[0]) / 1024
    print(f"ten minutes: peak resident memory of the render {peak_mb:.0f} MB")
    assert peak_mb < 500
    assert sf.info(tmp_path / "o" / "studio-reference.wav").frames == 600 * fs
    assert sf.info(tmp_path / "o" / "workshop-passive.wav").frames == 600 * fs


def test_a_long_recording_can_take_the_comparison_pickup_as_its_reference(tmp_path):
    # the streamed path renders the comparison pickup before the brightness figures, as the in-memory one does
    fs = 48000
    t = np.arange(int((LONG_SECONDS + 1) * fs)) / fs
    x = (0.05 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 2.0))).astype(np.float32)
    sf.write(tmp_path / "long.wav", x, fs, subtype="FLOAT")
    passive = REF.parent / "compare" / "workshop-passive.toml"
    out = tmp_path / "run"
    args = ["clips", str(REF), "--dry", str(tmp_path / "long.wav"), "--compare", str(passive), "--reference", "workshop-passive", "--out", str(out), "--no-plots"]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 0, res.output
    assert "block by block" in res.output
    design = json.loads((out / "studio-reference.json").read_text())["measurements"]
    compared = json.loads((out / "workshop-passive.json").read_text())
    assert design["reference_design"] == "workshop-passive" and not design["is_reference"]
    assert compared["measurements"]["is_reference"] and compared["measurements"]["matched_diff_4k_8k_db"] == 0.0
    # the design's difference is its band power less the pickup's, less their loudness difference (as in-memory runs)
    from render.analysis.brightness import band_powers_db
    from render.design.passive import load_passive
    from render.runs.compare_clip import compare_power_db

    p_d = band_powers_db([load_design(REF)])["4k_8k"][0]
    p_c = compare_power_db(load_passive(passive))["4k_8k"]
    want = (p_d - p_c) - (design["loudness_lufs_1v_full_scale"] - compared["loudness_lufs_1v_full_scale"])
    assert design["matched_diff_4k_8k_db"] == pytest.approx(want, abs=1e-9)


def _clipped_sine(path, seconds: float = 2.0, fs: int = 48000, subtype: str = "PCM_16") -> None:
    """1.5 × a 5 Hz sine, hard-clipped at ±1: one flat top per half period."""
    t = np.arange(int(seconds * fs)) / fs
    sf.write(path, np.clip(1.5 * np.sin(2 * np.pi * 5 * t), -1, 1), fs, subtype=subtype)


def test_a_streamed_recording_keeps_the_recordings_own_warnings(tmp_path, monkeypatch):
    # project rule, no outside source (README: "A file with flat tops at full scale (clipping) is used, with a
    # warning"): the streamed path gives the warnings the in-memory path gives, worded by the same code. A short
    # file takes the streamed path here by lowering the switch.
    import render.runs.clips as clips
    from render.dry.recorded import load_recorded

    fs = 48000
    _clipped_sine(tmp_path / "clipped.wav")
    monkeypatch.setattr(clips, "LONG_SECONDS", 1.0)
    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(REF), "--dry", str(tmp_path / "clipped.wav"), "--velocity-scale", "500", "--out", str(out), "--no-plots"])
    assert res.exit_code == 0, res.output
    assert "block by block" in res.output
    rec = json.loads((out / "studio-reference.json").read_text())
    _, in_memory = load_recorded(tmp_path / "clipped.wav", sample_rate=fs, velocity_scale=500)
    assert rec["warnings"][:2] == in_memory
    # closed form: 2 s of a 5 Hz sine has 20 half periods, each with one flat top; the first starts where
    # 1.5 sin(2π 5 t) reaches 0.999 (CLIP_LEVEL), t = asin(0.999 / 1.5) / (2π 5) = 0.0232 s; the peak is
    # one full-scale sample × 500 m/s
    first = np.arcsin(0.999 / 1.5) / (2 * np.pi * 5)
    assert "peak string velocity 500 m/s" in in_memory[0] and "far beyond" in in_memory[0]
    assert f"20 flat run(s) of 4+ equal samples at full scale (|x| >= 0.999), the first at {first:.3f} s" in in_memory[1]
    for w in in_memory:
        assert f"warning: studio-reference: {w}" in res.output


@pytest.mark.parametrize("streamed", [False, True])
def test_a_clip_over_the_full_scale_is_named_whichever_wav_it_is(tmp_path, monkeypatch, streamed):
    # project rule, no outside source (README: the run's one full scale, "or --volts-full-scale"): one rule names
    # every design WAV whose peak passes the full scale, S.wav and S-passive.wav, in memory and streamed (a short
    # file takes the streamed path here by lowering the switch); the peaks are read back from the WAVs written
    import render.runs.clips as clips

    fs = 48000
    t = np.arange(2 * fs) / fs
    sf.write(tmp_path / "v.wav", 4.0 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 1.0)), fs, subtype="FLOAT")
    # the reference with a tenth of its gain: the amp input peaks below the passive reference's output
    quiet = tmp_path / "quiet-gain.toml"
    text = REF.read_text().replace('name = "studio-reference"', 'name = "quiet-gain"').replace('r = "110k"', 'r = "11k"')
    quiet.write_text(text.replace('bias_top = "220k"', 'bias_top = "22k"').replace('bias_bottom = "220k"', 'bias_bottom = "22k"'))
    if streamed:
        monkeypatch.setattr(clips, "LONG_SECONDS", 1.0)
    out = tmp_path / "run"
    res = CliRunner().invoke(main, ["clips", str(quiet), str(REF), "--passive", "--volts-full-scale", "0.2", "--dry", str(tmp_path / "v.wav"), "--out", str(out), "--no-plots", "--jobs", "1"])
    assert res.exit_code == 0, res.output
    assert ("block by block" in res.output) == streamed
    assert "fixed from the output windows" not in res.output and "(full scale 0.2 V;" in res.output

    def peak(name):
        y, _ = sf.read(out / name)
        return float(np.max(np.abs(y)))

    over = {n: peak(f"{n}.wav") > 1 for n in ("quiet-gain", "studio-reference")}
    over |= {f"{n} (passive reference)": peak(f"{n}-passive.wav") > 1 for n in ("quiet-gain", "studio-reference")}
    assert over == {"quiet-gain": False, "studio-reference": True, "quiet-gain (passive reference)": True, "studio-reference (passive reference)": True}
    rec = json.loads((out / "quiet-gain.json").read_text())["measurements"]
    assert rec["passive_peak_v"] / 0.2 == pytest.approx(peak("quiet-gain-passive.wav"), rel=1e-6)  # float32 WAV
    assert "warning: quiet-gain (passive reference), studio-reference, studio-reference (passive reference) peak above the 0.2 V full scale" in res.output, res.output


def test_a_streamed_render_with_noise_equals_the_one_in_memory(tmp_path, monkeypatch):
    # project rule, no outside source (README: the streamed render "equals a single-block render to float
    # rounding", --noise included): the floor is drawn on block by block from the seed, so the streamed WAVs
    # (design and passive reference) equal the in-memory ones to the float32 rounding of the WAV, as without
    # noise above; a short file takes the streamed path by lowering the switch
    import render.runs.clips as clips

    fs = 48000
    t = np.arange(3 * fs) / fs
    sf.write(tmp_path / "v.wav", (0.05 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 1.0))).astype(np.float32), fs, subtype="FLOAT")
    args = ["clips", str(REF), "--dry", str(tmp_path / "v.wav"), "--noise", "--passive", "--seed", "9", "--volts-full-scale", "1", "--no-plots"]
    mem = CliRunner().invoke(main, [*args, "--out", str(tmp_path / "mem")])
    monkeypatch.setattr(clips, "LONG_SECONDS", 1.0)
    streamed = CliRunner().invoke(main, [*args, "--out", str(tmp_path / "streamed")])
    assert mem.exit_code == 0 and streamed.exit_code == 0, mem.output + streamed.output
    assert "block by block" in streamed.output and "block by block" not in mem.output
    for name in ("studio-reference.wav", "studio-reference-passive.wav"):
        a, _ = sf.read(tmp_path / "mem" / name)
        b, _ = sf.read(tmp_path / "streamed" / name)
        assert a.shape == b.shape
        assert np.max(np.abs(a - b)) < 1e-6 * np.max(np.abs(a))  # float32 rounding of the WAV (2^-24 of a sample)
    # the floor is there: the same render without --noise differs by far more than that
    quiet = CliRunner().invoke(main, [a for a in args if a != "--noise"] + ["--out", str(tmp_path / "quiet")])
    assert quiet.exit_code == 0, quiet.output
    c, _ = sf.read(tmp_path / "quiet" / "studio-reference.wav")
    b, _ = sf.read(tmp_path / "streamed" / "studio-reference.wav")
    assert np.max(np.abs(b - c)) > 1e-5


def test_a_streamed_comparison_pickup_equals_the_one_in_memory(tmp_path, monkeypatch):
    # project rule, no outside source (README: the streamed render equals a single-block render to float rounding):
    # the comparison pickup streams through the same passive path and noise floor as in memory, so its WAV equals
    # the in-memory one to the WAV's float32 rounding and its record's levels to float rounding; its loudness is
    # BS.1770-4's (pyloudnorm's meter, as tests above check the streamed meter)
    import render.runs.clips as clips

    fs = 48000
    t = np.arange(3 * fs) / fs
    sf.write(tmp_path / "v.wav", (0.05 * np.sin(2 * np.pi * 196 * t) * np.exp(-(t % 1.0))).astype(np.float32), fs, subtype="FLOAT")
    passive = REF.parent / "compare" / "workshop-passive.toml"
    args = ["clips", str(REF), "--dry", str(tmp_path / "v.wav"), "--compare", str(passive), "--noise", "--seed", "4", "--volts-full-scale", "1", "--no-plots"]
    mem = CliRunner().invoke(main, [*args, "--out", str(tmp_path / "mem")])
    monkeypatch.setattr(clips, "LONG_SECONDS", 1.0)
    streamed = CliRunner().invoke(main, [*args, "--out", str(tmp_path / "streamed")])
    assert mem.exit_code == 0 and streamed.exit_code == 0, mem.output + streamed.output
    assert "block by block" in streamed.output and "block by block" not in mem.output
    a, _ = sf.read(tmp_path / "mem" / "workshop-passive.wav")
    b, _ = sf.read(tmp_path / "streamed" / "workshop-passive.wav")
    assert a.shape == b.shape == (3 * fs,)
    assert np.max(np.abs(a - b)) < 1e-6 * np.max(np.abs(a))  # float32 rounding of the WAV (2^-24 of a sample)
    ra = json.loads((tmp_path / "mem" / "workshop-passive.json").read_text())
    rb = json.loads((tmp_path / "streamed" / "workshop-passive.json").read_text())
    for key in ("peak_v", "rms_v", "loudness_lufs_1v_full_scale"):
        assert rb[key] == pytest.approx(ra[key], rel=1e-9), key
    assert rb["measurements"]["matched_diff_4k_8k_db"] == pytest.approx(ra["measurements"]["matched_diff_4k_8k_db"], abs=1e-9)
    import pyloudnorm

    assert rb["loudness_lufs_1v_full_scale"] == pytest.approx(pyloudnorm.Meter(fs, filter_class="DeMan").integrated_loudness(b), abs=1e-3)


def test_the_streamed_full_scale_of_the_demo_designs():
    # project rule, no outside source (README: "10 V for the 9 V demo designs, 20 V for high-rail-18v"): the
    # 1-2-5 step at or above 2.2 × the largest headroom: 2.2 × 3.5 V = 7.7 V -> 10 V, 2.2 × 8 V = 17.6 V -> 20 V
    from render.runs.clips import window_full_scale

    for path in sorted((ROOT / "models").glob("*.toml")):
        d = load_design(path)
        want = 20.0 if path.stem == "high-rail-18v" else 10.0
        assert window_full_scale([d]) == want, path.stem
