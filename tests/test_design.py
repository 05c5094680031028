"""The design loader: defaults, validation and its one-line messages."""

from __future__ import annotations

import copy
import hashlib

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from render.circuit.rig import volume_fraction
from render.design import (
    DESIGN_TABLES,
    load_design,
    load_rig,
    parse_design,
    parse_rig,
)
from render.errors import InputError

SRC = "cand.toml"


def base() -> dict:
    """A minimal valid design: only the required keys."""
    coil = {"inductance": "1.2H", "resistance": "1k8", "capacitance": "60p", "sensitivity": 0.08, "turns_area": 0.75, "position": "38mm"}
    return {
        "coil_a": dict(coil),
        "coil_b": dict(coil, position="56mm"),
        "input_a": {"series_c": "100n", "series_r": "10k"},
        "input_b": {"series_c": "100n", "series_r": "10k", "bias_top": "100k", "bias_bottom": "100k"},
        "feedback": {"r": "51k"},
        "output": {"coupling_c": "10u", "series_r": "220R"},
        "supply": {"battery": "9V"},
    }


def with_value(table, key, value, data=None):
    d = copy.deepcopy(data or base())
    d.setdefault(table, {})[key] = value
    return d


def refused(data) -> str:
    with pytest.raises(InputError) as exc:
        parse_design(data, source=SRC)
    msg = str(exc.value)
    assert "\n" not in msg, "an error is one line"
    assert msg.startswith(SRC), "an error names the file"
    return msg


# ----------------------------------------------------------------------------
# Defaults


def test_values_are_read_in_si_units():
    d = parse_design(base(), source=SRC)
    assert d.coil_a.inductance == 1.2
    assert d.coil_a.resistance == pytest.approx(1.8e3, rel=1e-15)  # IEC 60062 "1k8"
    assert d.coil_a.position == pytest.approx(0.038, rel=1e-15)
    assert d.output.series_r == 220.0
    assert d.supply.battery == 9.0


def test_defaults_applied():
    d = parse_design(base(), source=SRC)
    # optional parts absent
    assert d.input_a.load_r is None and d.input_a.load_c is None
    assert d.input_b.shunt_c is None and d.feedback.c is None and d.output.shunt_r is None
    assert d.coil_a.eddy_resistance is None and d.coil_a.eddy_coupling is None
    assert d.supply.gbw is None  # an ideal op-amp
    # a humbucker's coils: signal in anti-phase, hum in phase (common practice, no source)
    assert (d.coil_a.signal_polarity, d.coil_b.signal_polarity) == (1, -1)
    assert (d.coil_a.hum_polarity, d.coil_b.hum_polarity) == (1, 1)
    assert d.coil_a.aperture == 0.0
    # output swing margins 1 V from each rail, 0.5 V knee (common practice, no source)
    assert (d.supply.margin_low, d.supply.margin_high, d.supply.knee) == (1.0, 1.0, 0.5)
    # the rig: 25 kΩ pots, audio volume, linear tone, 22 nF, 6 m of 100 pF/m cable,
    # 1 MΩ ∥ 50 pF amp input, 500 kΩ passive pots (common practice, no source)
    r = d.rig
    assert (r.volume_pot, r.tone_pot, r.volume, r.tone) == (25e3, 25e3, 1.0, 1.0)
    assert (r.volume_taper, r.tone_taper) == ("audio", "linear")
    assert r.tone_cap == pytest.approx(22e-9) and r.passive_tone_cap == pytest.approx(22e-9)
    assert r.cable_length == 6.0 and r.cable_capacitance == pytest.approx(100e-12)
    assert r.amp_r == 1e6 and r.amp_c == pytest.approx(50e-12) and r.passive_pot == 500e3
    # mains 50 Hz (IEC 60196:2009 lists 50 and 60 Hz), field 1 µT (our demo room)
    assert d.hum.mains == 50.0 and d.hum.field == pytest.approx(1e-6)
    assert d.hum.harmonics[0] == 1.0


def test_given_values_override_defaults():
    d = base()
    d["supply"].update(margin_low="1.5V", gbw="3MHz")
    d["coil_b"]["signal_polarity"] = 1
    d["rig"] = {"volume": 0.5, "volume_taper": "linear", "cable_length": "3m"}
    d = parse_design(d, source=SRC)
    assert d.supply.margin_low == 1.5 and d.supply.gbw == 3e6
    assert d.coil_b.signal_polarity == 1
    assert (d.rig.volume, d.rig.volume_taper, d.rig.cable_length, d.rig.tone_pot) == (0.5, "linear", 3.0, 25e3)


