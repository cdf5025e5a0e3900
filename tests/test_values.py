"""Tests for bandsmith.common.values: reading and writing values (SI prefixes, IEC 60062 RKM codes)."""

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from bandsmith.common.errors import InputError
from bandsmith.common.values import (
    format_rkm,
    format_value,
    parse_fraction,
    parse_nonnegative,
    parse_positive,
    parse_value,
)

HYPOTHESIS = settings(derandomize=True, deadline=None, max_examples=400)


def read(text):
    return parse_value(text, field="X")


# ------------------------------------------------------------ IEC 60062 RKM codes

@pytest.mark.parametrize(
    ("code", "expected"),
    [
        # IEC 60062:2016, Marking codes for resistors and capacitors (RKM code) [published]
        ("R47", 0.47), ("4R7", 4.7), ("470R", 470.0), ("4K7", 4.7e3), ("47K3", 47.3e3),
        ("4M7", 4.7e6), ("4n7", 4.7e-9), ("1µ0", 1e-6),
        # from memory: u as the ASCII spelling of µ
        ("4u7", 4.7e-6),
        # IEC 60062:2016 letter rule (letter = decimal point and multiplier) applied to other codes
        ("4k7", 4.7e3), ("2R2", 2.2), ("1M5", 1.5e6), ("2p2", 2.2e-12), ("1G0", 1e9),
        ("0R1", 0.1), ("1m5", 1.5e-3), ("10R", 10.0), ("R05", 0.05), ("p47", 0.47e-12),
        ("1μ0", 1e-6),  # Greek small mu (U+03BC), beside the micro sign (U+00B5) above
    ],
)
def test_rkm_codes(code, expected):
    assert_allclose(read(code), expected, rtol=1e-15)


def test_rkm_code_is_rounded_once():
    # the decimal is read as one number, so "4n7" is exactly the float nearest 4.7e-9
    assert repr(read("4n7")) == "4.7e-09"
    assert repr(read("4k7")) == "4700.0"


# ------------------------------------------------------------ plain numbers and SI prefixes

@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("1e-9", 1e-9), ("4700", 4700.0), (" 2.2 ", 2.2), (".5", 0.5), ("-2.5", -2.5),
        ("+3", 3.0), ("1E3", 1e3), ("0", 0.0),
        # SI prefixes, BIPM SI Brochure (from memory): f p n µ m k M G T
        ("1f", 1e-15), ("1p", 1e-12), ("10n", 1e-8), ("4.7u", 4.7e-6), ("4.7µ", 4.7e-6),
        ("1m", 1e-3), ("2.2k", 2.2e3), ("1M", 1e6), ("1G", 1e9), ("1T", 1e12),
        # common practice, no source: capital K for kilo, SPICE "meg" for mega
        ("2.2K", 2.2e3), ("1meg", 1e6), ("1MEG", 1e6), ("1Meg", 1e6), ("4.7 k", 4.7e3),
        ("1e3k", 1e6), ("-4k7", -4.7e3),
    ],
)
def test_numbers_and_prefixes(text, expected):
    assert_allclose(read(text), expected, rtol=1e-15)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # a unit symbol after the value is read and ignored (common practice, no source)
        ("10nF", 1e-8), ("1kHz", 1e3), ("4.7 kΩ", 4.7e3), ("4.7 kΩ", 4.7e3), ("1MHz", 1e6),
        ("1 mH", 1e-3), ("1F", 1.0), ("1H", 1.0), ("1fF", 1e-15), ("10 ohms", 10.0),
        ("1kohm", 1e3), ("2R2Ω", 2.2), ("4k7 Ω", 4.7e3), ("1ms", 1e-3), ("5V", 5.0),
        ("20mA", 20e-3), ("1megohm", 1e6), ("1e-9 F", 1e-9), ("2.2µH", 2.2e-6),
    ],
)
def test_unit_symbols_are_ignored(text, expected):
    assert_allclose(read(text), expected, rtol=1e-15)


@pytest.mark.parametrize("number", [4700, 2.2, -1, 0, 1e-9])
def test_numbers_pass_through(number):
    assert_allclose(read(number), float(number), rtol=0)
    assert isinstance(read(number), float)


