"""Tests of rcdoc.input.quantities: reading and writing engineering quantities.

Sources, named beside each check:
- SI prefixes and their powers of ten: BIPM, "The International System of
  Units" (SI Brochure), 9th edition, table 7; number/unit spacing: section 5.4.3.
- RKM value code and tolerance letters: IEC 60062.
- Engineering notation (exponent a multiple of 3): the General Decimal
  Arithmetic specification as implemented by Python's `decimal` module
  (`Decimal.to_eng_string`), used as an independent formatter.
- The written forms themselves: the project's contract,
  docs/project-format.md, section "Quantities".
"""

from __future__ import annotations

import datetime
import math
from decimal import Decimal

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rcdoc.errors import ProjectError
from rcdoc.input.quantities import (
    UNITS,
    format_quantity,
    format_rkm,
    parse_percent,
    parse_positive,
    parse_quantity,
    parse_tolerance,
)

PREFIXED_UNITS = ["ohm", "F", "H", "Hz", "V", "A", "W", "s"]
ALL_UNITS = list(UNITS)
FAST = settings(max_examples=200, deadline=None, database=None)


# ----------------------------------------------------------------------------- forms


@pytest.mark.parametrize(
    ("text", "unit", "expected"),
    [
        # number + prefix + unit; every example of the contract's table.
        # Prefix values: SI Brochure 9th ed., table 7 (k = 1e3, n = 1e-9, µ = 1e-6 ...).
        ("4.7 kΩ", "ohm", 4.7e3),
        ("4.7kohm", "ohm", 4.7e3),
        ("4.7 kohm", "ohm", 4.7e3),
        ("10 nF", "F", 10e-9),
        ("2.2 µF", "F", 2.2e-6),
        ("2.2uF", "F", 2.2e-6),
        ("250 kHz", "Hz", 250e3),
        ("48 V", "V", 48.0),
        ("0.25 W", "W", 0.25),
        ("20 us", "s", 20e-6),
        ("1 Mohm", "ohm", 1e6),
        ("1 MΩ", "ohm", 1e6),
        ("1 mohm", "ohm", 1e-3),     # SI: m = milli, M = mega
        ("1 mΩ", "ohm", 1e-3),
        ("10 µH", "H", 10e-6),
        ("12 nH", "H", 12e-9),
        ("8 pF", "F", 8e-12),
        ("100 fF", "F", 100e-15),
        ("62 MHz", "Hz", 62e6),
        ("2 GHz", "Hz", 2e9),
        ("100 mHz", "Hz", 0.1),
        ("2 Hz", "Hz", 2.0),
        ("3.3 V", "V", 3.3),
        ("230 V", "V", 230.0),
        ("150 mA", "A", 0.15),
        ("20 ms", "s", 20e-3),
        ("1.5e3 Hz", "Hz", 1500.0),
        ("1e-9 F", "F", 1e-9),
        (".5 W", "W", 0.5),
        ("+5 V", "V", 5.0),
        ("-12 V", "V", -12.0),
        ("4.7\u2009kΩ", "ohm", 4.7e3),   # thin space, as the SI Brochure sets it
        ("  10 nF  ", "F", 10e-9),
        ("4700", "ohm", 4700.0),        # a number alone is in the base unit
        # bare prefix, unit implied by the key (contract table)
        ("10k", "ohm", 10e3),
        ("100n", "F", 100e-9),
        ("4.7 k", "ohm", 4.7e3),
        ("22p", "F", 22e-12),
        # temperatures in °C (contract table)
        ("-20 °C", "degC", -20.0),
        ("-20 degC", "degC", -20.0),
        ("-20C", "degC", -20.0),
        ("85°C", "degC", 85.0),
        ("25 \u2103", "degC", 25.0),          # DEGREE CELSIUS as one character
        ("\u221220 °C", "degC", -20.0),        # MINUS SIGN
        # coefficients, per kelvin (contract table); 1 K and 1 °C are the same interval
        ("100 ppm/K", "ppm/K", 100.0),
        ("-150 ppm/°C", "ppm/K", -150.0),
        ("-150 ppm/degC", "ppm/K", -150.0),
        ("30 ppm / K", "ppm/K", 30.0),
        # levels in dB (contract table)
        ("-30 dB", "dB", -30.0),
        ("120 dB", "dB", 120.0),
        ("-3.01dB", "dB", -3.01),
        # percentages come back as fractions (contract table)
        ("5%", "%", 0.05),
        ("±5%", "%", 0.05),
        ("+5%", "%", 0.05),
        ("5 %", "%", 0.05),
        ("-40%", "%", -0.4),
        ("99.7%", "%", 0.997),
        ("0.05", "%", 0.05),            # a bare number is already a fraction
        # angles in degrees
        ("-45°", "deg", -45.0),
        ("-45 deg", "deg", -45.0),
        ("90 degrees", "deg", 90.0),
        # dimensionless
        ("0.707", "1", 0.707),
        ("10k", "1", 10e3),
    ],
)
def test_written_forms(text, unit, expected):
    # exact equality: scaling is done in decimal text, so "4.7k" is 4700.0, not 4700.000000000001
    assert parse_quantity(text, unit) == expected