def test_audio_taper():
    # audio taper (81^r − 1)/80: 10 % of the track at half rotation (common practice, no source)
    assert volume_fraction(0.5, "audio") == pytest.approx(0.1, rel=1e-15)
    assert (volume_fraction(0.0, "audio"), volume_fraction(1.0, "audio")) == (0.0, 1.0)
    assert volume_fraction(0.3, "linear") == 0.3


def test_name_defaults_to_the_file_stem(tmp_path):
    text = (
        '[coil_a]\ninductance = "1.2H"\nresistance = "1k8"\ncapacitance = "60p"\nsensitivity = 0.08\nturns_area = 0.75\nposition = "38mm"\n'
        '[coil_b]\ninductance = "1.2H"\nresistance = "1k8"\ncapacitance = "60p"\nsensitivity = 0.08\nturns_area = 0.75\nposition = "56mm"\n'
        '[input_a]\nseries_c = "100n"\nseries_r = "10k"\n'
        '[input_b]\nseries_c = "100n"\nseries_r = "10k"\nbias_top = "100k"\nbias_bottom = "100k"\n'
        '[feedback]\nr = "51k"\n[output]\ncoupling_c = "10u"\nseries_r = "220R"\n[supply]\nbattery = 9\n'
    )
    p = tmp_path / "quiet-one.toml"
    p.write_text(text, encoding="utf-8")
    d = load_design(p)
    assert d.name == "quiet-one"
    assert d.sha256 == hashlib.sha256(text.encode()).hexdigest()
    p.write_text('name = "loud-one"\n' + text, encoding="utf-8")
    assert load_design(p).name == "loud-one"


# ----------------------------------------------------------------------------
# Refusals


def test_unknown_key_suggests_the_nearest():
    d = base()
    d["coil_a"]["inductanse"] = d["coil_a"].pop("inductance")
    msg = refused(d)
    assert "[coil_a]" in msg and "unknown key 'inductanse'" in msg and "did you mean 'inductance'" in msg


def test_unknown_table_suggests_the_nearest():
    d = base()
    d["feedbak"] = d.pop("feedback")
    msg = refused(d)
    assert "'feedbak'" in msg and "did you mean 'feedback'" in msg


def test_unknown_rig_key_suggests_the_nearest():
    msg = refused(with_value("supply", "batery", 9, base()))
    assert "did you mean 'battery'" in msg
    d = base()
    d["rig"] = {"cable_lenght": "6m"}
    assert "did you mean 'cable_length'" in refused(d)


@pytest.mark.parametrize("table, key", [("coil_a", "resistance"), ("input_b", "bias_top"), ("feedback", "r"), ("supply", "battery")])
def test_missing_required_key(table, key):
    d = base()
    del d[table][key]
    msg = refused(d)
    assert f"[{table}]" in msg and f"missing required key '{key}'" in msg


def test_missing_table():
    d = base()
    del d["output"]
    assert "missing table [output]" in refused(d)


def _as_written(raw):
    """The value as a message quotes it: Python's repr, but true/false as TOML v1.0.0 writes booleans."""
    return repr(raw).replace("True", "true").replace("False", "false")


@pytest.mark.parametrize(
    "table, key, raw, expect",
    [
        ("input_a", "series_r", -10, "must not be negative"),
        ("input_a", "series_r", "-10k", "must not be negative"),
        ("coil_a", "inductance", 0, "expected a plausible value"),
        ("input_a", "series_c", "0", "expected a plausible value"),
        ("output", "series_r", "0R5", "at least 1 Ω"),  # below 1 Ω: implausible for a resistor
        ("output", "series_r", "2G", "at most 1 GΩ"),  # above 1 GΩ
        ("input_b", "series_c", "0.2F", "at most 100 mF"),  # a capacitor above 0.1 F
        ("coil_a", "eddy_coupling", 0.95, "above 0 and below 0.95"),  # k² must stay below 0.95
        ("rig", "volume", 1.5, "at most 1"),  # a knob rotation 0..1
        ("supply", "battery", "1V", "at least 1.5 V"),
        ("coil_a", "signal_polarity", 2, "+1 or -1"),
        ("coil_a", "hum_polarity", True, "+1 or -1"),
        ("supply", "open_loop_gain", True, "expected a number, got a true/false value"),
    ],
)
def test_out_of_range_values(table, key, raw, expect):
    msg = refused(with_value(table, key, raw))
    # the message names the table and key and the value as written
    assert f"[{table}] {key}={_as_written(raw)}" in msg
    assert expect in msg


