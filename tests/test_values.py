"""parse_value: numbers, scale suffixes and units as netlists write them."""

import math

import pytest

from netnoise.text.values import milli_slip_notice, parse_value, split_value

# (text, expected value).  The scale factors are the SPICE suffix convention
# (common practice); 'mil' = 1/1000 inch = 25.4 µm (the inch is 25.4 mm
# exactly by the 1959 international yard and pound agreement).
GOOD = [
    ("47", 47.0),
    ("-5", -5.0),
    ("+3", 3.0),
    ("4.7", 4.7),
    (".5", 0.5),
    ("1.", 1.0),
    ("1e-12", 1e-12),
    ("2.5E3", 2.5e3),
    ("1f", 1e-15),
    ("1F", 1e-15),  # bare F is femto (SPICE convention), not farad
    ("3p", 3e-12),
    ("10n", 10e-9),
    ("4.7u", 4.7e-6),
    ("4.7µ", 4.7e-6),  # micro sign U+00B5
    ("4.7μ", 4.7e-6),  # Greek mu U+03BC
    ("1m", 1e-3),
    ("1M", 1e-3),  # M is milli (SPICE convention)
    ("4.7k", 4.7e3),
    ("4.7K", 4.7e3),
    ("1meg", 1e6),
    ("1MEG", 1e6),
    ("2g", 2e9),
    ("1t", 1e12),
    ("10mil", 10 * 25.4e-6),
    ("10kOhm", 10e3),
    ("10kohms", 10e3),
    ("10kΩ", 10e3),
    ("4.7uF", 4.7e-6),
    ("1fF", 1e-15),
    ("1mH", 1e-3),
    ("1H", 1.0),
    ("1kHz", 1e3),
    ("1MHz", 1e-3),  # M is milli even before Hz (SPICE convention)
    ("2megHz", 2e6),
    ("5V", 5.0),
    ("2mA", 2e-3),
    ("10us", 10e-6),
    ("1e3k", 1e6),
]


@pytest.mark.parametrize("text, expected", GOOD)
def test_good_values(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12)


# (text, fragment of the reason)
BAD = [
    ("", "empty"),
    ("abc", "not a number"),
    ("k10", "not a number"),
    ("1kk", "two scale suffixes"),
    ("1megk", "two scale suffixes"),
    ("3x", "'x'"),
    ("1e", "exponent without digits"),
    ("1e+", "exponent without digits"),
    ("1kOhmx", "'Ohmx'"),
    ("1 k", "' k'"),
    ("nan", "not a number"),
    ("inf", "not a number"),
    ("1e999", "too large"),
]


@pytest.mark.parametrize("text, fragment", BAD)
def test_bad_values(text, fragment):
    with pytest.raises(ValueError, match=None) as info:
        parse_value(text)
    assert fragment in str(info.value)


def test_split_reports_suffix_and_unit():
    value, suffix, unit = split_value("4.7uF")
    assert value == pytest.approx(4.7e-6, rel=1e-12)  # micro = 1e-6 (SI)
    assert (suffix, unit) == ("u", "f")


def test_surrounding_blanks_ignored():
    assert parse_value("  2k ") == pytest.approx(2e3, rel=1e-12)  # kilo = 1e3 (SI)


@pytest.mark.parametrize("text", ["1M", "4.7m", "100m"])
def test_milli_slip_notice_for_small_resistors(text):
    notice = milli_slip_notice("R3", text, parse_value(text))
    assert notice is not None
    assert notice.startswith("R3 = ")
    assert "'M' means milli" in notice
    assert "meg" in notice


@pytest.mark.parametrize("text", ["1meg", "1k", "1500m", "0.5", "1u"])
def test_no_milli_slip_notice(text):
    assert milli_slip_notice("R3", text, parse_value(text)) is None


def test_milli_slip_suggests_the_same_number():
    notice = milli_slip_notice("R7", "2.2M", parse_value("2.2M"))
    assert "write 2.2meg" in notice


def test_value_is_a_python_float():
    assert isinstance(parse_value("1k"), float)
    assert math.isfinite(parse_value("1t"))


# ---- the fast path (one full-match regex) agrees with the step-by-step checks

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from netnoise.text.values import _split_checked  # noqa: E402

_VALUE_PIECES = st.tuples(
    st.sampled_from(["", "+", "-"]),
    st.sampled_from(["0", "1", "47", "4.7", ".5", "5.", "1e3", "1E-12", "2e+6", "1e", "x", ""]),
    st.sampled_from(
        ["", "f", "p", "n", "u", "\u00b5", "\u03bc", "m", "M", "k", "K", "meg", "MEG", "mil", "g", "t", "kk", "q"]
    ),
    st.sampled_from(["", "ohm", "Ohms", "\u03a9", "F", "h", "V", "a", "Hz", "s", "x", "ohmx"]),
    st.sampled_from(["", " ", "\t"]),
).map("".join)


@settings(max_examples=300, deadline=None)
@given(_VALUE_PIECES | st.text(max_size=12))
def test_fast_path_agrees_with_the_checked_path(text):
    try:
        expected = _split_checked(text)
    except ValueError:
        expected = None
    try:
        got = split_value(text)
    except ValueError:
        got = None
    assert got == expected


def test_long_bad_value_message_is_bounded():
    with pytest.raises(ValueError) as info:
        split_value("1" + "z" * 100_000)
    assert len(str(info.value)) < 200
