"""One clipped burst through the commands' own paths, against ngspice.

The reference is the same ngspice transient as in test_loop_against_ngspice.py (Debian package
ngspice; gear integration, 1 µs steps at most, relative tolerance 1e-6; the netlist from
render.circuit.netlist, pinned against a hand-written netlist in tests/circuit/test_netlist.py):
studio-reference with its bias divider at ratio 0.3, a 1 kHz sine burst of string velocity 10 dB
past the clip onset, 40 periods, then rest. The amp-input waveform (ngspice node ``amp``) is
compared with what each path writes, over the burst and the first 110 ms after it (one ngspice
run, shared by the three paths):

(a) ``render clips`` in memory (render.runs.clips.render_clips) with the burst as a recorded dry file
    (a mono float WAV at 48 kHz, full scale 1 m/s × velocity_scale: render.dry.recorded);
(b) the streamed long-file path (render.runs.clips.render_long, which render_clips uses for
    recordings longer than LONG_SECONDS) with its ``block`` argument at 1000 samples, so the burst
    spans many blocks and the loop's state crosses block boundaries;
(c) ``render blind`` (render.runs.blind.build_blind_session) with the same file for both designs.

Transformations undone, each where the path applies it: (a) and (b) write S.wav as the amp-input
volts divided by the run's full scale (render.report.clips.write_design_audio and render_long's
``wav.write(y / volts_full_scale)``), recorded as ``volts_full_scale`` in S.json; (c) writes each
clip as the amp-input volts times 10^(gain/20), the loudness gain recorded as
``loudness.gains_db[design]`` in private/key.json (render.runs.blind, "wav_scale" in the key),
and the key's trials name which public clip holds which design. Every WAV is float32 (render.io.wav),
which rounds the volts by a relative 6e-8. Hum and noise are off in every path (ngspice has
neither).

Agreement required (the acceptance criterion of the loop's model, as in
test_loop_against_ngspice.py): rms difference within 1 % of the output window after aligning a
fixed delay of at most 4 samples.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from chain.spice_loop import loop_transient
from spice import require_ngspice

from render.analysis.bias import divider, onset
from render.design import load_design

ROOT = Path(__file__).resolve().parents[2]
FS = 48000
F0 = 1000.0
PERIODS = 40
AFTER_S = 0.11  # compared after the burst (the ngspice run's length)
FILE_S = 0.6  # the recording: long enough for a blind clip (at least 0.5 s, one BS.1770-4 gating block)
SPICE_RATE = 384000.0  # drive samples for ngspice (linear interpolation: a 1 kHz sine within 3e-5)
RATIO = 0.3
DB_PAST_ONSET = 10.0
# a sample of 1.0 is 1 m/s (render.dry.recorded; ``render blind`` takes no other scale), so this float WAV's
# samples pass ±1 (the burst peaks near 8 m/s at 1 kHz), as an un-voiced DI's do
VELOCITY_SCALE = 1.0


def _burst(peak, rate, seconds):
    n_burst = int(round(PERIODS * rate / F0))
    n = int(round(seconds * rate))
    t = np.arange(n) / rate
    return t, np.where(np.arange(n) < n_burst, peak * np.sin(2 * np.pi * F0 * t), 0.0)


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    """The design file (divider at RATIO), the recorded burst, and ngspice's amp input at FS."""
    require_ngspice()
    tmp = tmp_path_factory.mktemp("e2e")
    src = ROOT / "models" / "studio-reference.toml"
    top, bottom = divider(load_design(src), RATIO)
    text = src.read_text()
    assert 'bias_top = "220k"' in text and 'bias_bottom = "220k"' in text
    text = text.replace('bias_top = "220k"', f"bias_top = {top!r}").replace('bias_bottom = "220k"', f"bias_bottom = {bottom!r}")
    model = tmp / "burst-design.toml"
    model.write_text(text)
    d = load_design(model)
    o = onset(d, frequency_hz=F0)
    vel = min(o["velocity_up_m_per_s"], o["velocity_down_m_per_s"]) * 10 ** (DB_PAST_ONSET / 20)
    _, v = _burst(vel, FS, FILE_S)
    samples = (v / VELOCITY_SCALE).astype(np.float32)
    wav = tmp / "burst.wav"
    sf.write(wav, samples, FS, subtype="FLOAT")
    # the drive ngspice sees: the same burst (the file's float32 rounding, 6e-8 relative, left out)
    ts, vs = _burst(vel, SPICE_RATE, PERIODS / F0 + AFTER_S)
    n = int(round((PERIODS / F0 + AFTER_S) * FS))
    t = np.arange(n) / FS
    tt, sp = loop_transient(d, ts, vs, stop=float(t[-1]), nodes=("amp",))
    return {"design": d, "model": model, "wav": wav, "amp_in": np.interp(t, tt, sp["amp"]), "tmp": tmp}