def test_micro_sign_and_greek_mu_and_u_are_the_same():
    # Contract: "u and µ are the same"; Unicode has both U+00B5 MICRO SIGN and U+03BC GREEK MU.
    values = {parse_quantity(t, "F") for t in ("2.2 \u00b5F", "2.2 \u03bcF", "2.2 uF", "2u2", "2\u00b52")}
    assert values == {2.2e-6}


def test_ohm_spellings():
    # Unicode has U+2126 OHM SIGN and U+03A9 GREEK CAPITAL OMEGA for the same symbol.
    spellings = ["47 \u2126", "47 \u03a9", "47 ohm", "47 ohms", "47 Ohm", "47ohm", "47R"]
    assert {parse_quantity(t, "ohm") for t in spellings} == {47.0}


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # IEC 60062 RKM code: the letter stands where the decimal point goes
        # (examples: 4k7, 2u2, R47, 1M5).
        ("4k7", 4.7e3),
        ("4K7", 4.7e3),     # IEC 60062 writes the kilo letter in upper case
        ("R47", 0.47),
        ("1M5", 1.5e6),
        ("4R7", 4.7),
        ("0R1", 0.1),
        # from memory of IEC 60062: an R or a multiplier letter may end the code
        ("10R", 10.0),
        ("100K", 100e3),
        ("1K0", 1e3),
        ("2G2", 2.2e9),
        # followed by the unit
        ("4k7Ω", 4.7e3),
        ("4k7 ohm", 4.7e3),
    ],
)
def test_rkm_resistances(text, expected):
    assert parse_quantity(text, "ohm") == expected


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # IEC 60062 RKM code for capacitances: p, n, µ, m as decimal markers
        ("2u2", 2.2e-6),
        ("3n3", 3.3e-9),
        ("4p7", 4.7e-12),
        ("p68", 0.68e-12),   # from memory of IEC 60062
        ("6n8", 6.8e-9),
        ("2u2F", 2.2e-6),
        ("4µ7", 4.7e-6),
    ],
)
def test_rkm_capacitances(text, expected):
    assert parse_quantity(text, "F") == expected


@pytest.mark.parametrize("unit", ALL_UNITS)
def test_bare_toml_numbers_are_base_units(unit):
    # Contract: "a bare TOML number in the base SI unit".
    assert parse_quantity(4700, unit) == 4700.0
    assert parse_quantity(-2.5e-3, unit) == -2.5e-3
    assert isinstance(parse_quantity(3, unit), float)


# ----------------------------------------------------------------------------- mistakes


@pytest.mark.parametrize(
    ("text", "unit", "expected_unit_text"),
    [
        ("10 kHz", "F", "F"),          # the contract's own example
        ("10 nF", "ohm", "Ω"),
        ("4.7 kΩ", "Hz", "Hz"),
        ("48 V", "W", "W"),
        ("20 us", "Hz", "Hz"),
        ("-20 °C", "V", "V"),
        ("5%", "ohm", "Ω"),
        ("-30 dB", "V", "V"),
        ("100 ppm/K", "degC", "°C"),
        ("20 K", "degC", "°C"),
        ("10 uH", "F", "F"),
        ("2u2H", "F", "F"),
        ("4k7kΩ", "ohm", "Ω"),         # a prefix after an RKM code
        ("10 xyz", "V", "V"),
    ],
)
def test_wrong_unit_names_text_unit_and_path(text, unit, expected_unit_text):
    path = "stage[2].parts.c.value"
    with pytest.raises(ProjectError) as caught:
        parse_quantity(text, unit, path)
    error = caught.value
    assert error.path == path
    assert path in str(error)
    assert text in error.message
    assert expected_unit_text in error.message


