"""Quantities: IEC 60062 RKM codes and SI prefixes, both directions."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from render import units as U
from render.units import (
    AREA,
    CAPACITANCE,
    FLUX_DENSITY,
    FREQUENCY,
    INDUCTANCE,
    LENGTH,
    RATIO,
    RESISTANCE,
    TIME,
    VOLTAGE,
    QuantityError,
    format_rkm,
    format_si,
    parse_quantity,
)

# IEC 60062:2016 (+A1:2019), RKM code: the multiplier letter stands for the decimal point.
RKM_RESISTORS = [
    ("R47", 0.47),
    ("4R7", 4.7),
    ("470R", 470.0),
    ("4K7", 4.7e3),
    ("47K3", 47.3e3),
    ("1M0", 1.0e6),
]
RKM_CAPACITORS = [
    ("10p", 10e-12),
    ("2n2", 2.2e-9),
    ("4n7", 4.7e-9),
    ("1µ0", 1.0e-6),
]


@pytest.mark.parametrize("code, value", RKM_RESISTORS)
def test_rkm_resistor_codes_read(code, value):
    assert parse_quantity(code, RESISTANCE) == pytest.approx(value, rel=1e-15)  # IEC 60062
    # "4k7": lowercase k is the SI kilo symbol (SI Brochure, 9th ed., 2019); read the same
    assert parse_quantity(code.replace("K", "k"), RESISTANCE) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize("code, value", RKM_CAPACITORS)
def test_rkm_capacitor_codes_read(code, value):
    assert parse_quantity(code, CAPACITANCE) == pytest.approx(value, rel=1e-15)  # IEC 60062


def test_rkm_ascii_micro():
    # "4u7" for 4.7 µF: ASCII u for µ (common practice, no source)
    assert parse_quantity("4u7", CAPACITANCE) == pytest.approx(4.7e-6, rel=1e-15)
    assert parse_quantity("1u0", CAPACITANCE) == parse_quantity("1µ0", CAPACITANCE)


@pytest.mark.parametrize("code, value", RKM_RESISTORS)
def test_rkm_resistor_codes_written(code, value):
    # IEC 60062 writes the kilo letter as "K"; the writer uses the SI "k", so compare
    # case-insensitively (M stays M: mega, never milli)
    assert format_rkm(value).upper() == code.upper()
    assert format_rkm(value)[-1] != "m" and "m" not in format_rkm(value)


@pytest.mark.parametrize("code, value", RKM_CAPACITORS + [("4u7", 4.7e-6)])
def test_rkm_capacitor_codes_written(code, value):
    # IEC 60062; the writer spells µ as ASCII "u" (common practice, no source)
    assert format_rkm(value, "") == code.replace("µ", "u")


def test_rkm_r_is_ohms_only():
    # IEC 60062: R marks the decimal point of a resistance in ohms, not of a capacitance
    with pytest.raises(QuantityError, match="ohms"):
        parse_quantity("4R7", CAPACITANCE)


def test_e_for_r_before_the_digits_reads_as_ohms():
    # IEC 60062 letter code with E in R's place (some makers write it; common practice, no source): E47 = R47
    assert parse_quantity("E47", RESISTANCE) == pytest.approx(0.47, rel=1e-15)


@pytest.mark.parametrize("text, letter_code, exponent", [("4E7", "4R7", "4e7"), ("2E2", "2R2", "2e2")])
def test_e_between_digits_of_a_resistance_is_refused_with_both_readings(text, letter_code, exponent):
    # "4E7" is 4.7 ohm as an IEC 60062 letter code with E for R, 4e7 ohm as an exponent: neither is guessed
    with pytest.raises(QuantityError) as caught:
        parse_quantity(text, RESISTANCE)
    message = str(caught.value)
    assert f'"{letter_code}"' in message and f'"{exponent}"' in message
    # each offered spelling reads back as the reading it names (IEC 60062; Python's float for the exponent)
    assert parse_quantity(letter_code, RESISTANCE) == pytest.approx(float(letter_code.replace("R", ".")), rel=1e-15)
    assert parse_quantity(exponent, RESISTANCE) == float(exponent)


@pytest.mark.parametrize("text", ["4e7", "4E+7", "4.7E3", "1E0"])
def test_exponents_that_read_one_way_stay_legal(text):
    # lowercase, signed or with a decimal point, "E" can only be an exponent; "1E0" is 1 ohm either way
    assert parse_quantity(text, RESISTANCE) == float(text)


def test_e_between_digits_of_a_capacitance_is_an_exponent():
    # E stands for ohms only (IEC 60062), so for a capacitance it can only be an exponent
    assert parse_quantity("4E-9", CAPACITANCE) == 4e-9
    assert parse_quantity("4E7", CAPACITANCE) == 4e7


@pytest.mark.parametrize("text, kind, fixed, value", [("3N9", CAPACITANCE, "3n9", 3.9e-9), ("4P7", CAPACITANCE, "4p7", 4.7e-12), ("4U7", INDUCTANCE, "4u7", 4.7e-6)])
def test_letter_code_in_upper_case_is_refused_with_its_lower_case(text, kind, fixed, value):
    # IEC 60062's letter codes use the SI prefixes p, n, u, which are case-sensitive (SI Brochure, 9th ed., 3): "N" is no prefix
    with pytest.raises(QuantityError, match=f'write "{fixed}"'):
        parse_quantity(text, kind)
    assert parse_quantity(fixed, kind) == pytest.approx(value, rel=1e-15)


def test_trailing_e_on_a_resistance_is_refused_with_r():
    # some makers print "470E" for 470 ohm; IEC 60062 writes R for the ohm's decimal point ("470R")
    with pytest.raises(QuantityError, match='write "470R"'):
        parse_quantity("470E", RESISTANCE)
    assert parse_quantity("470R", RESISTANCE) == 470.0


# E12 series, IEC 60063:2015
E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)


@pytest.mark.parametrize("decade", range(-1, 8))
def test_e12_resistors_round_trip(decade):
    # E12 (IEC 60063) from 0.1 Ω to 82 MΩ, written as RKM codes (IEC 60062) and read back
    for m in E12:
        x = float(f"{m}e{decade}")
        code = format_rkm(x)
        assert len(code) <= 4, code  # IEC 60062: two significant digits and one letter
        assert parse_quantity(code, RESISTANCE) == pytest.approx(x, rel=1e-12), code


@pytest.mark.parametrize("decade", range(-12, -5))
def test_e12_capacitors_round_trip(decade):
    # E12 from 1 pF to 8.2 µF, RKM codes (IEC 60062) and back
    for m in E12:
        x = float(f"{m}e{decade}")
        code = format_rkm(x, "")
        assert parse_quantity(code, CAPACITANCE) == pytest.approx(x, rel=1e-12), code


# SI prefixes and unit symbols (SI Brochure, 9th ed., BIPM 2019: prefixes f p n µ m k M G)
SI_CASES = [
    ("22k", RESISTANCE, 22e3),
    ("22kΩ", RESISTANCE, 22e3),
    ("22 kΩ", RESISTANCE, 22e3),
    ("22kohm", RESISTANCE, 22e3),
    ("22K", RESISTANCE, 22e3),  # "K" read as kilo (common practice, no source)
    ("100nF", CAPACITANCE, 100e-9),
    ("100n", CAPACITANCE, 100e-9),
    ("470pF", CAPACITANCE, 470e-12),
    ("180mH", INDUCTANCE, 0.18),
    ("2.5H", INDUCTANCE, 2.5),
    ("30mm", LENGTH, 0.03),
    ("6m", LENGTH, 6.0),  # the unit symbol is matched first: six metres
    ("1uT", FLUX_DENSITY, 1e-6),
    ("1µT", FLUX_DENSITY, 1e-6),
    ("60Hz", FREQUENCY, 60.0),
    ("3MHz", FREQUENCY, 3e6),
    ("9V", VOLTAGE, 9.0),
    ("20ms", TIME, 0.02),
    ("5cm2", AREA, 5e-4),  # the prefix applies to the metre before squaring: (1e-2 m)²
    ("4.7e3", RESISTANCE, 4.7e3),
    (4700, RESISTANCE, 4.7e3),  # TOML numbers are SI base units
    (2.2e-9, CAPACITANCE, 2.2e-9),
]


@pytest.mark.parametrize("text, kind, value", SI_CASES)
def test_si_prefixes_and_units(text, kind, value):
    assert parse_quantity(text, kind) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize(
    "text, kind, value",
    [
        # SI Brochure: M is mega and m is milli, always
        ("1M", RESISTANCE, 1e6),
        ("1m", RESISTANCE, 1e-3),
        ("1MΩ", RESISTANCE, 1e6),
        ("1mΩ", RESISTANCE, 1e-3),
        ("1MHz", FREQUENCY, 1e6),
        ("1mHz", FREQUENCY, 1e-3),
        ("1mm", LENGTH, 1e-3),
        ("1Mm", LENGTH, 1e6),
        ("1mF", CAPACITANCE, 1e-3),
    ],
)
def test_mega_is_never_milli(text, kind, value):
    assert parse_quantity(text, kind) == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize(
    "text, kind, unit",
    [
        ("100nF", RESISTANCE, "F"),
        ("22kΩ", CAPACITANCE, "Ω"),
        ("60Hz", LENGTH, "Hz"),
        ("2.5H", CAPACITANCE, "H"),
        ("9V", FREQUENCY, "V"),
        ("1uT", CAPACITANCE, "T"),
        ("3s", RESISTANCE, "s"),
        ("1kHz", VOLTAGE, "Hz"),
    ],
)
def test_wrong_units_refused(text, kind, unit):
    # a unit symbol that does not belong to the field's kind (SI Brochure symbols)
    with pytest.raises(QuantityError, match=f"unit '{unit}' does not fit a {kind.name}"):
        parse_quantity(text, kind)


@pytest.mark.parametrize(
    "value",
    ["", "   ", "abc", "4k7k", "1..2", "k7", "1.5M0", "1e3k", "22 kΩΩ", "nan", "inf", "1e999", True, None, [1], {"a": 1}, math.nan, math.inf, -math.inf, 10**400],
)
def test_unreadable_values_refused(value):
    # none of these is a number, an SI-prefixed number (SI Brochure) or an RKM code (IEC 60062)
    with pytest.raises(QuantityError):
        parse_quantity(value, RESISTANCE)


def test_format_si():
    # SI Brochure, 9th ed.: prefix symbols written before the unit symbol, a space before both
    assert format_si(4700, "Ω") == "4.7 kΩ"
    assert format_si(22e-9, "F") == "22 nF"
    assert format_si(0.18, "H") == "180 mH"
    assert format_si(3e6, "Hz") == "3 MHz"
    assert format_si(9.0, "V") == "9 V"
    # an area's prefix is the metre's, squared (SI Brochure, 9th ed., 5.2: "cm²" is (cm)², 1e-4 m²)
    assert format_si(0.36, "m²") == "0.36 m²"
    assert format_si(1e-6, "m²") == "1 mm²"
    assert format_si(3.2e-5, "m²") == "32 mm²"
    assert format_si(1000.0, "m²") == "1000 m²"


@pytest.mark.parametrize("text", ["1 10k", "1 0u", "10 000", "4.7\u20090k"])
def test_a_space_inside_a_number_is_refused(text):
    # a space may stand between a number and its unit (SI Brochure, 9th ed., 5.4.3), never inside the number
    with pytest.raises(QuantityError, match="space inside its number"):
        parse_quantity(text, RESISTANCE)
    assert parse_quantity("4.7 k", RESISTANCE) == 4700.0 and parse_quantity("22 kΩ", RESISTANCE) == 22e3


KINDS = [v for v in vars(U).values() if isinstance(v, U.Kind)]
NUMERIC_TEXT = st.from_regex(r"[+-]?\d{0,4}\.?\d{0,4}([eE][+-]?\d{1,4})?[a-zA-Zµμ]?\d{0,3}(Ω|ohms?|[FHVTsRm]|Hz|m2|m²|F/m| )?", fullmatch=True)
UNIT_SOUP = st.text(alphabet=st.sampled_from(list("0123456789.+-eERkKMmGunpfcµμΩ FHVzsTA/√²^ohmx\u2009")), max_size=12)


@settings(max_examples=1500, deadline=None)
@given(value=st.one_of(st.text(), NUMERIC_TEXT, UNIT_SOUP), kind=st.sampled_from(KINDS))
def test_parse_never_raises_anything_but_quantity_error(value, kind):
    # property: any text is either a finite float or refused with QuantityError
    try:
        x = parse_quantity(value, kind)
    except QuantityError:
        return
    assert isinstance(x, float) and math.isfinite(x)


@settings(max_examples=300, deadline=None)
@given(
    value=st.one_of(st.integers(min_value=-(10**500), max_value=10**500), st.floats(), st.booleans(), st.none(), st.lists(st.integers(), max_size=2)),
    kind=st.sampled_from(KINDS),
)
def test_parse_non_text_values(value, kind):
    # property: TOML can give integers of any size (tomllib), floats incl. inf/nan, booleans, arrays
    try:
        x = parse_quantity(value, kind)
    except QuantityError:
        return
    assert isinstance(x, float) and math.isfinite(x)


@settings(max_examples=500, deadline=None)
@given(x=st.floats(min_value=0.1, max_value=9.99e9))
def test_rkm_round_trip_keeps_three_digits(x):
    # property: a 3-digit RKM code (IEC 60062) is within half a unit of its third digit
    y = parse_quantity(format_rkm(x), RESISTANCE)
    assert abs(y - x) <= 0.5 * 10 ** (math.floor(math.log10(x)) - 2) * (1 + 1e-12)


@pytest.mark.parametrize(
    "text, value",
    [("13MV/s", 13e6), ("0.05V/us", 5e4), ("0.05V/µs", 5e4), ("0.05V/μs", 5e4), ("13 V/us", 13e6), ("20V/us", 2e7), ("1.3e1V/us", 13e6)],
)
def test_slew_rate_in_volts_per_microsecond(text, value):
    # datasheets state slew rates in V/µs; 1 µs = 1e-6 s (SI Brochure, 9th ed., Table 7), so 1 V/µs = 1e6 V/s
    assert parse_quantity(text, U.SLEW_RATE) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize("text", ["V/us", "13us", "13Hz/us", "13V/ms"])
def test_slew_rate_refusals_name_both_units(text):
    with pytest.raises(QuantityError):
        parse_quantity(text, U.SLEW_RATE)
    if text == "13us":
        with pytest.raises(QuantityError, match=r"expected V/s or V/µs"):
            parse_quantity(text, U.SLEW_RATE)


@pytest.mark.parametrize(
    "value, letter, code",
    [(999.9, "R", "999R9"), (999.9999996, "R", "1k0"), (108679.4365, "R", "108k679"), (2.533871e-9, "", "2n53387")],
)
def test_rkm_codes_to_six_figures_read_back(value, letter, code):
    # IEC 60062: the letter stands for the decimal point; at 6 significant figures 999.9 Ω stays in ohms
    # ("999R9", not "k9999", which no RKM reader takes) and takes the next letter only from 999.9995 up
    kind = RESISTANCE if letter else CAPACITANCE
    written = format_rkm(value, letter, digits=6)
    assert written == code
    assert parse_quantity(written, kind) == pytest.approx(value, rel=5e-6)  # half a unit in the sixth figure


@pytest.mark.parametrize(
    ("v", "digits", "text"),
    [
        (1.58e-3, 3, "1.58 mV"),  # was "1.58e+03 µV"
        (0.05, 4, "50 mV"),  # was "5e+04 µV"
        (999.4e-6, 3, "999 µV"),
        (999.6e-6, 3, "1 mV"),  # rounds up to the next prefix, not to "1e+03 µV"
        (5.08e-7, 3, "0.508 µV"),  # µV kept down to 1 nV
        (4.2e-12, 2, "4.2 pV"),
        (7.45, 3, "7.45 V"),
    ],
)
def test_microvolts_takes_the_next_prefix_before_an_exponent(v, digits, text):
    # SI prefixes (the SI brochure, 9th ed., table 7): a figure is read with a prefix, never as 1.58e+03 µV;
    # where µV holds (1 nV up to 10^digits µV) it is kept (project rule, no outside source)
    assert U.microvolts(v, digits=digits).strip() == text


@settings(max_examples=300, deadline=None)
@given(st.floats(1e-13, 1e3), st.integers(3, 5))
def test_microvolts_never_writes_an_exponent(v, digits):
    # project rule, no outside source: any voltage from 0.1 pV to 1 kV reads without "e+"/"e-" at 3 to 5 figures (the figures used)
    assert "e" not in U.microvolts(v, digits=digits).lower().replace("µv", "").replace(" v", "")


@pytest.mark.parametrize(
    ("text", "fix"),
    [
        # a voltage gain in dB is 20·log10 of the ratio (IEC 60027-3 level of a root-power quantity): 100 dB = 1e5
        ("100dB", "100 dB is 10^(100/20) = 1e5, so write 1e5"),
        ("106 dB", "106 dB is 10^(106/20) = 1.995e5, so write 1.995e5"),
        # V/mV is 1000 V/V and V/µV 1e6 V/V (SI prefixes)
        ("200V/mV", "200 V/mV is 200 × 1000 = 2e5, so write 2e5"),
        ("1.5V/uV", "1.5 V/uV is 1.5 × 1e6 = 1.5e6, so write 1.5e6"),
    ],
)
def test_a_datasheet_gain_is_refused_with_the_plain_ratio(text, fix):
    with pytest.raises(QuantityError) as e:
        parse_quantity(text, RATIO)
    assert str(e.value).endswith(fix), str(e.value)


def test_a_decimal_comma_is_refused_with_the_point():
    # a decimal comma (ISO 80000-1 allows either sign; a TOML string here is read with the point)
    with pytest.raises(QuantityError, match=r'a comma is no decimal point here; write "4\.7u"$'):
        parse_quantity("4,7u", CAPACITANCE)
    with pytest.raises(QuantityError, match=r'write "2\.2k"$'):
        parse_quantity("2,2k", RESISTANCE)


@pytest.mark.parametrize("text, fix", [("1Meg", "1M"), ("1MEG", "1M"), ("4.7meg", "4.7M"), ("2.2megohm", "2.2Mohm")])
def test_spices_mega_is_refused_with_the_si_prefix(text, fix):
    # SPICE writes mega as MEG, in any case, and reads a bare M as milli (ngspice user manual, "scale
    # factors", from memory); SI's mega is capital M (SI Brochure, 9th ed., 2019, Table 7)
    with pytest.raises(QuantityError, match=f'"meg" is how SPICE writes mega; here write "{fix}"'):
        parse_quantity(text, RESISTANCE)
    assert parse_quantity(fix, RESISTANCE) == pytest.approx(float(text[: text.lower().index("meg")]) * 1e6)
