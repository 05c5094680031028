"""Phrase files: parsing, defaults, pitch, and one-line refusals."""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from render.dry.phrase import (
    STANDARD_INHARMONICITY,
    describe,
    load_phrase,
    parse_phrase,
    pitch_frequency,
    plain_string_tension,
    stiffness_inharmonicity,
)
from render.errors import InputError

ROOT = Path(__file__).resolve().parents[2]
DEMOS = sorted((ROOT / "dry_signals").glob("*.toml"))


def phrase(**top):
    top.setdefault("note", [{"time": 0, "string": 6, "fret": 0}])
    return parse_phrase(top, source="p.toml")


def refused(data, pattern):
    with pytest.raises(InputError, match=pattern) as info:
        parse_phrase(data, source="p.toml")
    assert "\n" not in str(info.value)
    return str(info.value)


# --- pitch ------------------------------------------------------------------


@pytest.mark.parametrize(
    "name, hz",
    # ISO 16:1975, A4 = 440 Hz, equal temperament (from memory; recomputed): the six open strings.
    [("E2", 82.4069), ("A2", 110.000), ("D3", 146.832), ("G3", 195.998), ("B3", 246.942), ("E4", 329.628)],
)
def test_equal_temperament_from_a440(name, hz):
    assert pitch_frequency(name) == pytest.approx(hz, abs=5e-4 if hz < 100 else 5e-3)


def test_pitch_spellings():
    assert pitch_frequency(69) == 440.0  # MIDI 69 is A4 (MIDI 1.0 Detailed Specification, from memory)
    assert pitch_frequency("C#4") == pytest.approx(pitch_frequency("Db4"))
    assert pitch_frequency("F♯3") == pytest.approx(pitch_frequency("Gb3"))
    assert pitch_frequency("bb3") == pytest.approx(pitch_frequency("A#3"))
    assert pitch_frequency("110Hz") == 110.0
    assert pitch_frequency("A4", concert_a=432.0) == 432.0
    for bad in ("H3", 110.5, 200, "A"):
        with pytest.raises(ValueError):
            pitch_frequency(bad)


def test_plain_steel_string_stiffness():
    # H. Fletcher, JASA 36(1), 1964 (from memory): B = pi^3 E d^4 / (64 T L^2); computed by hand
    # for steel d = 0.254 mm, E = 200 GPa, rho = 7850 kg/m3, L = 0.648 m, f0 = 329.63 Hz
    # gives T = 72.6 N and B = 1.32e-5.
    t = plain_string_tension(diameter=0.254e-3, frequency=329.63, length=0.648, density=7850.0)
    assert t == pytest.approx(72.6, abs=0.05)
    b = stiffness_inharmonicity(diameter=0.254e-3, tension=t, length=0.648, modulus=200e9)
    assert b == pytest.approx(1.32e-5, abs=0.005e-5)


# --- defaults and structure -------------------------------------------------


def test_defaults_are_a_six_string_in_standard_tuning():
    p = phrase()
    inst = p.instrument
    assert inst.scale_length == pytest.approx(0.648)
    assert inst.concert_a == 440.0
    assert inst.strings == 6
    assert inst.open_pitch(6) == pytest.approx(82.4069, abs=5e-4)  # ISO 16 (from memory): E2
    assert inst.open_pitch(1) == pytest.approx(329.628, abs=5e-3)  # E4
    assert inst.inharmonicity == STANDARD_INHARMONICITY
    assert p.seconds == pytest.approx(2.0)


def test_quantities_with_units():
    p = parse_phrase(
        {
            "instrument": {"scale_length": "628.65mm", "decay": "4s", "release": "50ms"},
            "note": [{"time": "250ms", "string": 3, "fret": 2, "strength": "1.5mm", "pluck_at": "0.1m", "mute": 0.25, "duration": "0.5s"}],
        },
        source="u.toml",
    )
    n = p.notes[0]
    assert p.instrument.scale_length == pytest.approx(0.62865)
    assert (n.time, n.strength, n.pluck_at, n.mute, n.duration) == pytest.approx((0.25, 1.5e-3, 0.1, 0.25, 0.5))
    assert p.instrument.release == pytest.approx(0.05)
    # fret 2 shortens the vibrating length by 2^(-2/12) (equal temperament)
    assert n.length == pytest.approx(0.62865 * 2 ** (-2 / 12))