@pytest.mark.parametrize("raw", ["abc", "4k7k", "22nF", True, [1, 2], {"a": 1}, [False, "1k"], {"a": True}])
def test_unreadable_values(raw):
    msg = refused(with_value("feedback", "r", raw))
    assert f"[feedback] r={_as_written(raw)}" in msg
    assert "True" not in msg and "False" not in msg


def test_wrong_unit_named():
    msg = refused(with_value("input_a", "series_c", "10kΩ"))
    assert "unit 'Ω' does not fit a capacitance" in msg


def test_milli_for_mega_suggests_the_fix():
    # "1m" is one milliohm (SI Brochure: m is milli); below 1 Ω it is refused, with "1M" suggested
    msg = refused(with_value("feedback", "r", "1m"))
    assert "expected a plausible value" in msg and '"1M"' in msg
    msg = refused(with_value("input_b", "bias_top", "2.2mΩ"))
    assert '"2.2M"' in msg


def test_plain_number_for_a_capacitor_suggests_a_prefix():
    # TOML numbers are SI: series_c = 100 would be 100 F
    msg = refused(with_value("input_a", "series_c", 100))
    assert "100 F" in msg and '"100n"' in msg


def test_taper_must_be_named():
    d = base()
    d["rig"] = {"volume_taper": "log"}
    assert '"audio" or "linear"' in refused(d)


def test_eddy_coupling_needs_its_corner():
    msg = refused(with_value("coil_b", "eddy_coupling", 0.4))
    assert "[coil_b]" in msg and "eddy_coupling and eddy_corner go together" in msg


def test_margins_must_leave_a_window():
    # margin_low + margin_high + 2·knee must be below the battery: 1 + 1 + 2·0.5 = 3 V
    d = with_value("supply", "battery", "3V")
    msg = refused(d)
    assert "[supply]" in msg and "margin_low + margin_high + 2·knee = 3 V must be below battery=3 V" in msg
    d["supply"]["knee"] = "0.4V"  # 2.8 V < 3 V: accepted
    assert parse_design(d, source=SRC).supply.knee == 0.4


def test_bias_outside_the_window_refused():
    # 9 V over 1 MΩ / 100 kΩ: 0.818 V (voltage divider), below the window 1.5 .. 7.5 V
    d = base()
    d["input_b"].update(bias_top="1M", bias_bottom="100k")
    msg = refused(d)
    assert "[input_b]" in msg and "0.818 V" in msg and "1.5..7.5 V" in msg
    d["input_b"].update(bias_top="100k", bias_bottom="1M")  # 8.18 V, above it
    assert "8.18 V" in refused(d)


def test_file_errors(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        load_design(tmp_path / "absent.toml")
    with pytest.raises(InputError, match="is a folder"):
        load_design(tmp_path)
    bad = tmp_path / "bad.toml"
    bad.write_text("[coil_a\ninductance = 1", encoding="utf-8")
    with pytest.raises(InputError, match="not valid TOML"):
        load_design(bad)
    bad.write_bytes(b"\xff\xfe[coil_a]")
    with pytest.raises(InputError, match="not a UTF-8 text file"):
        load_design(bad)


def test_rig_file(tmp_path):
    p = tmp_path / "club.toml"
    p.write_text('[rig]\ncable_length = "10m"\ntone = 0.5\n[hum]\nmains = "60Hz"\n', encoding="utf-8")
    rf = load_rig(p)
    assert rf.rig.cable_length == 10.0 and rf.rig.tone == 0.5 and rf.rig.volume_pot == 25e3
    assert rf.hum.mains == 60.0
    with pytest.raises(InputError, match="did you mean 'rig'"):
        parse_rig({"rigg": {}}, source="r.toml")
    with pytest.raises(InputError, match="hum"):
        parse_rig({"hum": {"mains": "100Hz"}}, source="r.toml")  # mains is 50 or 60 Hz (IEC 60196:2009)


# ----------------------------------------------------------------------------
# Property: whatever a key holds, the loader returns a Design or raises InputError


ANY_VALUE = st.one_of(
    st.text(max_size=12),
    st.integers(min_value=-(10**30), max_value=10**30),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=3), st.integers(), max_size=2),
)
KEYS = [(t, k) for t, spec in DESIGN_TABLES.items() for k in spec]


@settings(max_examples=400, deadline=None)
@given(where=st.sampled_from(KEYS), value=ANY_VALUE)
def test_loader_raises_only_input_error(where, value):
    table, key = where
    d = base()
    d.setdefault(table, {})[key] = value
    try:
        parse_design(d, source=SRC)
    except InputError as exc:
        assert "\n" not in str(exc)
