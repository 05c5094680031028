"""Hum sources: each coil's EMF, against the one-number room and Faraday's law."""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from render.analysis.hum import hum_table
from render.chain import hum as hm
from render.design import load_design
from render.errors import InputError
from render.magnetics.coil import CoilGeometry, coil_pair
from render.magnetics.hum import DipoleSource, UniformSource, emf_samples, hum_emf, room_source, steady_samples
from render.magnetics.rejection import engine_gains, source_hum

ROOT = Path(__file__).resolve().parents[2]
REF = ROOT / "models" / "studio-reference.toml"
# invented demo bobbin (see test_coil.py)
DEMO = CoilGeometry(turns=1200, length=0.068, width=0.013, window_length=0.058, window_width=0.003, height=0.009)


def _point_coils(d):
    return coil_pair(d.coil_a.turns_area, d.coil_b.turns_area, position_a=d.coil_a.position, position_b=d.coil_b.position)


@pytest.mark.parametrize("polarity", [(1, 1), (1, -1), (-1, 1)])
def test_uniform_z_source_reproduces_the_one_number_room_sample_for_sample(polarity):
    # Faraday's law as the renderer applies it today: e = hum_polarity · turns_area · dB/dt, with dB/dt
    # from render.chain.hum.field_rate; the same samples, bit for bit, sign included
    d = load_design(REF)
    d = replace(d, coil_b=replace(d.coil_b, turns_area=0.31))  # unequal, so a swapped coil would show
    h = d.hum
    coils = _point_coils(d)
    for start in (0, 123_457):
        got = emf_samples(coils, [room_source(h)], 4800, sample_rate=48000, mains_hz=h.mains, harmonics=h.harmonics, hum_polarity=polarity, start=start)
        rate = hm.field_rate(4800, sample_rate=48000, mains_hz=h.mains, field_t=h.field, harmonics=h.harmonics, start=start)
        np.testing.assert_array_equal(got[0], polarity[0] * d.coil_a.turns_area * rate)
        np.testing.assert_array_equal(got[1], polarity[1] * d.coil_b.turns_area * rate)


@pytest.mark.parametrize("hp_b", [1, -1])
def test_uniform_z_source_reproduces_the_hum_table(hp_b):
    # per harmonic: the existing table (the engine's V_A, V_B from hum_polarity · turns_area) to rounding;
    # hum_polarity −1 on coil_b makes the hum differential, and the rejection must follow it
    d = load_design(REF)
    d = replace(d, coil_b=replace(d.coil_b, hum_polarity=hp_b, turns_area=0.34))
    t = hum_table(d)
    emf = hum_emf(_point_coils(d), [room_source(d.hum)], mains_hz=d.hum.mains, harmonics=d.hum.harmonics, hum_polarity=(1, hp_b))
    fa, fb = engine_gains(d, emf.frequency_hz)
    got = source_hum(emf, from_a=fa, from_b=fb).rows()
    for row, ref in zip(got, t["harmonics"]):
        for key in ("output_v", "coil_a_v", "coil_b_v", "rejection_db"):
            assert row[key] == pytest.approx(ref[key], rel=1e-12), key
        assert row["sources"][0]["output_v"] == pytest.approx(ref["output_v"], rel=1e-12)
    if hp_b == -1:
        assert got[0]["rejection_db"] < 0  # the two coils' hum adds


def test_uniform_source_on_a_wound_coil_links_its_turns_area():
    coils = coil_pair(DEMO, DEMO, position_a=0.038, position_b=0.056)
    src = UniformSource(field=1e-6, axis=[0, 0, 3])
    emf = hum_emf(coils, [src], mains_hz=50.0, harmonics=(1.0,))
    # Faraday: N·A·2πf·B peak, with N·A the geometry's derived 0.6148 m² (test_coil.py, by hand)
    assert abs(emf.total[0, 0]) == pytest.approx(0.6148 * 2 * np.pi * 50 * 1e-6, rel=1e-12)
    assert emf.linkage_wb[0, 0] == pytest.approx(0.6148e-6, rel=1e-12)
    side = hum_emf(coils, [UniformSource(field=1e-6, axis=[1, 0, 0])], mains_hz=50.0, harmonics=(1.0,))
    assert np.all(side.total == 0)


