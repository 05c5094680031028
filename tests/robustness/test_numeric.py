"""Designs at the edges of the plausible ranges: they render finite audio that
stays within the rails, or they are refused up front with one line naming the
reason; filter sections near instability are warned about, and the warning
reaches the user."""

from __future__ import annotations

import copy
import math

import numpy as np
import pytest

from render import units as U
from render.chain.discretize import NEAR_UNSTABLE, pole_warnings, sos_pole_warnings
from render.clip import RenderSettings as Settings
from render.design import DESIGN_TABLES, parse_design
from render.errors import InputError
from render.io import toml as tomllib  # the standard library parser, or tomli on Python 3.10
from render.io.wav import float_wav_bytes
from render.runs.clips import render_design

from .conftest import REF, assert_refused, run

FS = 48000
REF_DOC = tomllib.loads(REF.read_text(encoding="utf-8"))
# Gibbs ringing: a band-limited jump overshoots by about 9 % of its height
# (the Wilbraham–Gibbs constant; from memory), so the op-amp output at the
# output rate rings that far past the limiter's window in steady clipping.
# A clip that starts by leaping from rest straight onto a rail rings further
# in its first samples: about 15 % at an EMF of 10 kV; with the feedback
# loop solved in time (clipping nearly hard) a corner design whose linear
# output alternates in sign sample by sample from the start leaps to one
# rail and back to the other within two samples and rings 22 % (both
# measured here; our own bound of 25 %, common practice, no source).
RINGING = 0.25
NUMERIC_TABLES = ("coil_a", "input_a", "input_b", "feedback", "output", "supply", "rig", "hum")


def edges():
    """(table, key, value) for each end of every numeric field's plausible range."""
    out = []
    for table in NUMERIC_TABLES:
        for key, spec in DESIGN_TABLES[table].items():
            if not isinstance(spec.kind, U.Kind) or key in ("eddy_corner",):
                continue
            for value in (spec.lo, spec.hi):
                if math.isinf(value):
                    continue
                if value == spec.lo and spec.lo_open:
                    value = spec.lo + max(abs(spec.lo), 1.0) * 1e-6 if spec.lo == 0 else spec.lo * (1 + 1e-9)
                if value == spec.hi and spec.hi_open:
                    value = spec.hi * (1 - 1e-6)
                out.append((table, key, float(value)))
    return out


def with_value(table, key, value):
    doc = copy.deepcopy(REF_DOC)
    doc.setdefault(table, {})[key] = value
    if table == "coil_a":  # both coils, so the pair stays matched
        doc["coil_b"][key] = value
    if key == "eddy_coupling":
        for t in ("coil_a", "coil_b"):
            doc[t]["eddy_corner"] = "3kHz"
    return doc