def test_pitch_picks_the_string_nearest_the_nut():
    p = phrase(note=[{"time": 0, "pitch": "A3"}, {"time": 1, "pitch": "E2"}, {"time": 2, "pitch": "C5"}, {"time": 3, "pitch": "A3", "string": 4}])
    assert [(n.string, round(n.fret, 6)) for n in p.notes] == [(3, 2.0), (6, 0.0), (1, 8.0), (4, 7.0)]


def test_chord_expands_in_strum_order():
    p = parse_phrase({"chord": [{"time": 1.0, "frets": ["x", 3, 2, 0, 1, 0], "strum": "40ms"}]}, source="c.toml")
    assert [n.string for n in p.notes] == [5, 4, 3, 2, 1]
    assert [round(n.time, 6) for n in p.notes] == [1.0, 1.01, 1.02, 1.03, 1.04]
    assert p.notes[0].frequency == pytest.approx(130.813, abs=1e-3)  # C3 (ISO 16, from memory)
    up = parse_phrase({"chord": [{"time": 0, "frets": [0, 2, 2, 1, 0, 0], "direction": "up"}]}, source="c.toml")
    assert [n.string for n in up.notes] == [1, 2, 3, 4, 5, 6]
    assert all(n.spread > 0 for n in up.notes)


def test_core_diameter_and_custom_tuning():
    p = parse_phrase(
        {
            "instrument": {"tuning": ["D2", "A2", "D3", "G3", "B3", "E4"], "core_diameter": ["0.5mm", "0.43mm", "0.36mm", "0.43mm", "0.33mm", "0.254mm"], "tension": [70, 86, 82, 74, 68, 72]},
            "note": [{"time": 0, "string": 6, "fret": 0}],
        },
        source="d.toml",
    )
    assert p.instrument.open_pitch(6) == pytest.approx(73.4162, abs=5e-4)  # D2 (ISO 16, from memory)
    assert p.instrument.string_inharmonicity(1) == pytest.approx(stiffness_inharmonicity(diameter=0.254e-3, tension=72, length=0.648))


def test_playing_defaults_apply_and_events_override():
    p = parse_phrase(
        {"playing": {"mute": 0.5, "strength": "2mm"}, "note": [{"time": 0, "string": 6, "fret": 0}, {"time": 1, "string": 6, "fret": 0, "mute": 0}]},
        source="m.toml",
    )
    assert [n.mute for n in p.notes] == [0.5, 0.0]
    assert p.notes[0].strength == pytest.approx(2e-3)


@pytest.mark.parametrize("path", DEMOS, ids=[p.name for p in DEMOS])
def test_shipped_demo_phrases_load(path):
    p = load_phrase(path)
    assert p.notes and p.title
    assert describe(p)["notes"] == len(p.notes)


def test_five_or_more_demos_and_a_default():
    names = {p.name for p in DEMOS}
    assert "default.toml" in names and len(names) >= 5


# --- refusals ---------------------------------------------------------------


def test_unknown_key_suggests_the_nearest():
    msg = refused({"instrument": {"scal_length": "648mm"}, "note": [{"time": 0, "pitch": "E2"}]}, r"unknown key")
    assert msg == "p.toml: [instrument]: unknown key 'scal_length'; did you mean 'scale_length'?"
    msg = refused({"note": [{"time": 0, "pitch": "E2", "strenght": "1mm"}]}, r"did you mean 'strength'\?")
    assert msg == "p.toml: [[note]] #1: unknown key 'strenght'; did you mean 'strength'?"
    refused({"titel": "x", "note": [{"time": 0, "pitch": "E2"}]}, r"p.toml: unknown table or key 'titel'; did you mean 'title'\?")
    refused({"note": [{"time": 0, "pitch": "E2", "bend": {"semitone": 1}}]}, r"\[\[note\]\] #1 bend: unknown key 'semitone'; did you mean 'semitones'\?")
    # a shortened name gets the one key it begins (difflib alone finds none: "scale" is 0.59 alike)
    refused({"instrument": {"scale": 0.6}, "note": [{"time": 0, "pitch": "E2"}]}, r"^p.toml: \[instrument\]: unknown key 'scale'; did you mean 'scale_length'\?$")
    # and a beginning two keys share names neither
    refused({"instrument": {"pol": 1}, "note": [{"time": 0, "pitch": "E2"}]}, r"unknown key 'pol'; known keys: scale_length, ")


