"""Cell numbers: IEC 60062 letter codes, SI prefixes, plain numbers in unit columns."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from partpick.catalog.units import parse_number, parse_value

# IEC 60062 (marking codes for resistors and capacitors), clause on the letter
# code: the multiplier letter stands in place of the decimal point; R = 1
# (ohm), p/n/u/m/k/M/G the SI multipliers. Values below are that rule applied
# by hand to the standard's style of examples.
IEC_60062_LETTER_CODE = [
    ("4k7", 4.7e3),
    ("0R22", 0.22),
    ("R47", 0.47),
    ("47R", 47.0),
    ("1R0", 1.0),
    ("2u2", 2.2e-6),
    ("1k0", 1.0e3),
    ("6n8", 6.8e-9),
    ("2p2", 2.2e-12),
    ("p47", 0.47e-12),
    ("4m7", 4.7e-3),
    ("1M5", 1.5e6),
    ("2G2", 2.2e9),
    ("100R", 100.0),
]

# SI prefixes (BIPM SI Brochure, 9th edition, table of SI prefixes; table number from
# memory): p 1e-12, n 1e-9, u (micro) 1e-6,
# m 1e-3, k 1e3, M 1e6, G 1e9. "m" is milli and "M" is mega.
SI_PREFIX_FORMS = [
    ("4.7k", 4.7e3),
    ("100n", 100e-9),
    ("1M", 1e6),
    ("10m", 0.01),
    ("1000u", 1e-3),
    ("22p", 22e-12),
    ("2.2\u00b5", 2.2e-6),  # the micro sign
    ("1.5G", 1.5e9),
    ("0.1", 0.1),
    ("1e3", 1e3),
    ("2.2e-6", 2.2e-6),
    ("47", 47.0),
    ("  47  ", 47.0),
]


@pytest.mark.parametrize(("text", "expected"), IEC_60062_LETTER_CODE)
def test_iec_60062_letter_code(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("text", "expected"), SI_PREFIX_FORMS)
def test_si_prefix_and_plain_forms(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12)


def test_letter_code_is_exact_not_binary_noise():
    # 4.7 * 1e-9 is 4.700000000000001e-09 and 3.3 * 1e-6 is 3.2999999999999997e-06 in
    # binary floating point; the parser gives the float nearest the decimal value.
    assert 4.7 * 1e-9 != 4.7e-9 and 3.3 * 1e-6 != 3.3e-6
    assert parse_value("4n7") == 4.7e-9
    assert parse_value("3u3") == 3.3e-6
    assert parse_value("4k7") == 4700.0
    assert parse_value("0R22") == 0.22
    assert parse_value("10m") == 0.01


def test_milli_and_mega_are_different():
    assert parse_value("1m") == pytest.approx(1e-3)
    assert parse_value("1M") == pytest.approx(1e6)
    assert parse_value("1M") / parse_value("1m") == pytest.approx(1e9)


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("22kohm", 22e3),
        ("10ohms", 10.0),
        ("4k7\u03a9", 4.7e3),  # Greek capital omega
        ("4k7\u2126", 4.7e3),  # ohm sign
        ("100nF", 100e-9),
        ("2u2F", 2.2e-6),
        ("0R22ohm", 0.22),
        ("1000uF", 1e-3),
    ],
)
def test_trailing_unit_symbol_is_tolerated(text, expected):
    assert parse_value(text) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    "text",
    ["", "   ", "abc", "k", "4k7k", "1.2.3", "4,7k", "-1k", "nan", "inf", "1E", "ohm", "F",
     "4 k7", "k47k", "1x", "0x10"],
)
def test_garbage_value_is_refused_with_the_accepted_forms(text):
    with pytest.raises(ValueError) as info:
        parse_value(text)
    message = str(info.value)
    assert "is not a value" in message
    assert "IEC 60062" in message and "4k7" in message


@given(
    whole=st.integers(min_value=0, max_value=999),
    frac=st.integers(min_value=0, max_value=99).map(lambda n: f"{n:02d}"),
    letter=st.sampled_from(["p", "n", "u", "m", "R", "k", "M", "G"]),
)
@settings(max_examples=60, deadline=None, database=None)
def test_letter_code_equals_the_decimal_point_form(whole, frac, letter):
    # Two routes to the same number: "4k7" and "4.7k" (IEC 60062 letter code vs SI prefix).
    code = parse_value(f"{whole}{letter}{frac}")
    dotted = parse_value(f"{whole}.{frac}{letter}")
    assert code == pytest.approx(dotted, rel=1e-12)


# ----------------------------------------------------------------------------- unit columns


@pytest.mark.parametrize(
    ("text", "expected"),
    [("2.5", 2.5), ("1e-3", 1e-3), ("-3", -3.0), (" 7 ", 7.0), ("0", 0.0), (".5", 0.5), ("+4", 4.0)],
)
def test_parse_number_plain(text, expected):
    assert parse_number(text) == expected


@pytest.mark.parametrize("text", ["22p", "4k7", "4.7k", "100n", "0R22", "10m", "1M"])
def test_parse_number_refuses_prefix_and_letter_code(text):
    # formats.md: "comp_pf = 22p is refused"; unit columns take plain numbers.
    with pytest.raises(ValueError) as info:
        parse_number(text)
    message = str(info.value)
    assert f"'{text}'" in message
    assert "SI prefix" in message
    assert "plain number" in message


@pytest.mark.parametrize("text", ["nan", "NaN", "inf", "-inf", "Infinity"])
def test_parse_number_refuses_nan_and_inf(text):
    with pytest.raises(ValueError, match="not a number"):
        parse_number(text)


def test_parse_number_refuses_overflow_to_infinity():
    with pytest.raises(ValueError, match="not a finite number"):
        parse_number("1e400")


@pytest.mark.parametrize("text", ["", "   ", "abc", "1,5", "1.2.3", "--1", "5 V"])
def test_parse_number_refuses_empty_and_garbage(text):
    with pytest.raises(ValueError, match="is not a number"):
        parse_number(text)
