"""Declared step parameters: one check for live calls and saved files."""

import math

import numpy as np
import pytest

from widgetkit.session import STEP_KINDS
from widgetkit.session.params import MAX_DEPTH, Param, ParamProblem, check_json, check_params


@pytest.mark.parametrize("param, value, expected", [
    (Param("lo", "number"), 3, 3.0),
    (Param("lo", "number"), np.float32(2.5), 2.5),
    (Param("n", "integer"), 4.0, 4),
    (Param("n", "integer"), np.int64(7), 7),
    (Param("r", "range"), (1, 2), [1.0, 2.0]),
    (Param("h", "numbers", null_items=True), [1, None, math.nan], [1.0, None, None]),
    (Param("c", "strings"), "a", "a"),
    (Param("c", "choice", choices=("a", None), nullable=True), None, None),
])
def test_accepted_values_come_back_normalised(param, value, expected):
    got = param.check(value)
    assert got == expected and type(got) is type(expected)


@pytest.mark.parametrize("param, value, words", [
    (Param("lo", "number", unit="cm-1"), "a", "must be a number in cm-1, got 'a' (str)"),
    (Param("lo", "number"), True, "must be a number, got True (bool)"),
    (Param("lo", "number"), math.nan, "must be a finite number, got nan"),
    (Param("lo", "number"), 10**400, "an integer too large for a float"),
    (Param("n", "integer"), 1.7, "must be a whole number, got 1.7 (float)"),
    (Param("n", "integer", minimum=1), 0, "must be a whole number of at least 1, got 0"),
    (Param("p", "number", above=0, below=1), 1.0, "must be a number below 1, got 1.0"),
    (Param("r", "range"), (1,), "must be a pair (lo, hi), got (1,) (tuple)"),
    (Param("r", "range"), (1, "b"), "r[1]: must be a number, got 'b'"),
    (Param("c", "choice", choices=("a", "b")), "z", "must be one of 'a', 'b', got 'z' (str)"),
    (Param("c", "strings", max_items=2), ["a", "b", "c"], "at most 2 items, got 3"),
    (Param("s", "string"), None, "must be a string, got None"),
])
def test_refused_values_are_named_with_the_value(param, value, words):
    with pytest.raises(ParamProblem) as info:
        param.check(value)
    assert words in str(info.value)


def test_long_values_are_cut_in_messages():
    with pytest.raises(ParamProblem) as info:
        Param("lo", "number").check("x" * 100_000)
    assert len(str(info.value)) < 200
    with pytest.raises(ParamProblem) as info:
        Param("lo", "number").check(list(range(100_000)))
    assert "a list of 100000 items" in str(info.value)


def test_any_json_is_bounded_in_depth_size_and_content():
    deep = []
    for _ in range(MAX_DEPTH + 2):
        deep = [deep]
    with pytest.raises(ParamProblem, match="nested deeper"):
        check_json(deep, "x")
    with pytest.raises(ParamProblem, match="integer of 400 digits"):
        check_json({"a": 10**399}, "x")
    with pytest.raises(ParamProblem, match="x.a: must hold finite numbers"):
        check_json({"a": math.inf}, "x")
    with pytest.raises(ParamProblem, match="keys must be strings"):
        check_json({1: 2}, "x")
    with pytest.raises(ParamProblem, match="plain data"):
        check_json([object()], "x")
    assert check_json({"a": (1, np.int64(2))}, "x") == {"a": [1, 2]}


def test_unknown_and_missing_parameters_are_named():
    declared = (Param("lo", "number"), Param("hi", "number", 1.0))
    with pytest.raises(ParamProblem, match="bogus: is not a parameter of this step"):
        check_params(declared, {"lo": 1, "bogus": 2})
    with pytest.raises(ParamProblem, match="lo: is required"):
        check_params(declared, {"hi": 2})
    assert list(check_params(declared, {"hi": 2, "lo": 1})) == ["hi", "lo"]  # order as given


def test_every_registered_kind_declares_its_parameters():
    assert all(k.parameters is not None for k in STEP_KINDS.values()), \
        [name for name, k in STEP_KINDS.items() if k.parameters is None]


def test_the_declared_baseline_options_are_those_processing_accepts():
    from widgetkit.processing import BASELINE_METHODS, baseline_options

    declared = STEP_KINDS["subtract_baseline"].METHOD_OPTIONS
    assert set(declared) == set(BASELINE_METHODS)
    for method in BASELINE_METHODS:
        assert set(declared[method]) == set(baseline_options(method))


def test_the_declared_shapes_and_baselines_are_the_registered_ones():
    from widgetkit.lines import BASELINES, SHAPES
    from widgetkit.session import kinds_lines

    assert {k: v.widths for k, v in SHAPES.items()} == kinds_lines.SHAPE_WIDTHS
    # "auto": the linear baseline on a smooth background where one is needed (lines.background)
    assert set(kinds_lines.BASELINE_NAMES) == {k for k in BASELINES if k is not None} | {"auto"}