def test_emf_is_the_time_derivative_of_the_flux():
    # Faraday's law checked by differentiating the flux numerically: Φ_c(t) = k_c·s(t), s(t) from
    # render.chain.hum.field (the source's waveform, with its own harmonics and phase), against emf_samples
    coils = coil_pair(DEMO, DEMO, position_a=0.038, position_b=0.056)
    src = DipoleSource(moment=0.05, at=[0.3, 0.2, 0.1], axis=[0.2, 0.5, 1.0], harmonics=(1.0, 0.1, 0.4), phase=30.0)
    fs, n = 96000, 2000
    e = emf_samples(coils, [src], n, sample_rate=fs, mains_hz=50.0, harmonics=(1, 0, 0), hum_polarity=(1, -1))
    k = hum_emf(coils, [src], mains_hz=50.0, harmonics=(1, 0, 0)).linkage_wb[:, 0] / src.moment
    ph = np.deg2rad(30.0) * np.arange(1, 4)
    s = hm.field(n + 2, sample_rate=fs, mains_hz=50.0, field_t=0.05, harmonics=src.harmonics, start=-1, phases=ph)
    ds = (s[2:] - s[:-2]) * fs / 2  # central differences: relative error (2π·3·50/fs)²/6 ≈ 4e-5 at H3
    np.testing.assert_allclose(e[0], k[0] * ds, rtol=0, atol=1e-4 * np.abs(e[0]).max())
    np.testing.assert_allclose(e[1], -k[1] * ds, rtol=0, atol=1e-4 * np.abs(e[1]).max())


def test_phase_advances_the_whole_waveform():
    # harmonic h shifted by h·phase: sin(2π·h·f·t + h·φ) is the source's waveform advanced by φ/360 of a
    # mains period (it reaches each point earlier: e90[n] = e0[n + 240]); at 48 kHz and 50 Hz a period
    # is 960 samples, so 90° is 240 samples (arithmetic)
    coils = coil_pair(DEMO, DEMO, position_a=0.038, position_b=0.056)
    kw = dict(sample_rate=48000, mains_hz=50.0, harmonics=(1.0, 0.2, 0.3, 0.0, 0.1))
    at = [0.5, -0.2, 0.3]
    e0 = emf_samples(coils, [DipoleSource(moment=0.05, at=at)], 2000, **kw)
    e90 = emf_samples(coils, [DipoleSource(moment=0.05, at=at, phase=90.0)], 1000, **kw)
    np.testing.assert_allclose(e90, e0[:, 240:1240], rtol=0, atol=1e-12 * np.abs(e0).max())


def test_phasors_and_samples_agree_and_sources_superpose():
    coils = coil_pair(DEMO, DEMO, position_a=0.038, position_b=0.056)
    srcs = [
        DipoleSource(moment=0.05, at=[0.4, 0.1, 0.05]),
        UniformSource(field=0.5e-6, axis=[0.3, 0, 1], phase=-40.0),
        DipoleSource(moment=0.02, at=[-0.2, 0.6, -0.3], axis=[1, 1, 0], harmonics=(1, 0, 2)),
    ]
    kw = dict(mains_hz=60.0, harmonics=(1.0, 0.05, 0.3))
    emf = hum_emf(coils, srcs, **kw)
    e = emf_samples(coils, srcs, 3000, sample_rate=44100, start=77, **kw)
    for c in range(2):
        np.testing.assert_allclose(steady_samples(emf.total[c], 3000, sample_rate=44100, mains_hz=60.0, start=77), e[c], rtol=0, atol=1e-12 * np.abs(e[c]).max())
    parts = sum(emf_samples(coils, [s], 3000, sample_rate=44100, start=77, **kw) for s in srcs)
    np.testing.assert_allclose(e, parts, rtol=0, atol=1e-13 * np.abs(e).max())


def test_bad_sources_are_refused_in_one_line():
    with pytest.raises(InputError, match=r"axis=\[0, 0, 0\]: an axis needs a direction"):
        DipoleSource(moment=0.05, at=[1, 0, 0], axis=[0, 0, 0])
    with pytest.raises(InputError, match="at=.*three finite numbers"):
        DipoleSource(moment=0.05, at=[1, 0])
    with pytest.raises(InputError, match="moment=-1"):
        DipoleSource(moment=-1, at=[1, 0, 0])
    with pytest.raises(InputError, match="harmonics.*non-negative"):
        UniformSource(field=1e-6, harmonics=[1, -0.2])
    coils = coil_pair(DEMO, DEMO, position_a=0.038, position_b=0.056)
    with pytest.raises(InputError, match="hum source 1 harmonics: 2 values, but the \\[hum\\] profile has 3"):
        hum_emf(coils, [UniformSource(field=1e-6, harmonics=[1, 0.2])], mains_hz=50.0, harmonics=(1, 0, 0.3))
    with pytest.raises(InputError, match="hum source 2 \\(dipole\\) at=.* lies within coil_b's winding"):
        hum_emf(coils, [UniformSource(field=1e-6), DipoleSource(moment=0.05, at=[0.009, 0.02, -0.004])], mains_hz=50.0, harmonics=(1,))