def _check(ours, case):
    """The rms criterion over the compared span, after the best fixed delay of at most 4 samples."""
    ref = case["amp_in"]
    d = case["design"]
    window = d.limit_high_v - d.limit_low_v
    n = ref.size
    assert ours.size >= n
    ours = ours[:n]

    def rms(shift):
        a = ours[shift:] if shift >= 0 else ours[:shift]
        b = ref[: n - shift] if shift >= 0 else ref[-shift:]
        return float(np.sqrt(np.mean((a - b) ** 2)))

    best = min(rms(s) for s in range(-4, 5))
    # the burst clips (its peak reaches the window's ends): the criterion is not met by a silent path
    assert np.abs(ours).max() > 0.2 * window
    assert best <= 0.01 * window, f"rms difference {best:.4g} V against ngspice, window {window:.3g} V"
    return best


def _settings():
    from render.clip import RenderSettings

    return RenderSettings(sample_rate=FS, velocity_scale=VELOCITY_SCALE, hum=False, noise=False, passive=False)


def test_render_clips_against_ngspice(case):
    """(a) render_clips in memory: S.wav × volts_full_scale (from S.json) is the amp input."""
    from render.runs.clips import render_clips

    out = case["tmp"] / "clips"
    run = render_clips([case["design"]], case["wav"], settings=_settings(), out=out, plots=False)
    assert not run.streamed
    stem = case["model"].stem
    rec = json.loads((out / f"{stem}.json").read_text())
    data, rate = sf.read(out / f"{stem}.wav", dtype="float64")
    assert rate == FS
    _check(data * rec["volts_full_scale"], case)


def test_streamed_long_file_path_against_ngspice(case):
    """(b) render_long block by block (1000 samples a block): S.wav × volts_full_scale is the amp input."""
    from render.runs.clips import render_long, window_full_scale

    out = case["tmp"] / "long"
    out.mkdir()
    vfs = window_full_scale([case["design"]])
    rec = render_long(case["design"], case["wav"], _settings(), out=out, stem="s", volts_full_scale=vfs, rig_record={}, plots=False, block=1000)
    assert rec["volts_full_scale"] == vfs
    data, rate = sf.read(out / "s.wav", dtype="float64")
    assert rate == FS
    _check(data * vfs, case)


def test_render_blind_against_ngspice(case):
    """(c) a blind session of the design against itself: each design's clip ÷ 10^(gain/20) (key.json) is the amp input."""
    from render.runs.blind import BlindSettings, build_blind_session

    d = case["design"]
    session = build_blind_session([d, d], case["wav"], out=case["tmp"] / "blind", settings=BlindSettings(trials=1, seed=1, hum=False, sample_rate=FS))
    paths = session.paths
    key = json.loads(paths.key.read_text())
    gains = key["loudness"]["gains_db"]
    trial = key["trials"][0]
    for slot, design_index in (("A", trial["a"]), ("B", 1 - trial["a"])):
        data, rate = sf.read(paths.public / trial["clips"][slot], dtype="float64")
        assert rate == FS
        _check(data / 10 ** (gains[design_index] / 20), case)