def test_wrong_unit_says_what_was_given():
    with pytest.raises(ProjectError, match="frequency"):
        parse_quantity("10 kHz", "F", "p")


@pytest.mark.parametrize(
    ("value", "unit"),
    [
        (math.nan, "V"),
        (math.inf, "F"),
        (-math.inf, "dB"),
        ("", "ohm"),
        ("   ", "ohm"),
        (True, "V"),                  # TOML true is a bool, not 1
        (False, "1"),
        ([1, 2], "V"),
        ({"r": "1k"}, "ohm"),
        (None, "V"),
        (datetime.date(2026, 1, 1), "s"),
        ("nan", "V"),
        ("inf Hz", "Hz"),
        ("1e400 V", "V"),             # overflows a float
        ("1e300 GHz", "Hz"),
        (10**400, "V"),               # a TOML integer cannot be this big, but be safe
        ("4.7R", "ohm"),              # R means ohm only as the RKM decimal marker
        ("R47", "F"),                 # ... and only for resistances
        ("±5 V", "V"),                # ± belongs to tolerances
        ("10k", "degC"),              # no prefixes on temperatures
        ("5 m%", "%"),
        ("1k5", "dB"),
        ("4,7 kΩ", "ohm"),
        ("1..2 V", "V"),
        ("4.7 k Ω", "ohm"),           # the prefix belongs to the unit symbol
        ("10 meg", "ohm"),
        ("k", "ohm"),
        ("R", "ohm"),
        ("--5 V", "V"),
        ("5 V V", "V"),
    ],
)
def test_rejected_values_raise_project_error(value, unit):
    with pytest.raises(ProjectError) as caught:
        parse_quantity(value, unit, "board.hazardous_voltage")
    assert caught.value.path == "board.hazardous_voltage"


@pytest.mark.parametrize("value,unit", [
    (5e-324, "ohm"),        # a subnormal float: its reciprocal (a conductance) is inf
    (1e300, "V"),           # its square (an energy) overflows
    ("1e-31 F", "F"),
    ("1e31 Hz", "Hz"),
    ("-2e30 V", "V"),
])
def test_sizes_beyond_reach_are_refused(value, unit):
    # Common practice: refuse what the floats cannot carry through products of
    # values before any analysis (IEEE 754 binary64 ends near 1.8e308).
    with pytest.raises(ProjectError, match="out of range") as caught:
        parse_quantity(value, unit, "stage[1].source")
    assert caught.value.path == "stage[1].source"


def test_sizes_at_the_ends_of_reach_are_kept():
    assert parse_quantity("1e-30 F", "F") == 1e-30
    assert parse_quantity(1e30, "ohm") == 1e30
    assert parse_quantity("-1e30 V", "V") == -1e30


def test_negative_zero_reads_as_zero():
    # A tolerance of -0.0 once gave numpy's uniform(high=-0.0, low=0.0): "high - low < 0".
    for value in (-0.0, "-0 V"):
        zero = parse_quantity(value, "V")
        assert zero == 0.0 and math.copysign(1.0, zero) == 1.0
    plus, minus = parse_tolerance(-0.0, "t")
    assert math.copysign(1.0, plus) == 1.0 and math.copysign(1.0, minus) == 1.0


def test_zero_and_negative_are_the_callers_business():
    assert parse_quantity("0 V", "V") == 0.0
    assert parse_quantity("-5 V", "V") == -5.0
    assert parse_positive("4k7", "ohm") == 4700.0
    for bad in ("0 Ω", "-1 kΩ", 0, -3.0):
        with pytest.raises(ProjectError, match="greater than zero") as caught:
            parse_positive(bad, "ohm", "stage[1].parts.r.value")
        assert caught.value.path == "stage[1].parts.r.value"


