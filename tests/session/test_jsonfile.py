"""Strict reading of session files (RFC 8259 JSON, bounded)."""

import json

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.session import jsonfile


def test_a_repeated_key_is_refused_naming_its_line_and_field():
    text = '{"steps": [{"kind": "crop",\n "params": {"lo": 1, "lo": 2}}]}'
    with pytest.raises(wk.SessionFormatError,
                       match="line 2, column 22, field steps/0/params/lo: holds the key 'lo' twice"):
        jsonfile.parse(text.encode())


@pytest.mark.parametrize("text, words", [
    ('{"a": ' + "9" * 5000 + "}", "field a: holds an integer of 5,000 digits"),
    ('{"a": [1, NaN]}', "field a/1: holds NaN, which is not JSON"),
    ('{"a": -Infinity}', "holds -Infinity"),
    ('{"a": 1e999}', "beyond the range of a float"),
    ('{"a": 0.' + "1" * 100 + "}", "written with 102 characters"),
])
def test_numbers_json_does_not_allow_or_cannot_hold_are_refused(text, words):
    with pytest.raises(wk.SessionFormatError, match=words):
        jsonfile.parse(text.encode())


def test_deep_nesting_is_refused_before_parsing():
    text = "[" * 100_000 + "]" * 100_000
    with pytest.raises(wk.SessionFormatError, match="nested 100,000 levels deep"):
        jsonfile.parse(text.encode())
    # brackets inside strings do not count
    assert jsonfile.parse(b'{"a": "[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[[["}')


def test_bytes_that_are_not_utf8_and_files_too_large_are_refused(monkeypatch):
    with pytest.raises(wk.SessionFormatError, match="not a text"):
        jsonfile.parse(b'{"a": "\xff"}')
    monkeypatch.setattr(jsonfile, "MAX_BYTES", 10)
    with pytest.raises(wk.SessionFormatError, match="more than the 10"):
        jsonfile.parse(b'{"a": "0123456789"}')


def test_a_byte_order_mark_is_allowed_and_values_read_exactly():
    value = {"x": [0.1, -2.5e-300, 123456789012345678], "s": "é\\n"}
    assert jsonfile.parse(b"\xef\xbb\xbf" + json.dumps(value).encode()) == value


def _depth(value):
    if isinstance(value, dict):
        return 1 + max((_depth(v) for v in value.values()), default=0)
    if isinstance(value, list):
        return 1 + max((_depth(v) for v in value), default=0)
    return 0


_TRICKY_TEXT = st.text(alphabet='[]{}"\\ab\n', max_size=8)
_VALUES = st.recursive(st.none() | st.integers() | _TRICKY_TEXT,
                       lambda inner: st.lists(inner, max_size=3)
                       | st.dictionaries(_TRICKY_TEXT, inner, max_size=3), max_leaves=12)


@settings(max_examples=400, deadline=None, derandomize=True)
@given(_VALUES)
def test_the_nesting_depth_measured_without_parsing_is_the_true_one(value):
    text = json.dumps(value)  # strings full of brackets, quotes and backslashes
    assert jsonfile.nesting_depth(text.encode()) == _depth(value)
