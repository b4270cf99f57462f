"""How the series variable is read: header field, file-name pattern, mapping."""

import pytest

import widgetkit as wk
from widgetkit.series import Variable

META = {"title": "cell at 340 K",
        "jcamp": {"$settemperature": "340 K", "pressure": "12.5 hPa"},
        "comments": ["operator: QM", "cell length = 20 cm"],
        "simulated": {"params": {"temperature": 338.2}}}


@pytest.mark.parametrize("field, value, unit", [
    ("set temperature", 340.0, "K"),        # ##$SET TEMPERATURE=340 K, matched without case,
    ("SET_TEMPERATURE", 340.0, "K"),        # spaces or punctuation
    ("pressure", 12.5, "hPa"),
    ("cell length", 20.0, "cm"),            # a "key = value" comment line of a text file
    ("simulated.params.temperature", 338.2, None),   # a dotted path
])
def test_a_header_field_is_found_with_its_unit(field, value, unit):
    var = Variable.parse(field)
    assert var.field == field
    got, got_unit, problem = var.value(META, "a.jdx")
    assert (got, got_unit, problem) == (value, unit, None)


def test_a_given_unit_wins_over_the_headers():
    got, unit, _ = Variable.parse("set temperature", unit="kelvin").value(META, "a.jdx")
    assert (got, unit) == (340.0, "kelvin")


def test_a_pattern_with_a_group_reads_the_file_name_and_a_named_group_names_it():
    var = Variable.parse(r"_(?P<temperature>\d+)K")
    assert var.pattern and var.name == "temperature"
    assert var.value({}, "cell_03_376K.jdx", "/data/cell_03_376K.jdx")[:2] == (376.0, None)
    _, _, problem = var.value({}, "cell.jdx", "/data/cell.jdx")
    assert "does not match" in problem


def test_a_mapping_gives_values_by_file_name():
    var = Variable.parse({"a.jdx": 300, "b.jdx": "320 K"}, unit="K")
    assert var.value({}, "b.jdx")[:2] == (320.0, "K")
    assert "not in the mapping" in var.value({}, "c.jdx")[2]


def test_a_missing_field_is_a_problem_not_an_error():
    value, _, problem = Variable.parse("humidity").value(META, "a.jdx")
    assert value is None and "no header field 'humidity'" in problem


@pytest.mark.parametrize("bad", [42, "", {"a.jdx": "warm"}])
def test_a_variable_that_cannot_be_used_is_refused(bad):
    with pytest.raises(wk.SeriesError, match="variable"):
        Variable.parse(bad)


def test_a_variable_survives_its_json_form():
    var = Variable.parse(r"_(\d+)K", unit="K")
    assert Variable.from_json(var.to_json()) == var
    assert var.label == "variable / K"
