"""Fixtures shared by the test directories."""

import json

import pytest


def _without_key(path, out, step_index: int, key: str, result_fields=()):
    """A copy (written to ``out``) of the saved session ``path`` with ``key`` deleted from one
    step's parameters (and ``result_fields`` from its result), the step's seal recomputed: a
    record as the code before the option wrote it."""
    from widgetkit.session.steps import Step

    doc = json.loads(path.read_text())
    st = doc["steps"][step_index]
    assert key in st["params"]
    del st["params"][key]
    for f in result_fields:
        st["result"].pop(f, None)
    st["sha256"] = Step(**{k: v for k, v in st.items() if k != "sha256"}).seal()
    out.write_text(json.dumps(doc))
    return out


@pytest.fixture
def without_key():
    """:func:`_without_key`: an older record made from a saved session."""
    return _without_key
