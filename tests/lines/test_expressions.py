"""Constraint expressions: the allowed grammar and the exact derivatives."""

from __future__ import annotations

import pytest

from widgetkit.errors import FitError
from widgetkit.lines.expressions import check_expression, compile_expression

KNOWN = {"l1_area", "l1_position", "l2_area", "shared_gamma"}


def test_arithmetic_on_names_and_numbers_is_accepted_and_its_names_returned():
    names = check_expression("0.32 * l1_area + (l2_area - 1e-3) / 2 ** -1", "l3_area", KNOWN)
    assert names == {"l1_area", "l2_area"}


@pytest.mark.parametrize("expr", [
    "exp(l1_area)", "__import__('os')", "l1_area.real", "[l1_area][0]", "'a'",
    "l1_area if l2_area else 1", "l1_area > 1", "lambda: 1", "True * l1_area",
    "l1_area; l2_area", "",
])
def test_anything_beyond_the_grammar_is_refused_naming_the_parameter(expr):
    with pytest.raises(FitError, match="l3_area"):
        check_expression(expr, "l3_area", KNOWN)


def test_an_unknown_name_is_refused_with_the_known_ones_listed():
    with pytest.raises(FitError, match="unknown parameter 'l9_area'.*l1_area"):
        check_expression("2 * l9_area", "l3_area", KNOWN)


def test_an_expression_may_not_refer_to_its_own_parameter():
    with pytest.raises(FitError, match="refers to itself"):
        check_expression("l1_area * 2", "l1_area", KNOWN | {"l1_area"})


def test_compiled_derivatives_match_finite_differences():
    f = compile_expression("l1_area ** 1.5 / (l2_area - 0.3) - 2 * l1_area * l2_area")
    env = {"l1_area": (1.3, {"l1_area": 1.0}), "l2_area": (0.9, {"l2_area": 1.0})}
    val, grad = f(env)
    h = 1e-6
    for name in env:
        up = dict(env)
        dn = dict(env)
        up[name] = (env[name][0] + h, env[name][1])
        dn[name] = (env[name][0] - h, env[name][1])
        fd = (f(up)[0] - f(dn)[0]) / (2 * h)  # central differences (common practice)
        assert grad[name] == pytest.approx(fd, rel=1e-7)
    assert val == pytest.approx(1.3**1.5 / 0.6 - 2 * 1.3 * 0.9, rel=1e-15)
