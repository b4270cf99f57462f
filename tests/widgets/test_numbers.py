"""The parenthesis notation of uncertainties (value(u) in units of the last digits)."""

import math

import pytest
import scipy.constants as sc

from widgetkit.widgets.numbers import format_uncertainty, format_value


def test_the_example_of_the_trade_is_written_with_one_digit_of_uncertainty():
    # common practice (CODATA tables, GUM 7.2.2): 2885.977(3) means 2885.977 ± 0.003
    assert format_uncertainty(2885.97741, 0.0031) == "2885.977(3)"


def test_two_digits_keep_one_more_decimal():
    # same value, the rule with two significant digits of the uncertainty (common practice)
    assert format_uncertainty(2885.97741, 0.0031, digits=2) == "2885.9774(31)"


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        # CODATA 2022 concise forms, values and uncertainties from scipy.constants
        ("Rydberg constant", "10973731.568157(12)"),
        ("proton-electron mass ratio", "1836.152673426(32)"),
        ("fine-structure constant", "0.0072973525643(11)"),
        ("Newtonian constant of gravitation", "6.67430(15)e-11"),
        ("electron mass", "9.1093837139(28)e-31"),
    ],
)
def test_codata_constants_come_out_in_their_published_concise_form(name, expected):
    value, _unit, u = sc.physical_constants[name]
    assert format_uncertainty(value, u, digits=2) == expected


def test_rounding_that_carries_into_a_new_digit_moves_the_decimal_place():
    # 0.096 rounds to 0.1 with one digit, so the value is written to one decimal (common practice)
    assert format_uncertainty(1.234, 0.096) == "1.2(1)"


def test_an_uncertainty_above_ten_is_written_in_units_of_the_integer_digits():
    # 12345.6 ± 23 with one digit: ± 20, value rounded to the tens (common practice)
    assert format_uncertainty(12345.6, 23.0) == "12350(20)"
    assert format_uncertainty(12345.6, 23.0, digits=2) == "12346(23)"


def test_negative_values_keep_their_sign_and_a_rounded_zero_has_none():
    assert format_uncertainty(-0.0523, 0.0012, digits=2) == "-0.0523(12)"  # common practice
    assert format_uncertainty(-0.0004, 0.01) == "0.00(1)"  # common practice


@pytest.mark.parametrize("stderr", [None, math.nan, math.inf, 0.0, -1.0])
def test_a_missing_uncertainty_gives_the_bare_value(stderr):
    assert format_uncertainty(2885.97741, stderr) == "2885.98"  # 6 significant digits


def test_a_missing_value_is_a_dash():
    assert format_uncertainty(math.nan, 0.1) == "–"
    assert format_value(None) == "–"


def test_other_numbers_of_digits_are_refused():
    with pytest.raises(ValueError, match="digits must be 1 or 2"):
        format_uncertainty(1.0, 0.1, digits=3)
