"""The ASDF codec (SQZ, DIF, DUP, PAC, AFFN) against the JCAMP-DX specification.

Spec: R. S. McDonald and P. A. Wilks, Applied Spectroscopy 42 (1988) 151 (JCAMP-DX 4.24),
and P. Lampen et al., Applied Spectroscopy 48 (1994) 1545 (5.01). The character tables are
the spec's: SQZ '@'=0, 'A'-'I'=1..9, 'a'-'i'=-1..-9; DIF '%'=0, 'J'-'R'=1..9, 'j'-'r'=-1..-9;
DUP 'S'-'Z'=1..8, 's'=9. Every hand example below was encoded by hand from those tables.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from widgetkit.errors import SpectrumFormatError
from widgetkit.io.asdf import (
    decode_xydata,
    encode_dif,
    encode_difdup_lines,
    encode_dup,
    encode_sqz,
)


def ys(text: str) -> list:
    return decode_xydata(text.encode(), line0=1).y.tolist()


@pytest.mark.parametrize("ch, value", list(zip("@ABCDEFGHI", range(10), strict=True))
                         + list(zip("abcdefghi", range(-1, -10, -1), strict=True)))
def test_each_sqz_character_is_the_digit_of_the_spec_table(ch, value):
    # spec SQZ table (McDonald and Wilks 1988)
    assert ys(f"1 {ch}") == [value]


@pytest.mark.parametrize("ch, diff", list(zip("%JKLMNOPQR", range(10), strict=True))
                         + list(zip("jklmnopqr", range(-1, -10, -1), strict=True)))
def test_each_dif_character_adds_the_difference_of_the_spec_table(ch, diff):
    # spec DIF table; "1 E{ch}" = 5 then 5 + diff; the line ends in DIF so a check line follows
    assert ys(f"1 E{ch}\n2 {encode_sqz(5 + diff)}") == [5, 5 + diff]


@pytest.mark.parametrize("ch, count", list(zip("STUVWXYZs", range(1, 10), strict=True)))
def test_each_dup_character_repeats_the_value_that_many_times_in_all(ch, count):
    # spec DUP table: the count includes the first occurrence
    assert ys(f"1 E{ch}") == [5] * count


def test_multi_digit_values_keep_the_folded_digit_first():
    # hand-encoded: A234 = 1234, e6 = -56, a23 = -123, G = 7
    assert ys("100A234e6a23G") == [1234, -56, -123, 7]


def test_dif_runs_with_dup_add_the_difference_again_for_each_count():
    # hand-encoded: 10 then +2 three times ("KU"): 10, 12, 14, 16; check line repeats 16
    assert ys("100A0KU\n103A6") == [10, 12, 14, 16]


def test_dup_counts_of_more_than_one_digit_use_the_remaining_digits():
    # hand-encoded: "S2" = count 12
    assert ys("1 AS2") == [1] * 12


def test_pac_affn_and_sqz_spellings_of_the_same_ordinates_agree():
    # the same four ordinates 1234 -56 0 7 written three ways (hand-encoded)
    assert ys("1 A234e6@G") == ys("1+1234-56+0+7") == ys("1 1234, -56  0,7") == [1234, -56, 0, 7]


def test_the_y_check_value_is_dropped_after_it_matches():
    # hand-encoded: line 1 ends in DIF (1234, 1240, 1240, 1235), line 2 repeats 1235 (A235)
    d = decode_xydata(b"100A234O%n\n103A235J\n105A236\n", line0=20)
    assert d.y.tolist() == [1234, 1240, 1240, 1235, 1236]
    assert d.line_first.tolist() == [0, 3, 4]  # the X of each line belongs to these points
    assert d.line_number.tolist() == [20, 21, 22]


def test_a_failed_y_check_raises_with_the_line_of_the_bad_check():
    with pytest.raises(SpectrumFormatError, match="Y-check") as info:
        decode_xydata(b"100A234O%n\n103A236\n", line0=20)  # 1236 != 1235
    assert info.value.line == 21


def test_a_line_after_an_absolute_value_carries_no_check_value():
    # line 1 ends in SQZ (absolute), so line 2's first ordinate is a new point
    assert ys("100A234\n101A234") == [1234, 1234]


def test_a_dif_at_the_start_of_a_line_is_refused():
    with pytest.raises(SpectrumFormatError, match="first ordinate of a line") as info:
        decode_xydata(b"100A234\n101J\n", line0=5)
    assert info.value.line == 6


def test_a_dup_count_without_a_preceding_value_is_refused():
    with pytest.raises(SpectrumFormatError, match="DUP"):
        decode_xydata(b"100 S\n", line0=1)


def test_a_missing_value_mark_is_refused_with_its_line():
    with pytest.raises(SpectrumFormatError, match="missing") as info:
        decode_xydata(b"100 1 2\n103 ? 4\n", line0=9)
    assert info.value.line == 10


def test_affn_values_with_decimals_and_signed_exponents_are_read():
    # exponent with a sign, as the decoder documents (1.5E+03 = 1500)
    assert ys("1 1.5E+03 2.25 -0.5") == [1500.0, 2.25, -0.5]
    assert ys("1 0.125 2.5") == [0.125, 2.5]


def test_an_x_without_ordinates_is_refused():
    with pytest.raises(SpectrumFormatError, match="no ordinates") as info:
        decode_xydata(b"100 1 2\n102\n", line0=3)
    assert info.value.line == 4


@pytest.mark.parametrize("value, text", [(0, "@"), (1234, "A234"), (-56, "e6"), (7, "G"),
                                         (-123, "a23")])
def test_sqz_encoding_matches_the_hand_encoded_examples(value, text):
    # hand-encoded from the spec SQZ table
    assert encode_sqz(value) == text


@pytest.mark.parametrize("value, text", [(0, "%"), (6, "O"), (-5, "n"), (-15, "j5"),
                                         (123, "J23")])
def test_dif_encoding_matches_the_hand_encoded_examples(value, text):
    # hand-encoded from the spec DIF table
    assert encode_dif(value) == text


@pytest.mark.parametrize("count, text", [(1, "S"), (3, "U"), (8, "Z"), (9, "s"), (12, "S2")])
def test_dup_encoding_matches_the_hand_encoded_examples(count, text):
    # hand-encoded from the spec DUP table
    assert encode_dup(count) == text


def test_encoded_lines_stay_within_eighty_characters():
    rng = np.random.default_rng(7)
    y = rng.integers(-10**6, 10**6, 500)
    lines = encode_difdup_lines(y, lambda i: str(1000 + i))
    assert max(map(len, lines)) <= 80  # JCAMP-DX line length limit (spec)


@settings(max_examples=80, deadline=None)
@given(st.lists(st.integers(-10**9, 10**9) | st.sampled_from([0, 1, -1, 5]), min_size=1,
                max_size=300), st.integers(20, 90))
def test_encoding_then_decoding_gives_back_the_integers(values, width):
    # self-consistency: round trip of our encoder and decoder
    y = np.array(values, np.int64)
    lines = encode_difdup_lines(y, lambda i: f"{i}", width=width)
    d = decode_xydata(("\n".join(lines) + "\n").encode(), line0=1)
    assert d.y.tolist() == values
    assert np.array_equal(d.line_x, d.line_first.astype(float))  # X names its first ordinate


def test_values_with_more_digits_than_int64_holds_are_read_exactly_then_rounded_once():
    d = decode_xydata(b"0.060000000000000005 1 2\n", line0=1)
    assert d.y.tolist() == [1, 2]
    assert d.line_x.tolist() == [0.060000000000000005]  # float("0.060000000000000005")
    # an SQZ integer beyond int64 (hand-encoded: A = 1 then the digits), rounded once
    assert ys("1 A2345678901234567890") == [float(12345678901234567890)]


def test_long_decimal_values_are_rounded_once_like_float():
    # 17 significant digits: beyond 2**53, so the float tokeniser must parse it (float())
    assert ys("0 0.0 360287970190.31555") == [0.0, float("360287970190.31555")]