# ------------------------------------------------------------ bad values

def test_contract_message():
    # README, "Command line" (exit status): the message names the field and the reason
    with pytest.raises(InputError) as err:
        parse_value("4x7", field="R1")
    assert str(err.value) == 'R1: "4x7" is not a value; try 4k7, 4700 or 4.7e3'
    assert err.value.field == "R1"


@pytest.mark.parametrize(
    "bad",
    ["", "   ", "R", "k", "4x7", "4k7.5", "1%", "abc", "nan", "inf", "-Infinity", "1e999",
     "1e" + "9" * 5000, "1..2", "e3", "4.7k5", "1E", "1 e3", "-", ".", "4 k 7", "1mm", "\x00",
     "1h"],
)
def test_bad_text_is_refused(bad):
    with pytest.raises(InputError) as err:
        parse_value(bad, field="C2")
    assert err.value.field == "C2"
    assert err.value.reason


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf, 10**400, True, None, [1.0]])
def test_bad_numbers_are_refused(bad):
    with pytest.raises(InputError) as err:
        parse_value(bad, field="L1")
    assert err.value.field == "L1"


def test_positive_and_nonnegative():
    assert_allclose(parse_positive("4k7", field="R1"), 4700)
    assert_allclose(parse_nonnegative("0", field="RL"), 0.0)
    assert math.copysign(1, parse_nonnegative("-0", field="RL")) == 1  # no negative zero
    for text in ("0", "-1k", 0.0):
        with pytest.raises(InputError) as err:
            parse_positive(text, field="R1")
        assert err.value.reason == "must be greater than zero"
    with pytest.raises(InputError) as err:
        parse_nonnegative("-1", field="RL")
    assert err.value.field == "RL"


# ------------------------------------------------------------ fractions

@pytest.mark.parametrize(
    ("text", "expected"),
    [("1%", 0.01), ("0.5 %", 0.005), ("0.01", 0.01), ("0", 0.0), ("0%", 0.0), ("5%", 0.05),
     ("150%", 1.5), ("1", 1.0), (0.05, 0.05), (0, 0.0), (" 2.5% ", 0.025)],
)
def test_fractions(text, expected):
    assert_allclose(parse_fraction(text, field="tol"), expected, rtol=1e-15)


@pytest.mark.parametrize("bad", ["-1%", "-0.01", "", "%", "1k%", "nan", "x", "5", 5.0, math.inf,
                                 "1e999%"])
def test_bad_fractions(bad):
    with pytest.raises(InputError) as err:
        parse_fraction(bad, field="tol")
    assert err.value.field == "tol"


# ------------------------------------------------------------ formatting

@pytest.mark.parametrize(
    ("x", "unit", "expected"),
    [
        (4700, "Ω", "4.7 kΩ"), (1e-8, "F", "10 nF"), (15915.5, "Hz", "15.92 kHz"), (0, "Ω", "0 Ω"),
        (-2.2e-3, "V", "-2.2 mV"), (4.7e-6, "F", "4.7 µF"), (999.96, "Ω", "1 kΩ"),
        (100e3, "Hz", "100 kHz"), (4.7, "", "4.7"), (4700, "", "4.7 k"), (1e-18, "F", "1e-18 F"),
        (2.5e15, "Hz", "2.5e15 Hz"), (math.nan, "Ω", "—"), (math.inf, "Hz", "∞ Hz"),
        (-math.inf, "", "-∞"),
    ],
)
def test_format_value(x, unit, expected):
    # engineering notation: exponent a multiple of 3, 4 significant digits (common practice)
    assert format_value(x, unit) == expected


def test_format_value_digits():
    assert format_value(15915.5, "Hz", digits=2) == "16 kHz"
    assert format_value(15915.5, "Hz", digits=6) == "15.9155 kHz"
    assert format_value(123456, "Ω", digits=1) == "100 kΩ"


