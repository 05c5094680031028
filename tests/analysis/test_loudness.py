"""The BS.1770 meter against the standard's own coefficients and the EBU Tech 3341 compliance signals.

Sources:
- Recommendation ITU-R BS.1770-4 (10/2015), Annex 1, Tables 1 and 2: the
  K-weighting filters' coefficients at 48 kHz (from memory; they are the
  standard's printed values, reproduced widely);
- EBU Tech 3341 (V4, 2016), "Loudness Metering: 'EBU Mode' metering to
  supplement EBU R 128 loudness normalization", Table 1: the minimum-
  requirements test signals (stereo 1 kHz sines, each channel's peak level in
  dBFS) and the integrated loudness a conforming meter reads, ±0.1 LU (cases
  1–5); true peak within +0.2/−0.4 dB (signal levels from memory).
The signals are generated here, as the document describes them.
"""

from __future__ import annotations

import numpy as np
import pytest

from render.analysis.loudness import LoudnessMeter, integrated_loudness, k_weighting, true_peak_dbtp

RATE = 48000

# BS.1770-4 Table 1 (the shelf) and Table 2 (the high pass, "RLB"), 48 kHz: (b0, b1, b2), (1, a1, a2)
TABLE_1 = ((1.53512485958697, -2.69169618940638, 1.19839281085285), (1.0, -1.69065929318241, 0.73248077421585))
TABLE_2 = ((1.0, -2.0, 1.0), (1.0, -1.99004745483398, 0.99007225036621))


def test_k_weighting_at_48_khz_is_the_standards_tables():
    (shelf_b, shelf_a), (hp_b, hp_a) = k_weighting(RATE)
    np.testing.assert_allclose(shelf_b, TABLE_1[0], rtol=0, atol=1e-8)
    np.testing.assert_allclose(shelf_a, TABLE_1[1], rtol=0, atol=1e-8)
    np.testing.assert_allclose(hp_b, TABLE_2[0], rtol=0, atol=1e-12)
    np.testing.assert_allclose(hp_a, TABLE_2[1], rtol=0, atol=1e-8)


def _stereo_tone(steps: list[tuple[float, float]]) -> np.ndarray:
    """Stereo 1 kHz sine in steps of (peak level dBFS, seconds), phase continuous."""
    amp = np.concatenate([np.full(round(seconds * RATE), 10.0 ** (level / 20.0)) for level, seconds in steps])
    tone = amp * np.sin(2 * np.pi * 1000.0 * np.arange(amp.size) / RATE)
    return np.vstack([tone, tone])


# EBU Tech 3341 Table 1, cases 1–5: (steps, expected integrated loudness, LUFS)
TECH_3341 = {
    1: ([(-23.0, 20.0)], -23.0),
    2: ([(-33.0, 20.0)], -33.0),
    3: ([(-36.0, 10.0), (-23.0, 60.0), (-36.0, 10.0)], -23.0),
    4: ([(-72.0, 10.0), (-36.0, 10.0), (-23.0, 60.0), (-36.0, 10.0), (-72.0, 10.0)], -23.0),
    5: ([(-26.0, 20.0), (-20.0, 20.1), (-26.0, 20.0)], -23.0),
}


@pytest.mark.parametrize("case", sorted(TECH_3341))
def test_tech_3341_integrated_loudness(case):
    steps, expected = TECH_3341[case]
    x = _stereo_tone(steps)
    assert abs(integrated_loudness(x, sample_rate=RATE) - expected) <= 0.1
    # the streamed meter, fed in uneven pieces, gives the same value to the last bit
    meter = LoudnessMeter(sample_rate=RATE, channels=2)
    for piece in np.array_split(x, 37, axis=1):
        meter.add(piece)
    assert meter.integrated() == integrated_loudness(x, sample_rate=RATE)


def test_one_channel_full_scale_997_hz_reads_minus_3_01():
    # BS.1770-4 Annex 1: a 0 dBFS 997 Hz sine in one front channel reads −3.01 LKFS
    tone = np.sin(2 * np.pi * 997.0 * np.arange(10 * RATE) / RATE)
    assert integrated_loudness(tone, sample_rate=RATE) == pytest.approx(-3.01, abs=0.01)