def test_parse_percent():
    # contract: percentages are fractions inside ("yield = 99.7%")
    assert parse_percent("99.7%") == 0.997
    assert parse_percent("100%") == 1.0
    assert parse_percent("50 %") == 0.5
    assert parse_percent(0.25) == 0.25
    with pytest.raises(ProjectError):
        parse_percent("50 kHz", "stage[1].check[1].yield")


# ----------------------------------------------------------------------------- tolerances


@pytest.mark.parametrize(
    ("letter", "plus", "minus"),
    [
        # IEC 60062 tolerance letters
        ("B", 0.001, 0.001),
        ("C", 0.0025, 0.0025),
        ("D", 0.005, 0.005),
        ("F", 0.01, 0.01),
        ("G", 0.02, 0.02),
        ("J", 0.05, 0.05),
        ("K", 0.10, 0.10),
        ("M", 0.20, 0.20),
        ("Z", 0.80, 0.20),
    ],
)
def test_tolerance_letters_iec_60062(letter, plus, minus):
    assert parse_tolerance(letter) == pytest.approx((plus, minus), rel=1e-12)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # forms from the contract ("5%", "±5%", "+80%/-20%")
        ("5%", (0.05, 0.05)),
        ("±5%", (0.05, 0.05)),
        ("5 %", (0.05, 0.05)),
        ("+/-1%", (0.01, 0.01)),
        ("±0.1 %", (0.001, 0.001)),
        ("+80%/-20%", (0.8, 0.2)),
        ("+80/-20%", (0.8, 0.2)),
        ("-20%/+80%", (0.8, 0.2)),
        ("+80 % / -20 %", (0.8, 0.2)),
        ("+50%/-0%", (0.5, 0.0)),
        (0.05, (0.05, 0.05)),         # a bare number is a fraction
        (0, (0.0, 0.0)),
        ("0.01", (0.01, 0.01)),
    ],
)
def test_tolerance_forms(text, expected):
    assert parse_tolerance(text) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "value",
    [
        "-5%",            # negative
        -0.05,
        "+5%",            # one-sided or symmetric? refused as ambiguous
        "100%",           # the minus side would take the value to zero
        "+80%/-100%",
        5,                # 500 %: most likely meant "5%"
        "+1100%/-20%",    # above 1000 %
        "+80%/+20%",
        "80%/-20%",
        "+80%/-20%/-5%",
        "X",
        "j",
        "",
        "5 V",
        True,
        [0.05],
        None,
        math.nan,
    ],
)
def test_tolerance_errors(value):
    with pytest.raises(ProjectError) as caught:
        parse_tolerance(value, "stage[1].parts.r.tolerance")
    assert caught.value.path == "stage[1].parts.r.tolerance"
    assert "tolerance" in caught.value.message


# ----------------------------------------------------------------------------- formatting


@pytest.mark.parametrize(
    ("value", "unit", "expected"),
    [
        # SI Brochure 9th ed.: prefix symbols (table 7), a space between number
        # and unit (5.4.3), no space before the degree sign of plane angle.
        (4700, "ohm", "4.7 kΩ"),
        (1e-8, "F", "10 nF"),
        (1591.549, "Hz", "1.59 kHz"),
        (2.2e-6, "F", "2.2 µF"),
        (0, "ohm", "0 Ω"),
        (-4700, "ohm", "-4.7 kΩ"),
        (48, "V", "48 V"),
        (1e6, "ohm", "1 MΩ"),
        (250e3, "Hz", "250 kHz"),
        (62e6, "Hz", "62 MHz"),
        (8e-12, "F", "8 pF"),
        (0.25, "W", "250 mW"),
        (-3.0103, "dB", "-3.01 dB"),   # first-order low-pass at fc: 20·log10(1/√2) (textbook)
        (-30, "dB", "-30 dB"),
        (25, "degC", "25 °C"),
        (-20, "degC", "-20 °C"),
        (100, "ppm/K", "100 ppm/K"),
        (0.05, "%", "5 %"),
        (0.997, "%", "99.7 %"),
        (-45, "deg", "-45.0°"),        # series RC at ω = 1/RC: 45° (common practice)
        (0.70711, "1", "0.707"),
        (2, "1", "2"),
        (999.6, "V", "1 kV"),          # rounding carries into the next prefix
        (1e-18, "F", "0.001 fF"),      # beyond femto: the last prefix, never an exponent
    ],
)
def test_format_quantity(value, unit, expected):
    assert format_quantity(value, unit) == expected


