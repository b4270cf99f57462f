"""Manual assignments through the session: locks win, batches, clear, undo, and failures
that leave the session unchanged. The band is simulated by widgetkit.simulate from the
handbook constants of H35Cl (Huber & Herzberg 1979, handbook values from memory)."""

import pytest

import widgetkit as wk


@pytest.fixture
def assigned(hcl):
    """The simulated H-Cl session of conftest (peaks, Gaussian fit, assignment)."""
    return hcl


def _line(s, label, iso="1H-35Cl"):
    a = s.assignments
    return int(a.loc[(a["label"] == label) & (a["isotopologue"] == iso), "line_id"].iloc[0])


def test_a_lock_is_kept_and_replayed(assigned, tmp_path):
    s = wk.Session.load(_saved(assigned, tmp_path))
    r0 = _line(s, "R(0)")
    s.clear_assignment(r0)
    a = s.assignments.set_index("line_id")
    assert a.loc[r0, "label"] is None or a.loc[r0, "label"] != a.loc[r0, "label"]  # unassigned
    assert s.locks[r0] == {}
    assert s.history[-1].kind == "clear_assignment"
    s.save(tmp_path / "again.json")
    again = wk.Session.load(tmp_path / "again.json")
    assert again.locks == s.locks and again.verify().ok
    s.undo()
    assert _line(s, "R(0)") == r0 and r0 not in s.locks


def test_several_locks_go_in_one_step(assigned, tmp_path):
    s = wk.Session.load(_saved(assigned, tmp_path))
    r0, p1 = _line(s, "R(0)"), _line(s, "P(1)")
    n = len(s.history)
    s.set_assignments({r0: {"label": "R(0)", "isotopologue": "1H-35Cl"},
                       p1: {"label": "P(1)", "isotopologue": "1H-35Cl"}})
    assert len(s.history) == n + 1
    assert set(s.locks) == {r0, p1}
    assert _line(s, "R(0)") == r0 and _line(s, "P(1)") == p1


def test_a_lock_on_an_unknown_line_is_refused_and_changes_nothing(assigned, tmp_path):
    s = wk.Session.load(_saved(assigned, tmp_path))
    n, before = len(s.history), s.assignments
    with pytest.raises(wk.SessionStateError, match="no line with line_id 9999"):
        s.set_assignment(9999, label="R(0)")
    with pytest.raises(wk.AssignmentError, match="needs labels"):
        s.set_assignment(_line(s, "R(1)"))
    assert len(s.history) == n and s.assignments.equals(before)


def _saved(s, tmp_path):
    path = tmp_path / "band.json"
    s.save(path)
    return path
