"""Nothing stale: steps that change the spectrum or the peaks clear what was derived from
them, say so in their result and summary, and undo brings it back; ids are never reused.
The band is simulated (conftest: demo data, self-consistency only)."""

import pandas as pd
import pytest

import widgetkit as wk


def _line_of(s, label, iso="1H-35Cl"):
    a = s.assignments
    return int(a.loc[(a["label"] == label) & (a["isotopologue"] == iso), "line_id"].iloc[0])


def test_crop_clears_the_lines_and_assignment_and_keeps_the_peaks_inside(hcl):
    lines_before, n_assigned = hcl.lines, int(hcl.assignments["label"].notna().sum())
    assert lines_before["position"].min() < 2850  # the simulated band has lines below 2850
    hcl.crop(2850, 3050)
    assert hcl.lines.empty and hcl.assignments.empty and hcl.constants.empty
    assert hcl.line_fit is None and hcl.assignment is None
    assert hcl.peaks["position"].min() >= 2850 and len(hcl.peaks) > 0
    step = hcl.history[-1]
    assert step.result["cleared"]["lines"] == len(lines_before)
    assert step.result["cleared"]["assignment"] == n_assigned
    assert step.result["cleared"]["peaks"] == int((lines_before["position"] < 2850).sum())
    assert "cleared" in step.summary and "fitted lines" in step.summary
    hcl.undo()
    pd.testing.assert_frame_equal(hcl.lines, lines_before)
    assert int(hcl.assignments["label"].notna().sum()) == n_assigned


def test_crop_keeps_locks_of_peaks_inside_and_drops_the_others(hcl):
    low, high = _line_of(hcl, "P(6)"), _line_of(hcl, "R(3)")
    hcl.set_assignments({low: {"label": "P(6)", "isotopologue": "1H-35Cl"},
                         high: {"label": "R(3)", "isotopologue": "1H-35Cl"}})
    p6 = float(hcl.lines.set_index("line_id").loc[low, "position"])
    hcl.crop(p6 + 5.0, 3050)
    assert set(hcl.locks) == {high}
    assert hcl.history[-1].result["cleared"]["locks"] == [low]


def test_a_new_find_peaks_gives_new_ids_and_clears_lines_assignment_and_locks(hcl):
    old_ids = set(hcl.peaks["peak_id"])
    hcl.set_assignment(_line_of(hcl, "R(1)"), label="R(1)", isotopologue="1H-35Cl")
    hcl.find_peaks(min_snr=10)
    new_ids = set(hcl.peaks["peak_id"])
    assert new_ids.isdisjoint(old_ids) and min(new_ids) == max(old_ids) + 1
    assert hcl.line_fit is None and hcl.assignment is None and hcl.locks == {}
    cleared = hcl.history[-1].result["cleared"]
    assert set(cleared) == {"peaks", "lines", "assignment", "locks"}
    with pytest.raises(wk.SessionStateError, match="no fitted lines"):
        hcl.assign_band(wk.Diatomic("H", "Cl"))  # the old fit is not used


def test_removed_peak_ids_are_never_given_again(session):
    session.find_peaks(min_snr=10)
    ids = list(session.peaks["peak_id"])
    session.remove_peak(ids[-1])
    new = session.add_peak(2850.0, snap=False)
    assert new not in ids and new == max(ids) + 1
    session.remove_peak(new)
    assert session.add_peak(2860.0, snap=False) == new + 1


def test_adding_or_removing_a_peak_clears_the_fit_made_without_it(hcl):
    n = len(hcl.lines)
    hcl.add_peak(2880.0, snap=False)
    assert hcl.line_fit is None and hcl.history[-1].result["cleared"]["lines"] == n
    hcl.undo()
    hcl.remove_peak(int(hcl.peaks["peak_id"].iloc[0]))
    assert hcl.line_fit is None and hcl.assignment is None


def test_a_baseline_or_a_conversion_clears_the_peaks_found_on_the_old_values(hcl):
    n_peaks = len(hcl.peaks)
    hcl.subtract_baseline("poly", degree=1)
    assert hcl.peaks.empty and hcl.line_fit is None
    assert hcl.history[-1].result["cleared"]["peaks"] == n_peaks
    hcl.undo()
    assert len(hcl.peaks) == n_peaks


def test_a_new_line_fit_clears_the_assignment_it_would_make_stale(hcl):
    n_assigned = int(hcl.assignments["label"].notna().sum())
    hcl.fit_lines(shape="gaussian")
    assert hcl.assignment is None
    assert hcl.history[-1].result["cleared"] == {"assignment": n_assigned}


def test_a_step_that_clears_nothing_records_no_cleared_entry(session):
    session.crop(2750, 3050)
    assert "cleared" not in session.history[-1].result
    assert "cleared" not in session.history[-1].summary


def test_cleared_results_replay_and_verify(hcl, tmp_path):
    hcl.crop(2850, 3050)
    hcl.find_peaks(min_snr=10)
    hcl.fit_lines(shape="gaussian")
    hcl.save(tmp_path / "s.json")
    again = wk.Session.load(tmp_path / "s.json")
    assert list(again.peaks["peak_id"]) == list(hcl.peaks["peak_id"])
    report = again.verify()
    assert report.ok, report.mismatches