@pytest.mark.parametrize(("fraction", "phase_deg"), [(4, 45.0), (6, 60.0), (8, 67.5)])
def test_true_peak_between_samples(fraction, phase_deg):
    # Tech 3341's true-peak signals: a −6 dBFS sine at fs/4, fs/6 or fs/8 whose peaks fall between
    # samples (sample peak up to 3 dB low); a conforming meter reads −6.0 dBTP, +0.2/−0.4 dB
    # (faded in and out over 10 ms: a sine cut on at full level has a real overshoot of its own at the
    # cut, up to +0.7 dB here, which is not what these cases measure)
    n = np.arange(RATE)
    x = 10 ** (-6 / 20) * np.sin(2 * np.pi * n / fraction + np.radians(phase_deg))
    fade = np.sin(0.5 * np.pi * np.arange(480) / 480) ** 2
    x[:480] *= fade
    x[-480:] *= fade[::-1]
    assert 20 * np.log10(np.max(np.abs(x))) < -6.5  # the samples alone miss the peak
    assert -6.4 <= true_peak_dbtp(x) <= -5.8


def test_a_gain_moves_blocks_across_the_absolute_gate():
    # BS.1770-4 eq. 5: the −70 LKFS gate is absolute, so the loudness of a scaled signal is not the
    # loudness shifted by the gain once blocks cross it. Stereo 1 kHz tones read their peak level
    # (EBU Tech 3341 Table 1's signals): −62 and −69 dBFS for 10 s each read about −64.2 LUFS (the mean of their powers);
    # 2 dB lower, the second half falls under the gate and the whole reads the first half's −64.
    x = _stereo_tone([(-62.0, 10.0), (-69.0, 10.0)])
    meter = LoudnessMeter(sample_rate=RATE, channels=2)
    meter.add(x)
    lowered = x * 10.0 ** (-2.0 / 20.0)
    assert meter.integrated(gain_db=-2.0) == pytest.approx(integrated_loudness(lowered, sample_rate=RATE), abs=1e-9)
    assert meter.integrated(gain_db=-2.0) == pytest.approx(-64.0, abs=0.1)
    assert meter.integrated() - 2.0 == pytest.approx(-66.2, abs=0.1)  # the shifted figure a plain offset would give


@pytest.mark.parametrize("cycle", [32, 16, 12, 10])  # 4x points per cycle: tones at 6, 12, 16 and 19.2 kHz at 48 kHz
def test_the_true_peak_margin_covers_what_the_4x_meter_misses(cycle):
    # Over-sampling error (the one BS.1770-4 Annex 2 notes): a sine with `cycle` over-sampled points per period, its
    # crest midway between two of them, is read at cos(π/cycle) of its peak (the nearest point is π/cycle off in
    # phase; closed form). Towards half the sample rate this tends to cos(π/8), 0.688 dB, which the margin covers.
    from render.analysis.loudness import TRUE_PEAK_MARGIN_DB, ceiling_gains, true_peak_aim

    n = np.arange(2 * RATE)
    x = np.cos(2 * np.pi * 4 * n / cycle + np.pi / cycle)  # amplitude 1: 0 dBTP
    fade = np.sin(0.5 * np.pi * np.arange(4800) / 4800) ** 2  # 100 ms fades: no overshoot at a cut
    x[:4800] *= fade
    x[-4800:] *= fade[::-1]
    missed = -true_peak_dbtp(x)
    closed = -20 * np.log10(np.cos(np.pi / cycle))
    assert missed == pytest.approx(closed, abs=0.05)  # the meter misses about what the closed form says
    assert missed < TRUE_PEAK_MARGIN_DB
    assert -20 * np.log10(np.cos(np.pi / 8)) == pytest.approx(0.688, abs=0.0005) and 0.688 < TRUE_PEAK_MARGIN_DB
    # a gain aimed by ceiling_gains keeps the peak the meter missed under the ceiling
    gains, lowered = ceiling_gains([-3.01], [-missed], target_lufs=0.0, ceiling_dbtp=-1.0)
    assert true_peak_aim(-1.0) == pytest.approx(-1.0 - TRUE_PEAK_MARGIN_DB)
    assert 0.0 + gains[0] <= -1.0  # the true peak (0 dBTP) after the gain