def test_a_phrase_shorter_than_a_clip_measures_is_refused():
    # 0.05 s: the least a recording may last (render.dry.MIN_RECORDED_SECONDS, common practice, no source)
    msg = refused({"seconds": 1e-6, "note": [{"time": 0, "string": 1, "fret": 0}]}, r"seconds=1e-06: must be >= 0.05 s")
    assert msg.endswith("give seconds = 0.05 or more")
    assert phrase(seconds="50ms").seconds == 0.05


def test_a_tuning_no_steel_string_reaches_is_warned():
    # A plain string breaks when its wave speed 2·f·L = sqrt(T/mu) passes sqrt(Sut/rho) (Mersenne's law); music
    # wire (ASTM A228) has Sut = A/d^m, A = 2211 MPa·mm^0.145 (Shigley's spring-wire table, from memory; 2211 MPa
    # at 1 mm), so 0.2032 mm wire of 7850 kg/m3 breaks at sqrt(2211e6 · 0.2032^-0.145 / 7850) = 596 m/s.
    from render.dry.phrase import breaking_wave_speed

    most = math.sqrt(2211e6 * 0.2032**-0.145 / 7850)
    assert breaking_wave_speed() == pytest.approx(most) and round(most) == 596
    assert breaking_wave_speed(1e-3) == pytest.approx(math.sqrt(2211e6 / 7850))
    p = phrase(instrument={"tuning": ["2000Hz"]}, note=[{"time": 0, "string": 1, "fret": 0}])
    (line,) = p.warnings
    assert line.startswith("p.toml: [instrument] tuning: string 1 at 2000 Hz over 648 mm needs a wave speed 2·f·L = 2592 m/s, 4.4× the 596 m/s")  # 2592 / 595.7 = 4.35
    assert "an estimate" in line and "ASTM A228" in line
    # standard tuning: the high E4 needs 2 · 329.63 · 0.648 = 427 m/s, 72 % of the limit: nothing said
    assert phrase().warnings == ()
    assert all(load_phrase(demo).warnings == () for demo in DEMOS)


def test_a_bend_no_steel_string_reaches_is_warned():
    # fretting keeps f·L (the string is shortened as the pitch rises); a bend tightens it: A4 at fret 5 of the E4
    # string (648 · 329.63/440 = 485 mm) bent up an octave needs 2 · 880 · 0.4854 = 854 m/s, past 596 m/s; the open
    # string bent a whole tone, 2 · 369.99 · 0.648 = 479 m/s, is fine
    far = phrase(note=[{"time": 0, "string": 1, "fret": 5, "bend": {"semitones": 12}}])
    (line,) = far.warnings
    assert line.startswith("p.toml: [[note]] #1: string 1 bent at 880 Hz over 485 mm needs a wave speed 2·f·L = 854 m/s")
    assert phrase(note=[{"time": 0, "string": 1, "fret": 24}, {"time": 1, "string": 1, "fret": 0, "bend": {"semitones": 2}}]).warnings == ()