def test_format_digits():
    assert format_quantity(1234.5678, "ohm", digits=6) == "1.23457 kΩ"
    assert format_quantity(1234.5678, "ohm", digits=2) == "1.2 kΩ"


def test_units_mapping():
    assert UNITS["ohm"] == "Ω"
    assert UNITS["Hz"] == "Hz"
    assert UNITS["degC"] == "°C"
    assert set(PREFIXED_UNITS) <= set(UNITS)


@given(
    mantissa=st.integers(min_value=1, max_value=999_999),
    exp=st.integers(min_value=-15, max_value=6),  # 1 f to 999 G: inside the prefixes
    unit=st.sampled_from(PREFIXED_UNITS),
)
@FAST
def test_engineering_notation_agrees_with_decimal_to_eng_string(mantissa, exp, unit):
    # Independent formatter: decimal.Decimal.to_eng_string (General Decimal
    # Arithmetic specification) writes the exponent as a multiple of 3. The
    # value is shifted down by 1e-30 so it always uses the exponent form.
    value = float(f"{mantissa}e{exp}")
    exact = Decimal(f"{value:.5e}").normalize()
    eng = exact.scaleb(-30).to_eng_string()
    digits, _, power = eng.partition("E")
    power = int(power) + 30
    prefixes = {-15: "f", -12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}
    assert format_quantity(value, unit, digits=6) == f"{digits} {prefixes[power]}{UNITS[unit]}"


@given(
    magnitude=st.floats(min_value=1e-20, max_value=1e20, allow_nan=False, allow_infinity=False),
    negative=st.booleans(),
    unit=st.sampled_from(ALL_UNITS),
)
@FAST
def test_format_then_parse_round_trip(magnitude, negative, unit):
    value = -magnitude if negative else magnitude
    text = format_quantity(value, unit, digits=6)
    # 6 significant figures: the rounding error is at most 5e-6 relative
    assert parse_quantity(text, unit) == pytest.approx(value, rel=1e-5)


@pytest.mark.parametrize("unit", ALL_UNITS)
def test_round_trip_of_zero(unit):
    assert parse_quantity(format_quantity(0.0, unit), unit) == 0.0


@pytest.mark.parametrize(
    ("value", "expected"),
    [
        # IEC 60062 RKM code (examples 4k7, 2u2, R47, 1M5)
        (4700, "4k7"),
        (0.47, "R47"),
        (1.5e6, "1M5"),
        (4.7, "4R7"),
        (2.2e-6, "2u2"),
        (10e3, "10k"),
    ],
)
def test_format_rkm(value, expected):
    assert format_rkm(value) == expected


@given(st.floats(min_value=1e-12, max_value=1e12, allow_nan=False, allow_infinity=False))
@FAST
def test_rkm_round_trip(value):
    assert parse_quantity(format_rkm(value, digits=6), "ohm") == pytest.approx(value, rel=1e-5)
    assert parse_quantity(format_rkm(value, False, digits=6), "1") == pytest.approx(value, rel=1e-5)


# ----------------------------------------------------------------------------- robustness

# Characters that reach deep into the grammar, so random text is not all rejected at once.
_GRAMMAR = "0123456789.eE+-±/ %°CKRkMmunpfGTµμΩΩohmsFHzVAWdBppgre\u2009\u2212"

toml_like = st.recursive(
    st.none()
    | st.booleans()
    | st.integers()
    | st.floats()
    | st.text()
    | st.text(alphabet=_GRAMMAR, max_size=12)
    | st.dates()
    | st.datetimes(),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=3), inner, max_size=3),
    max_leaves=6,
)


