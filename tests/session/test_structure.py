"""The quick structural check of session documents against the shipped JSON Schema agrees
with the reference validator (the jsonschema package, draft 2020-12)."""

import copy
import json
import random

import jsonschema
import pytest
from _mutations import json_paths

import widgetkit as wk
from widgetkit.session import codec, structure


@pytest.fixture(scope="module")
def document(tmp_path_factory):
    import numpy as np

    x = np.linspace(1000.0, 1100.0, 50)
    s = wk.Session(wk.Spectrum(x, np.exp(-0.5 * ((x - 1050) / 2) ** 2)))  # invented data
    s.crop(1010, 1090)
    s.note("two steps")
    return s.to_document()


_REPLACEMENTS = [None, True, 0, -1, 1.5, "", "x" * 70, "zzz", [], [1], {}, {"a": 1}, 2**60]


def _mutants(doc, n=400, seed=11):
    rng = random.Random(seed)
    paths = [p for p in json_paths(doc) if p]
    for _ in range(n):
        path = rng.choice(paths)
        new = copy.deepcopy(doc)
        target = new
        for key in path[:-1]:
            target = target[key]
        if rng.random() < 0.15 and isinstance(target, dict):
            del target[path[-1]]
        elif rng.random() < 0.1 and isinstance(target, dict):
            target["extra_member"] = 1
        else:
            target[path[-1]] = rng.choice(_REPLACEMENTS)
        yield path, new


def test_every_keyword_of_the_shipped_schema_is_interpreted():
    def keywords(node):
        if isinstance(node, dict):
            yield from node
            for v in node.values():
                yield from keywords(v)
        elif isinstance(node, list):
            for v in node:
                yield from keywords(v)

    schema = codec._schema(codec.VERSION)
    names = set(keywords(schema)) - set(schema["properties"]) - set(schema["$defs"])
    for node in _subschemas(schema):
        names -= set(node.get("properties", {}))
    assert names <= structure.KEYWORDS, names - structure.KEYWORDS


def _subschemas(node):
    if isinstance(node, dict):
        yield node
        for v in node.values():
            yield from _subschemas(v)
    elif isinstance(node, list):
        for v in node:
            yield from _subschemas(v)


def test_an_unknown_keyword_is_a_programming_error():
    with pytest.raises(ValueError, match="not interpreted"):
        structure.problems(1, {"type": "integer", "multipleOf": 2})


def test_verdicts_agree_with_the_reference_validator_on_400_damaged_documents(document):
    schema = codec._schema(codec.VERSION)
    reference = jsonschema.Draft202012Validator(schema)
    assert not structure.problems(document, schema) and reference.is_valid(document)
    disagreements = []
    for path, doc in _mutants(document):
        ours, theirs = not structure.problems(doc, schema), reference.is_valid(doc)
        if ours != theirs:
            disagreements.append((path, ours, theirs))
    assert not disagreements, disagreements[:5]


def test_messages_name_the_field_and_never_dump_a_long_value(document):
    doc = copy.deepcopy(document)
    doc["sources"][0]["data"]["x"]["dtype"] = "<f4" + "x" * 100_000
    found = structure.problems(doc, codec._schema(codec.VERSION))
    assert found and all(len(m) < 300 for m in found)
    assert "sources/0/data" in found[0]
    assert len(json.dumps(found)) < 2000