@pytest.fixture(scope="module")
def loud_dry(tmp_path_factory):
    """0.1 s of a 220 Hz sine at 10 m/s peak (several times a hard pluck's), so gainy designs clip."""
    path = tmp_path_factory.mktemp("dry") / "loud.wav"
    path.write_bytes(float_wav_bytes(10.0 * np.sin(2 * np.pi * 220 * np.arange(FS // 10) / FS), FS))
    return path


def assert_sane(design, clip, sample_rate=FS):
    """Finite samples; the op-amp output inside its window (plus ringing), the amp input within the window's width."""
    lo, hi = design.limit_low_v, design.limit_high_v
    swing = hi - lo
    assert np.isfinite(clip.volts).all() and np.isfinite(clip.amp_out).all()
    assert clip.volts.size == int(round(0.1 * sample_rate))
    assert lo - RINGING * swing <= clip.amp_out.min() and clip.amp_out.max() <= hi + RINGING * swing, (clip.amp_out.min(), clip.amp_out.max(), lo, hi)
    # the output network and controls are passive and AC-coupled: within the rails, and no
    # more than the window's width (plus the ringing) from 0 V
    assert np.abs(clip.volts).max() <= min(design.supply.battery, (1 + RINGING) * swing)
    assert all(isinstance(w, str) and len(w.splitlines()) == 1 for w in clip.warnings)


@pytest.mark.parametrize("table, key, value", edges(), ids=lambda v: f"{v:g}" if isinstance(v, float) else str(v))
def test_each_range_end_renders_sanely_or_is_refused(table, key, value, loud_dry):
    try:
        design = parse_design(with_value(table, key, value), source="edge.toml")
    except InputError as exc:
        text = str(exc)
        assert len(text.splitlines()) == 1 and "edge.toml: [" in text
        return
    clip = render_design(design, loud_dry, Settings(seconds=0.1))
    assert_sane(design, clip)


def _corner_designs(n, seed):
    """Designs with every numeric field at the low end, the high end or in between, at random."""
    rng = np.random.default_rng(seed)
    found = []
    tries = 0
    while len(found) < n and tries < 200 * n:
        tries += 1
        doc = copy.deepcopy(REF_DOC)
        for table in ("coil_a", "coil_b", "input_a", "input_b", "feedback", "output", "supply", "rig"):
            for key, spec in DESIGN_TABLES[table].items():
                if not isinstance(spec.kind, U.Kind) or key in ("eddy_coupling", "eddy_corner") or rng.random() < 0.5:
                    continue
                if spec.kind is U.RATIO and key not in ("volume", "tone"):
                    continue
                lo, hi = spec.lo, spec.hi
                if math.isinf(hi):
                    continue
                lo = max(lo, hi * 1e-9) if spec.lo_open else lo
                hi = hi * (1 - 1e-6) if spec.hi_open else hi
                r = rng.random()
                value = lo if r < 0.35 else hi if r < 0.7 else (rng.uniform(lo, hi) if lo <= 0 else float(np.exp(rng.uniform(np.log(lo), np.log(hi)))))
                doc.setdefault(table, {})[key] = float(value)
        try:
            found.append(parse_design(doc, source=f"corner-{len(found)}.toml"))
        except InputError as exc:
            assert len(str(exc).splitlines()) == 1
    assert len(found) == n, "too few corner designs pass the loader"
    return found


@pytest.mark.parametrize("sample_rate", [8000, FS, 192000])
def test_corner_designs_render_sanely_at_every_sample_rate(sample_rate, tmp_path):
    dry = tmp_path / "loud.wav"
    dry.write_bytes(float_wav_bytes(10.0 * np.sin(2 * np.pi * 220 * np.arange(FS // 10) / FS), FS))
    for design in _corner_designs(12 if sample_rate == FS else 4, seed=sample_rate):
        clip = render_design(design, dry, Settings(seconds=0.1, sample_rate=sample_rate, passive=True))
        assert_sane(design, clip, sample_rate)
        assert np.isfinite(clip.passive_volts).all()


def test_a_noise_floor_beyond_the_window_is_warned_about(loud_dry):
    # the noise floor is added after the soft limit (it is the circuit's small-signal floor);
    # a design at the range edge whose noise alone would reach the limits must say so
    doc = copy.deepcopy(REF_DOC)
    doc["supply"]["noise_current"] = DESIGN_TABLES["supply"]["noise_current"].hi  # 10 nA/√Hz
    doc["feedback"]["r"] = DESIGN_TABLES["feedback"]["r"].hi  # 1 GΩ, and a 1 GΩ divider: volts of noise per √Hz
    doc["input_b"].update(bias_top=1e9, bias_bottom=1e9)
    design = parse_design(doc, source="noisy.toml")
    clip = render_design(design, loud_dry, Settings(seconds=0.1, noise=True))
    assert np.isfinite(clip.volts).all()
    assert any("noise floor alone is" in w for w in clip.warnings)
    quiet = render_design(parse_design(copy.deepcopy(REF_DOC), source="ref.toml"), loud_dry, Settings(seconds=0.1, noise=True))
    assert not any("noise floor alone" in w for w in quiet.warnings)


def test_pole_warnings_flag_radii_within_1e9_of_the_unit_circle():
    # the threshold is the chain's own constant: 1 − 1e-9
    assert NEAR_UNSTABLE == 1.0 - 1e-9
    assert pole_warnings([0.5, 0.999, 0.9 + 0.1j]) == ()
    slow = 1.0 - 1e-10
    (warning,) = pole_warnings([0.5, slow * np.exp(0.01j)], what="test path")
    assert warning.startswith("test path: a digital pole has radius") and "close to instability" in warning
    sos = np.array([[1.0, 0.0, 0.0, 1.0, -2 * slow, slow**2]])  # a double pole at z = slow
    assert sos_pole_warnings(sos, what="test sections") and sos_pole_warnings(np.array([[1.0, 0, 0, 1.0, -0.5, 0.0]])) == ()


SLOW = {
    # a time constant of 0.1 F × 1 GΩ = 10⁸ s: a pole at 1.6 nHz, radius 1 − 2e-13 at 48 kHz
    "input network": ("input_a", {"series_c": 0.1, "series_r": 1e9}, "velocity path: a digital pole has radius"),
    "output network": ("output", {"coupling_c": 0.1, "series_r": 1e9, "shunt_r": 1e9}, "output network: a digital pole has radius"),
}


@pytest.mark.parametrize("name", sorted(SLOW))
def test_a_near_unstable_section_is_warned_about_and_still_renders(name, loud_dry):
    table, values, fragment = SLOW[name]
    doc = copy.deepcopy(REF_DOC)
    doc[table].update(values)
    if table == "output":
        doc["rig"] = {"volume_pot": 1e9, "amp_r": 1e9}
    design = parse_design(doc, source="slow.toml")
    clip = render_design(design, loud_dry, Settings(seconds=0.1))
    assert any(w.startswith(fragment) and "close to instability" in w for w in clip.warnings), clip.warnings
    assert_sane(design, clip)


def test_the_warning_reaches_the_user_of_render_clips(tmp_path, loud_dry):
    text = REF.read_text(encoding="utf-8").replace('series_c = "1u"', 'series_c = "100mF"', 1).replace('series_r = "22k"', 'series_r = "1G"', 1)
    slow = tmp_path / "slow-corner.toml"
    slow.write_text(text, encoding="utf-8")
    res = run("clips", slow, "--dry", loud_dry, "--out", tmp_path / "out", "--no-plots")
    assert res.exit_code == 0, res.output
    assert "warning: studio-reference: velocity path: a digital pole has radius" in res.stderr
    import json

    rec = json.loads((tmp_path / "out" / "slow-corner.json").read_text())
    assert any("close to instability" in w for w in rec["warnings"])


def test_refusals_at_the_edges_name_the_reason(tmp_path):
    """Just past each end of a range, and the combined limits, are refused before any work."""
    cases = [
        ('battery = "9V"', 'battery = "1.4V"', "[supply] battery='1.4V' (1.4 V): expected a plausible value, at least 1.5 V"),
        ('battery = "9V"', 'battery = "61V"', "at most 60 V"),
        ('battery = "9V"', 'battery = "3V"', "margin_low + margin_high + 2·knee = 3 V must be below battery=3 V"),
        ('inductance = "350mH"', 'inductance = "9uH"', "[coil_a] inductance='9uH' (9 µH): expected a plausible value, at least 10 µH"),
        ('gbw = "3MHz"', 'gbw = "999Hz"', "[supply] gbw='999Hz' (999 Hz): expected a plausible value, at least 1 kHz"),
        ('bias_bottom = "220k"', 'bias_bottom = "33k"', "outside the output's linear window"),
    ]
    for old, new, fragment in cases:
        path = tmp_path / "edge.toml"
        path.write_text(REF.read_text(encoding="utf-8").replace(old, new, 1), encoding="utf-8")
        assert_refused(run("clips", path, "--out", tmp_path / "out", "--seconds", 0.1), fragment)
        assert not (tmp_path / "out").exists()