@pytest.mark.parametrize(
    ("x", "kind", "expected"),
    [
        # IEC 60062:2016 examples [published], written back (with lower-case k)
        (0.47, "R", "R47"), (4.7, "R", "4R7"), (470, "R", "470R"), (4.7e3, "R", "4k7"),
        (47.3e3, "R", "47k3"), (4.7e6, "R", "4M7"), (4.7e-9, "C", "4n7"), (1e-6, "C", "1µ0"),
        # our documented rule for the rest (see format_rkm Notes)
        (2.2, "R", "2R2"), (1e6, "R", "1M0"), (1.0, "R", "1R0"), (10.0, "R", "10R"),
        (47e3, "R", "47k"), (0.1, "R", "R10"), (1e9, "R", "1G0"), (1.5e12, "R", "1500G"),
        (4712, "R", "4k71"), (9996, "R", "10k"), (0, "R", "0R"),
        (1e-3, "L", "1m0"), (2.2e-12, "C", "2p2"), (4.7e-14, "C", "p047"), (1.5, "L", "1.5"),
        (10.0, "C", "10"), (0, "C", "0"), (22e-6, "l", "22µ"),
    ],
)
def test_format_rkm(x, kind, expected):
    assert format_rkm(x, kind) == expected


def test_format_rkm_options_and_errors():
    assert format_rkm(4.7e-6, "C", ascii_only=True) == "4u7"
    assert format_rkm(4712, "R", digits=2) == "4k7"
    for bad_x in (-1.0, math.nan, math.inf):
        with pytest.raises(InputError):
            format_rkm(bad_x, "R")
    with pytest.raises(InputError) as err:
        format_rkm(1.0, "X")
    assert err.value.field == "kind"


# ------------------------------------------------------------ properties

# Text built from the pieces the grammar uses, to reach deep into it, plus any text at all.
_PIECES = st.sampled_from(
    list("0123456789.eE+- %kKmMuµμnpfGTRrΩFHVAs") + ["meg", "ohm", "Hz", "\u2212", "\u2126"]
)
_TEXT = st.one_of(st.text(), st.lists(_PIECES, max_size=12).map("".join))


@given(text=_TEXT)
@HYPOTHESIS
def test_any_text_gives_a_float_or_input_error(text):
    for parse in (parse_value, parse_positive, parse_nonnegative, parse_fraction):
        try:
            x = parse(text, field="F")
        except InputError as err:
            assert err.field == "F" and err.reason and "\n" not in str(err)
        else:
            assert isinstance(x, float) and math.isfinite(x)


@given(x=st.floats(allow_nan=True, allow_infinity=True))
@HYPOTHESIS
def test_any_float_gives_itself_or_input_error(x):
    if math.isfinite(x):
        assert_allclose(read(x), x, rtol=0)
    else:
        with pytest.raises(InputError):
            read(x)


@given(
    x=st.floats(min_value=1e-16, max_value=1e14),
    kind=st.sampled_from(["R", "C", "L"]),
    ascii_only=st.booleans(),
)
@HYPOTHESIS
def test_rkm_round_trip(x, kind, ascii_only):
    # rounding to 3 significant digits moves a value by at most half a unit of the third digit:
    # a relative 0.5e-2 at worst (leading digit 1)
    code = format_rkm(x, kind, ascii_only=ascii_only)
    assert_allclose(read(code), x, rtol=0.5e-2 * (1 + 1e-9))
    # and a written code is a fixed point: writing what was read gives the same code
    assert format_rkm(read(code), kind, ascii_only=ascii_only) == code


@given(
    x=st.floats(min_value=-1e30, max_value=1e30).filter(lambda v: v == 0 or abs(v) > 1e-30),
    unit=st.sampled_from(["", "Ω", "F", "H", "Hz", "V", "A", "s"]),
    digits=st.integers(min_value=1, max_value=10),
)
@HYPOTHESIS
def test_format_value_round_trip(x, unit, digits):
    # rounding to `digits` significant digits: a relative 0.5·10^(1−digits) at worst
    text = format_value(x, unit, digits=digits)
    assert_allclose(read(text), x, rtol=0.5 * 10.0 ** (1 - digits) * (1 + 1e-9), atol=0)