def test_core_diameter_without_tension_is_warned():
    # B = pi^3 E d^4 / (64 T L^2) (Fletcher 1964): a 0.48 mm core at E2 taken as plain steel has 16.2 N
    # (Mersenne's law) and B = 7.56e-4; wound, at about 78 N (from memory), B = 1.57e-4
    cores = ["0.48mm", "0.41mm", "0.36mm", "0.43mm", "0.33mm", "0.254mm"]
    p = phrase(instrument={"core_diameter": cores})
    (line,) = p.warnings
    assert line.startswith("p.toml: [instrument] core_diameter without tension: each string is taken as plain steel of that diameter tuned to pitch (16.2, ")
    assert p.instrument.string_inharmonicity(6) == pytest.approx(7.56e-4, rel=1e-3)
    given = phrase(instrument={"core_diameter": cores, "tension": [78, 87, 82, 74, 68, 72]})
    assert given.warnings == () and given.instrument.string_inharmonicity(6) == pytest.approx(1.57e-4, rel=2e-3)


def test_negative_and_out_of_range_values():
    refused({"note": [{"time": -1, "pitch": "E2"}]}, r"^p.toml: \[\[note\]\] #1 time=-1: must be >= 0 s")
    refused({"note": [{"time": 0, "pitch": "E2", "strength": "-1mm"}]}, r'strength="-1mm": must be > 0 m and <= 0.01 m')
    refused({"note": [{"time": 0, "pitch": "E2", "mute": 1.5}]}, r"mute=1.5: must be >= 0 and <= 1")
    refused({"note": [{"time": 0, "pitch": "E2", "duration": 0}]}, r"duration=0: must be > 0 s")
    refused({"instrument": {"scale_length": "6m"}, "note": [{"time": 0, "pitch": "E2"}]}, r'scale_length="6m": must be >= 0.2 m and <= 1.5 m')
    refused({"instrument": {"decay": -3}, "note": [{"time": 0, "pitch": "E2"}]}, r"\[instrument\] decay=-3: must be >= 0.05 s")
    refused({"note": [{"time": 0, "string": 7, "fret": 0}]}, r"string=7: expected a whole number 1..6")
    refused({"note": [{"time": 0, "string": 1, "fret": -2}]}, r"fret=-2: expected a whole fret number 0..36")


def test_wrong_units_and_unreadable_values():
    refused({"note": [{"time": 0, "pitch": "E2", "strength": "1ms"}]}, r"strength=\"1ms\": unit 's' does not fit a length")
    refused({"note": [{"time": "soon", "pitch": "E2"}]}, r"time=\"soon\": cannot read 'soon' as a time")
    refused({"note": [{"time": 0, "pitch": "H3"}]}, r'pitch="H3": expected a note name such as "A3"')
    refused({"note": [{"time": 0, "pitch": 45.5}]}, r'pitch=45.5: a number is read as a MIDI note and must be whole; write "45.5Hz"')
    refused({"chord": [{"time": 0, "frets": [0, 2, 2]}]}, r"frets=\[0, 2, 2\]: expected a list of 6 frets")
    refused({"chord": [{"time": 0, "frets": [0, 2, 2, 1, 0, "o"]}]}, r'entry 6 \("o"\) must be a fret')
    refused({"chord": [{"time": 0, "frets": ["x"] * 6}]}, r"no string is played")
    refused({"chord": [{"time": 0, "frets": [0] * 6, "direction": "sideways"}]}, r'direction="sideways": expected "down"')


def test_missing_tables_and_keys():
    refused({"title": "empty"}, r"^p.toml: the phrase has no \[\[note\]\] or \[\[chord\]\] events; add one")
    refused({"note": [{"string": 6, "fret": 0}]}, r"^p.toml: \[\[note\]\] #1 time is missing; give the start in seconds")
    refused({"note": [{"time": 0}]}, r"pitch is missing; give string and fret")
    refused({"note": [{"time": 0, "fret": 3}]}, r"fret=3: a fret needs a string")
    refused({"note": {"time": 0, "pitch": "E2"}}, r"note=\{.*\}: expected an array of tables; write each event under its own \[\[note\]\] header")
    refused({"chord": [{"time": 0}]}, r"\[\[chord\]\] #1 frets is missing")
    refused({"note": [{"time": 0, "pitch": "E2", "bend": {"over": 0.1}}]}, r"bend semitones is missing")


