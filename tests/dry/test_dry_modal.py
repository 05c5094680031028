"""Modal synthesis of string velocity: closed forms, measured spectra and behaviour."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.signal import butter, sosfiltfilt
from scipy.signal.windows import blackmanharris

from render.dry.modal import (
    T60_FACTOR,
    aperture_weights,
    decay_rates,
    mode_frequencies,
    mute_rates,
    pitch_ratio,
    pluck_amplitudes,
    position_weights,
    string_velocity,
    t60,
)
from render.dry.phrase import parse_phrase
from render.errors import InputError

FS = 48000
L = 0.648


def one_note(seconds=2.0, instrument=None, **note):
    table = {"seconds": seconds, "note": [{"time": 0.0, **note}]}
    if instrument:
        table["instrument"] = instrument
    return parse_phrase(table, source="test.toml")


def spectrum(signal, fs=FS):
    window = blackmanharris(signal.size)
    spec = np.fft.rfft(signal * window)
    freqs = np.fft.rfftfreq(signal.size, 1.0 / fs)
    return freqs, spec


def peak_at(freqs, spec, f, half_width=3.0):
    """The complex spectrum value of largest magnitude within f +/- half_width Hz."""
    band = np.flatnonzero(np.abs(freqs - f) <= half_width)
    k = band[np.argmax(np.abs(spec[band]))]
    return spec[k]


def model_modes(phrase, note_index=0):
    """Mode frequencies of a note exactly as the synthesis forms them."""
    note = phrase.notes[note_index]
    inst = phrase.instrument
    b = inst.string_inharmonicity(note.string) * (inst.scale_length / note.length) ** 2
    f0 = note.frequency / math.sqrt(1.0 + b)
    return f0, b


# --- closed forms -----------------------------------------------------------


def test_triangular_pluck_midpoint():
    # Blackstock, Fundamentals of Physical Acoustics, 2000, p. 224:
    # beta = 1/2 gives a1 = 0.8106 h, a2 = 0, a3 = -0.0901 h.
    a = pluck_amplitudes(np.array([1, 2, 3]), strength=1.0, beta=0.5)
    assert a[0] == pytest.approx(0.8106, abs=5e-5)
    assert abs(a[1]) < 1e-12
    assert a[2] == pytest.approx(-0.0901, abs=5e-5)


def test_triangular_pluck_fifth_mode_missing_at_one_fifth():
    # Blackstock 2000, p. 224: plucked at beta = 0.2, mode 5 is absent.
    a = pluck_amplitudes(np.arange(1, 11), strength=1.0, beta=0.2)
    assert abs(a[4]) < 1e-12
    assert abs(a[9]) < 1e-12
    assert np.all(np.abs(a[[0, 1, 2, 3, 5]]) > 1e-3)


def test_stiff_string_partials():
    # f_n = n f0 sqrt(1 + B n^2) (H. Fletcher, JASA 36(1), 1964; from memory for the
    # citation): B = 1e-4, f0 = 82.41 Hz gives f10 = 828.21 Hz.
    assert mode_frequencies(np.array([10]), f0=82.41, inharmonicity=1e-4)[0] == pytest.approx(828.21, abs=0.005)
    # B = 0 is the harmonic series.
    assert np.allclose(mode_frequencies(np.arange(1, 6), f0=100.0, inharmonicity=0.0), [100, 200, 300, 400, 500], rtol=0, atol=1e-12)


def test_window_factor():
    # Paiva, Pakarinen & Valimaki, JAES 60(10), 2012, sensitivity width: a window
    # W = 20 mm on L = 648 mm weights mode 10 by sin(u)/u, u = n pi W / (2L): 0.9613.
    assert aperture_weights(np.array([10]), aperture=0.020, length=0.648)[0] == pytest.approx(0.9613, abs=5e-5)
    assert aperture_weights(np.array([1, 7]), aperture=0.0, length=0.648).tolist() == [1.0, 1.0]


def test_position_weight_nulls_at_quarter_length():
    # Paiva et al. 2012: a sensing point at L/4 sits on the nodes of modes 4, 8, 12.
    w = position_weights(np.arange(1, 13), position=L / 4, length=L)
    assert np.all(np.abs(w[[3, 7, 11]]) < 1e-12)
    assert np.all(np.abs(np.delete(w, [3, 7, 11])) > 0.3)


def test_t60_definition():
    # T60 = 6.908 / sigma: a 60 dB fall is ln(1000) nepers (Chaigne & Askenfelt, JASA 95(2), 1994).
    assert T60_FACTOR == pytest.approx(6.908, abs=5e-4)
    assert t60(1.0) == pytest.approx(6.908, abs=5e-4)


def test_decay_grows_with_mode_number():
    # sigma_n = b1 + b3 (n pi / L)^2 (Chaigne & Askenfelt 1994): b1 from the decay time.
    s = decay_rates(np.array([1, 10]), length=L, decay=T60_FACTOR, curvature_loss=1e-3)
    assert s[0] == pytest.approx(1.0 + 1e-3 * (math.pi / L) ** 2)
    assert s[1] == pytest.approx(1.0 + 1e-3 * (10 * math.pi / L) ** 2)


# --- measured from the synthesis --------------------------------------------


def test_quarter_length_point_removes_modes_4_8_12_from_the_spectrum():
    # Paiva, Pakarinen & Valimaki, JAES 2012: EMF_n ~ sin(n pi gamma); gamma = 1/4 nulls 4, 8, 12.
    phrase = one_note(seconds=2.0, string=6, fret=0, pluck_at="120mm")
    v = string_velocity(phrase, sample_rate=FS, positions=[L / 4], apertures=[0.0])[0]
    freqs, spec = spectrum(v)
    f0, b = model_modes(phrase)
    fn = mode_frequencies(np.arange(1, 15), f0=f0, inharmonicity=b)
    level = 20 * np.log10(np.abs([peak_at(freqs, spec, f) for f in fn]))
    for n in (4, 8, 12):
        neighbours = max(level[n - 2], level[n])
        assert level[n - 1] < neighbours - 60.0, (n, level[n - 1], neighbours)


def demodulate(v, f, fs=FS, cutoff=15.0):
    """Envelope of the component at f: shift it to 0 Hz and low-pass it."""
    t = np.arange(v.size) / fs
    z = v * np.exp(-2j * np.pi * f * t)
    sos = butter(4, cutoff, fs=fs, output="sos")
    return 2.0 * np.abs(sosfiltfilt(sos, z.real) + 1j * sosfiltfilt(sos, z.imag))


@pytest.mark.parametrize("n, mute", [(1, 0.0), (5, 0.0), (12, 0.0), (2, 0.3)])
def test_measured_t60_matches_the_parameter(n, mute):
    # Each mode decays as e^(-sigma_n t) with sigma_n = b1 + b3 (n pi / L)^2
    # (Chaigne & Askenfelt, JASA 1994) and T60 = 6.908 / sigma_n.
    inst = {"decay": "5s", "curvature_loss": 2e-3, "mute_decay": "0.5s"}
    phrase = one_note(seconds=3.0, instrument=inst, string=5, fret=0, pluck_at="130mm", mute=mute)
    v = string_velocity(phrase, sample_rate=FS, positions=[0.09], apertures=[0.0])[0]
    f0, b = model_modes(phrase)
    fn = float(mode_frequencies(np.array([n]), f0=f0, inharmonicity=b)[0])
    sigma = decay_rates(np.array([n]), length=L, decay=5.0, curvature_loss=2e-3)[0] + mute_rates(np.array([fn]), mute=mute, mute_decay=0.5)[0]
    expected = 6.908 / sigma
    env = demodulate(v, fn)
    t = np.arange(v.size) / FS
    stop = min(2.6, 0.8 * expected)  # stay well above the floor of neighbouring leakage
    sel = (t > 0.3) & (t < stop)
    slope = np.polyfit(t[sel], np.log(env[sel]), 1)[0]
    measured = 6.908 / -slope
    assert measured == pytest.approx(expected, rel=0.02)


def test_first_partials_sit_on_equal_temperament():
    # ISO 16:1975 with A4 = 440 Hz (from memory, values recomputed): E2 82.4069, A2 110.000,
    # D3 146.832, G3 195.998, B3 246.942, E4 329.628 Hz. The first partial is the note's pitch.
    expected = [82.4069, 110.000, 146.832, 195.998, 246.942, 329.628]
    for string, f_expected in zip(range(6, 0, -1), expected):
        phrase = one_note(seconds=4.0, string=string, fret=0)
        v = string_velocity(phrase, sample_rate=FS, positions=[0.15], apertures=[0.0])[0]
        freqs, spec = spectrum(v)
        k = np.argmin(np.abs(freqs - f_expected))
        # parabolic interpolation of the log magnitude around the peak bin
        k = k - 3 + int(np.argmax(np.abs(spec[k - 3 : k + 4])))
        a, b0, c = np.log(np.abs(spec[k - 1 : k + 2]))
        f_peak = freqs[k] + 0.5 * (a - c) / (a - 2 * b0 + c) * (freqs[1] - freqs[0])
        assert 1200 * abs(math.log2(f_peak / f_expected)) < 0.5


@pytest.mark.parametrize(
    "note, expected_hz",
    [
        ({"string": 6, "fret": 0}, 82.4069),  # ISO 16 (from memory): E2
        ({"string": 5, "fret": 0}, 110.000),  # A2
        ({"string": 4, "fret": 0}, 146.832),  # D3
        ({"string": 3, "fret": 0}, 195.998),  # G3
        ({"string": 2, "fret": 0}, 246.942),  # B3
        ({"string": 1, "fret": 0}, 329.628),  # E4
        ({"string": 6, "fret": 5}, 110.000),  # A2 on the low string
        ({"pitch": "A3"}, 220.000),  # 440 / 2
        ({"string": 1, "fret": 12}, 659.255),  # E5 = 2 x E4
    ],
)
def test_pitch_measured_by_yin_within_5_cents(note, expected_hz):
    # An independent estimator, YIN (de Cheveigne & Kawahara, JASA 111(4), 2002), as
    # implemented by librosa, against ISO 16 equal temperament from A4 = 440 Hz.
    import librosa  # a core dependency (pyproject.toml): never skipped

    phrase = one_note(seconds=1.2, **note)
    v = string_velocity(phrase, sample_rate=FS, positions=[0.15], apertures=[0.0])[0]
    f = librosa.yin(v[int(0.1 * FS) :], fmin=60, fmax=1000, sr=FS, frame_length=4096)
    assert 1200 * abs(math.log2(np.median(f) / expected_hz)) < 5.0


def test_bend_reaches_its_target_pitch():
    # YIN (librosa) again: two semitones up from D4 is E4, 329.628 Hz (ISO 16, from memory).
    import librosa  # a core dependency (pyproject.toml): never skipped

    phrase = one_note(seconds=1.6, string=3, fret=7, bend={"semitones": 2, "start": 0.4, "over": 0.2})
    v = string_velocity(phrase, sample_rate=FS, positions=[0.15], apertures=[0.0])[0]
    after = librosa.yin(v[int(0.7 * FS) :], fmin=100, fmax=1000, sr=FS, frame_length=4096)
    assert 1200 * abs(math.log2(np.median(after) / 329.628)) < 5.0
    before = librosa.yin(v[int(0.05 * FS) : int(0.4 * FS)], fmin=100, fmax=1000, sr=FS, frame_length=4096, center=False)
    assert 1200 * abs(math.log2(np.median(before) / 293.665)) < 5.0  # D4 before the bend


def test_vibrato_swings_around_the_pitch():
    # The ratio curve itself: +/- depth cents about the note, mean close to zero cents.
    phrase = one_note(seconds=2.0, string=2, fret=5, vibrato={"depth_cents": 20, "rate_hz": 5.0})
    t = np.arange(0, 2.0, 1 / FS)
    cents = 1200 * np.log2(pitch_ratio(t, note=phrase.notes[0]))
    assert cents.max() == pytest.approx(20.0, abs=0.05)
    assert cents.min() == pytest.approx(-20.0, abs=0.05)
    assert abs(cents[t > 0.2].mean()) < 1.0


def centroid(v, fs=FS):
    freqs, spec = spectrum(v, fs)
    power = np.abs(spec) ** 2
    band = (freqs >= 20) & (freqs <= 20000)
    return float(np.sum(freqs[band] * power[band]) / np.sum(power[band]))


def test_moving_both_points_toward_the_bridge_raises_the_centroid():
    # Behaviour: near the bridge sin(n pi x / L) favours high modes (Paiva et al. 2012).
    phrase = parse_phrase({"seconds": 3.0, "chord": [{"time": 0.0, "frets": [3, 2, 0, 0, 0, 3]}]}, source="g.toml")
    centroids = []
    for pair in ([0.15, 0.17], [0.09, 0.11], [0.03, 0.05]):
        v = string_velocity(phrase, sample_rate=FS, positions=pair, apertures=[0.01, 0.01])
        centroids.append(centroid(v.sum(axis=0)))
    assert centroids[0] < centroids[1] < centroids[2]


def decay_time(v, fs=FS, drop_db=40.0):
    """Time from the peak of the 10 ms RMS envelope until it has fallen drop_db."""
    hop = int(0.01 * fs)
    frames = v[: v.size // hop * hop].reshape(-1, hop)
    level = 10 * np.log10(np.mean(frames**2, axis=1) + 1e-30)
    top = int(np.argmax(level))
    below = np.flatnonzero(level[top:] < level[top] - drop_db)
    return (below[0] if below.size else level.size - top) * hop / fs


def test_muting_shortens_the_decay():
    open_note = one_note(seconds=3.0, string=6, fret=0, mute=0.0)
    muted = one_note(seconds=3.0, string=6, fret=0, mute=0.8)
    v_open = string_velocity(open_note, sample_rate=FS, positions=[0.1], apertures=[0.0])[0]
    v_muted = string_velocity(muted, sample_rate=FS, positions=[0.1], apertures=[0.0])[0]
    assert decay_time(v_muted) < 0.2 * decay_time(v_open)
    # and it damps high modes more than low ones
    rates = mute_rates(np.array([100.0, 3000.0]), mute=1.0, mute_decay=0.12)
    assert rates[1] > 3 * rates[0]


def test_two_coils_differ_by_the_comb_of_their_spacing():
    # Paiva et al. 2012: mode n at point x is weighted sin(n pi x / L), so the two coils'
    # spectra differ, mode by mode, by sin(n pi x_b / L) / sin(n pi x_a / L) (sign included).
    x_a, x_b = 0.045, 0.063
    phrase = one_note(seconds=2.0, string=6, fret=0, pluck_at="140mm")
    v = string_velocity(phrase, sample_rate=FS, positions=[x_a, x_b], apertures=[0.0, 0.0])
    freqs, spec_a = spectrum(v[0])
    _, spec_b = spectrum(v[1])
    f0, b = model_modes(phrase)
    checked = 0
    # modes below 30: higher ones die within a few hundred cycles, and their spectral
    # peaks pick up leakage from stronger neighbours
    for n in range(1, 30):
        wa, wb = math.sin(n * math.pi * x_a / L), math.sin(n * math.pi * x_b / L)
        if min(abs(wa), abs(wb)) < 0.2 or abs(math.sin(n * math.pi * 0.14 / L)) < 0.2:
            continue
        f = float(mode_frequencies(np.array([n]), f0=f0, inharmonicity=b)[0])
        band = np.flatnonzero(np.abs(freqs - f) <= 3.0)
        k = band[np.argmax(np.abs(spec_a[band]))]
        ratio = spec_b[k] / spec_a[k]
        assert abs(ratio - wb / wa) < 0.01 * abs(wb / wa), (n, ratio, wb / wa)
        checked += 1
    assert checked >= 18


def test_nothing_above_nyquist_or_20k():
    phrase = one_note(seconds=0.5, string=1, fret=12, pluck_at="30mm")
    for fs in (22050, 48000, 96000):
        v = string_velocity(phrase, sample_rate=fs, positions=[0.03], apertures=[0.0])[0]
        freqs, spec = spectrum(v, fs)
        top = np.abs(spec).max()
        limit = min(20000.0, fs / 2)
        above = np.abs(spec[freqs > limit + 200])
        assert above.size == 0 or above.max() < top * 1e-4


def test_seed_is_deterministic_and_only_nudges():
    phrase = parse_phrase({"seconds": 2.0, "chord": [{"time": 0.1, "frets": [0, 2, 2, 1, 0, 0]}]}, source="e.toml")
    kw = dict(sample_rate=FS, positions=[0.05, 0.07], apertures=[0.02, 0.02])
    a = string_velocity(phrase, seed=3, **kw)
    b = string_velocity(phrase, seed=3, **kw)
    c = string_velocity(phrase, seed=4, **kw)
    assert np.array_equal(a, b)
    assert not np.array_equal(a, c)
    rms = lambda x: float(np.sqrt(np.mean(x**2)))  # noqa: E731
    assert rms(c) == pytest.approx(rms(a), rel=0.1)


def test_shape_units_and_length():
    phrase = one_note(seconds=1.0, string=6, fret=0)
    v = string_velocity(phrase, sample_rate=44100, positions=[0.04, 0.06, 0.15], apertures=0.0, seconds=0.5)
    assert v.shape == (3, 22050) and v.dtype == np.float64
    assert np.all(np.isfinite(v))
    assert v[:, 0].tolist() == [0.0, 0.0, 0.0]  # released from rest
    # velocity of a 1 mm pluck is of order c h / (L beta (1 - beta)) / 2 ~ 0.5 m/s (d'Alembert)
    assert 0.05 < np.abs(v).max() < 5.0


def test_a_new_note_stops_the_last_one_on_that_string():
    two = parse_phrase(
        {"seconds": 2.0, "note": [{"time": 0.0, "string": 5, "fret": 0}, {"time": 1.0, "string": 5, "fret": 0, "strength": "1e-9m"}]},
        source="t.toml",
    )
    v = string_velocity(two, sample_rate=FS, positions=[0.1], apertures=[0.0])[0]
    late = v[int(1.6 * FS) :]
    early = v[int(0.4 * FS) : int(0.6 * FS)]
    assert np.abs(late).max() < 1e-3 * np.abs(early).max()


def test_bad_sensing_points_are_refused():
    phrase = one_note(seconds=0.5, string=6, fret=0)
    with pytest.raises(InputError, match=r"position=0.7 m: a sensing point must lie between the bridge saddle and the nut"):
        string_velocity(phrase, sample_rate=FS, positions=[0.7], apertures=[0.0])
    with pytest.raises(InputError, match=r"aperture=-0.01 m"):
        string_velocity(phrase, sample_rate=FS, positions=[0.1], apertures=[-0.01])
    with pytest.raises(InputError, match=r"sample_rate=1000"):
        string_velocity(phrase, sample_rate=1000, positions=[0.1], apertures=[0.0])


# --- properties ---------------------------------------------------------------


@settings(max_examples=40, deadline=None)
@given(beta=st.floats(0.05, 0.95), x=st.floats(0.02, 0.98))
def test_pluck_series_rebuilds_the_triangle(beta, x):
    # The a_n are the Fourier sine coefficients of a triangle of height h at beta
    # (Blackstock 2000, p. 224): their sum at x is the triangle's height there.
    n = np.arange(1, 20001)
    y = np.sum(pluck_amplitudes(n, strength=1.0, beta=beta) * np.sin(n * np.pi * x))
    triangle = x / beta if x <= beta else (1 - x) / (1 - beta)
    assert y == pytest.approx(triangle, abs=2e-4)


@settings(max_examples=15, deadline=None)
@given(
    string=st.integers(1, 6),
    fret=st.integers(0, 15),
    mute=st.floats(0, 1),
    x=st.floats(0.01, 0.2),
    w=st.floats(0, 0.03),
    seed=st.integers(0, 2**31),
)
def test_any_valid_note_gives_finite_bounded_velocity(string, fret, mute, x, w, seed):
    phrase = one_note(seconds=0.3, string=string, fret=fret, mute=mute, pluck_at="60mm")
    v = string_velocity(phrase, sample_rate=16000, positions=[x], apertures=[w], seed=seed)
    assert np.all(np.isfinite(v))
    # d'Alembert: no point moves faster than c h / (L beta (1 - beta)) with c = 2 L f0 (+ jitter, a margin)
    note = phrase.notes[0]
    beta = 0.06 / note.length
    bound = 2 * note.length * note.frequency * note.strength / (note.length * beta * (1 - beta))
    assert np.abs(v).max() < 1.5 * bound


def test_a_note_wholly_above_nyquist_is_named_and_silent():
    # C5 (MIDI 72) + 36 frets is C8, 440 · 2^((108 − 69)/12) = 4186.0 Hz (ISO 16, equal temperament, recomputed):
    # at 8 kHz its first partial already reaches the 4000 Hz Nyquist limit, so no mode of it is synthesised
    from render.dry import synthesize
    from render.dry.modal import unsynthesised_notes

    phrase = one_note(seconds=0.5, instrument={"tuning": ["E2", "A2", "D3", "G3", "B3", "C5"]}, string=1, fret=36, pluck_at="30mm")
    v = string_velocity(phrase, sample_rate=8000, positions=[0.03], apertures=[0.0])[0]
    assert not np.any(v)
    (line,) = unsynthesised_notes(phrase, 8000)
    assert line.startswith("string 1, fret 36 at 0 s: its pitch 4186 Hz reaches the Nyquist limit of the 8000 Hz sample rate, 4000 Hz")
    dry = synthesize(phrase, positions=(0.03, 0.05), apertures=0.0, sample_rate=8000)
    assert line in dry.warnings
    # at 16 kHz (Nyquist 8 kHz) it sounds, and nothing is said
    assert unsynthesised_notes(phrase, 16000) == ()
    assert np.abs(string_velocity(phrase, sample_rate=16000, positions=[0.03], apertures=[0.0])).max() > 0.01
    # a bend counts at its top: A4 (440 Hz) bent up 12 semitones to 880 Hz, heard at 8 kHz only below the bend's top
    bent = one_note(seconds=0.5, pitch="A4", bend={"semitones": 12}, pluck_at="30mm")
    assert unsynthesised_notes(bent, 8000) == ()
    assert "(bent or swung up to 880 Hz)" in unsynthesised_notes(bent, 1700)[0]  # below the accepted rates: the rule alone