@pytest.mark.slow
@given(value=toml_like, unit=st.sampled_from(ALL_UNITS))
@FAST
def test_any_value_gives_a_finite_float_or_a_project_error(value, unit):
    try:
        result = parse_quantity(value, unit, "stage[1].x")
    except ProjectError as error:
        assert error.path == "stage[1].x"
        assert str(error)
    else:
        assert isinstance(result, float) and math.isfinite(result)


@given(text=st.text(alphabet=_GRAMMAR, max_size=16) | st.text(max_size=16), unit=st.sampled_from(ALL_UNITS))
@FAST
def test_any_text_gives_a_finite_float_or_a_project_error(text, unit):
    try:
        result = parse_quantity(text, unit)
    except ProjectError as error:
        assert error.message
    else:
        assert isinstance(result, float) and math.isfinite(result)


@pytest.mark.slow
@given(value=toml_like)
@FAST
def test_any_tolerance_is_valid_or_a_project_error(value):
    try:
        plus, minus = parse_tolerance(value, "t")
    except ProjectError as error:
        assert error.path == "t"
    else:
        assert 0 <= plus <= 10 and 0 <= minus < 1
        assert math.isfinite(plus) and math.isfinite(minus)


# ----------------------------------------------------------- the one formatter's rules


def test_below_resolution_is_zero_or_a_bound_for_stresses():
    from rcdoc.input.quantities import format_quantity as fmt
    # rounding noise of a passband gain (issue 16: "-9.64e-16 dB")
    assert fmt(-9.64e-16, "dB", resolution=1e-4) == "0 dB"
    # a stress is never claimed to be zero: "< 1 pW" (issue 16: "2.31e-20 W")
    assert fmt(2.31e-20, "W", resolution=1e-12, stress=True) == "< 1 pW"
    assert fmt(0.0, "W", resolution=1e-12, stress=True) == "0 W"
    assert fmt(62e-9, "W", resolution=1e-12, stress=True) == "62 nW"


def test_note_minus_and_spacing():
    from rcdoc.input.quantities import NOTE_MINUS, format_quantity as fmt
    assert fmt(-39.5, "dB", minus=NOTE_MINUS) == "\u221239.5 dB"
    assert fmt(-86.8, "deg", minus=NOTE_MINUS) == "\u221286.8°"    # no space before °
    assert fmt(0.0939, "deg") == "0.0939°"
    assert fmt(10.2e3, "Hz") == "10.2 kHz"
    assert fmt(0.05, "%") == "5 %"


def test_joules_take_prefixes():
    # energy per edge, ½·C·V² for 100 nF at 10 V = 5 µJ (textbook)
    assert format_quantity(0.5 * 100e-9 * 10**2, "J") == "5 µJ"
    assert parse_quantity("2 mJ", "J") == pytest.approx(2e-3)


@given(
    magnitude=st.floats(min_value=1e-30, max_value=1e30, allow_nan=False, allow_infinity=False),
    unit=st.sampled_from(ALL_UNITS),
)
@FAST
def test_never_an_exponent_form(magnitude, unit):
    text = format_quantity(magnitude, unit, digits=6)
    assert "e" not in text.replace("deg", "").lower().replace("ppm", "").replace("sb", ""), text


@pytest.mark.parametrize(
    ("worst", "limit", "unit"),
    [(-39.52, -39.5, "dB"), (470.2e3, 470e3, "ohm"), (1.0004e3, 1e3, "Hz"),
     (0.999999, 1.0, "1")],
)
def test_distinct_digits_tells_different_values_apart(worst, limit, unit):
    from rcdoc.input.quantities import distinct_digits
    d = distinct_digits([worst, limit], unit)
    assert format_quantity(worst, unit, d) != format_quantity(limit, unit, d)
    assert 3 <= d <= 6
    # equal values need no extra digits
    assert distinct_digits([limit, limit], unit) == 3


def test_a_yield_below_one_never_prints_as_100_percent():
    # Common practice for a pass/fail yield: a single failing sample must show.
    from rcdoc.input.quantities import format_yield
    assert format_yield(1.0) == "100 %"
    assert format_yield(0.99996) == "99.996 %"
    assert format_yield(0.9999996, 2) == "99.99996 %"
    assert format_yield(0.5, 2) == "50.00 %"