def test_impossible_notes():
    refused({"note": [{"time": 0, "pitch": "C2"}]}, r'pitch="C2": 65.41 Hz is outside the instrument\'s range')
    refused({"note": [{"time": 0, "pitch": "E2", "string": 1}]}, r"cannot be played on string 1")
    refused({"note": [{"time": 0, "string": 1, "fret": 24, "pluck_at": "200mm"}]}, r'#1 pluck_at="200mm": must be shorter than the vibrating length 162.0 mm')


def test_a_pluck_point_too_far_names_the_table_it_was_written_in():
    # project rule, no outside source (bad input names what was wrong): the vibrating length of fret f is
    # scale · 2^(-f/12) (equal temperament), 648 mm · 2^(-22/12) = 181.8 mm on string 1, fret 22; a pluck point
    # the event takes from [playing] is named there, as written, with the event that uses it
    assert 648 * 2 ** (-22 / 12) == pytest.approx(181.8, abs=0.05)
    msg = refused(
        {"playing": {"pluck_at": "300mm"}, "note": [{"time": 0, "string": 1, "fret": 22}]},
        r'^p\.toml: \[playing\] pluck_at="300mm" \(used by \[\[note\]\] #1\): must be shorter than the vibrating length 181\.8 mm \(string 1, fret 22\)',
    )
    assert "[[note]] #1 pluck_at" not in msg and "0.3" not in msg
    msg = refused(
        {"playing": {"pluck_at": "300mm"}, "chord": [{"time": 0, "frets": ["x", "x", "x", "x", "x", 22]}]},
        r'\[playing\] pluck_at="300mm" \(used by \[\[chord\]\] #1\): must be shorter than the vibrating length 181\.8 mm',
    )
    assert msg.endswith("give this [[chord]] a pluck_at of its own, or change [playing]'s")
    # not written anywhere: the default (120 mm) is named as such; 250 mm · 2^(-15/12) = 105.1 mm
    refused(
        {"instrument": {"scale_length": "250mm"}, "note": [{"time": 0, "string": 1, "fret": 15}]},
        r"\[\[note\]\] #1 pluck_at \(not given: the default 120 mm\): must be shorter than the vibrating length 105\.1 mm .*give this \[\[note\]\] or \[playing\] a pluck_at$",
    )
    refused(
        {"note": [{"time": 1, "string": 2, "fret": 0}], "chord": [{"time": 1, "frets": [0, 2, 2, 1, 0, 0], "strum": 0}]},
        r"string 2 already starts a note at that moment",
    )
    refused({"instrument": {"inharmonicity": [1e-4] * 5}}, r"inharmonicity=\[.*\]: expected 6 values")
    refused({"instrument": {"inharmonicity": 1e-4, "core_diameter": "0.3mm"}}, r"give inharmonicity or core_diameter, not both")


def test_load_phrase_file_errors(tmp_path):
    with pytest.raises(InputError, match=r"missing.toml: no such file"):
        load_phrase(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("[[note]\ntime = 0\n")
    with pytest.raises(InputError, match=r"bad.toml: not valid TOML \(.*\); check quotes and brackets"):
        load_phrase(bad)
    binary = tmp_path / "bin.toml"
    binary.write_bytes(b"\xff\xfe\x00")
    with pytest.raises(InputError, match=r"not a UTF-8 text file"):
        load_phrase(binary)
    good = tmp_path / "riff.toml"
    good.write_text('[[note]]\ntime = 0\npitch = "E2"\n')
    p = load_phrase(good)
    assert p.title == "riff" and p.source == str(good)


def test_phrase_is_frozen():
    p = phrase()
    with pytest.raises(AttributeError):
        p.seconds = 3.0  # type: ignore[misc]
    assert math.isfinite(p.notes[0].frequency)


def test_a_chord_with_a_notes_key_is_told_to_list_its_frets(tmp_path):
    from render.dry.phrase import parse_phrase

    with pytest.raises(InputError, match=r"string is a \[\[note\]\]'s key; a \[\[chord\]\] gives its frets as a list"):
        parse_phrase({"seconds": 1.0, "chord": [{"time": 0, "string": 3}]}, source="<chord>")
