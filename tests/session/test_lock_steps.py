"""Locks, clears and unlocks through the session: the band renumbered around a lock, the record
saying how the constants moved (in standard errors, a warning above 3σ), ambiguous locks
refused, and the spectrum's metadata checked before an assignment. The spectrum is simulated
by widgetkit.simulate from the handbook constants of H35Cl (reference/diatomics.md, handbook
values from memory), both chlorine isotopologues; every lock differs from the automatic label."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk

H35, H37 = "1H-35Cl", "1H-37Cl"


@pytest.fixture
def s(hcl):
    """A fresh copy of the saved H-Cl session of conftest (both isotopologues assigned)."""
    return hcl


def _line(s, label, iso):
    a = s.assignments
    return int(a.loc[(a["label"] == label) & (a["isotopologue"] == iso), "line_id"].iloc[0])


def _flag_invariant(s):
    """Every labelled line is within 4 × its expected scatter (≤ 3 × its stated error when the
    result is ok) of the fit, or flagged (outlier or blend)."""
    a = s.assignments
    shown = a["label"].notna() & ~a["outlier"] & ~a["blended"]
    if s.assignment.status == "ok":
        assert (np.abs(a.loc[shown, "obs_minus_calc"]) <= 12 * a.loc[shown, "position_err"]).all()
    assert (np.abs(a.loc[shown, "normalised_residual"]) <= s.assignment.outlier_sigma).all()


def test_a_lock_one_j_higher_renumbers_the_band_and_warns_of_the_moved_constants(s, tmp_path):
    auto = s.assignments.set_index("line_id")
    lid = _line(s, "R(2)", H35)
    s.set_assignment(lid, label="R(3)", isotopologue=H35)
    step = s.history[-1]
    a = s.assignments.set_index("line_id")
    assert a.loc[lid, "label"] == "R(3)" and not a.loc[lid, "outlier"]
    assert a.loc[_line(s, "R(3)", H37), "label"] == "R(3)"
    both = a["label"].notna() & auto["label"].notna()
    assert (a.loc[both, "isotopologue"] == auto.loc[both, "isotopologue"]).all()
    # the record: constants moved by thousands of their standard errors, said and warned
    assert "WARNING" in step.summary and "σ" in step.summary and "DOUBTFUL" in step.summary
    shifts = {(d["isotopologue"], d["name"]): d for d in step.result["constant_shifts"]}
    origin = shifts[(H35, "band_origin")]
    assert origin["after"] - origin["before"] == pytest.approx(-(10.44 + 10.14), abs=1.5)
    assert abs(origin["shift_sigma"]) > 1000  # B′ + B″ (handbook, from memory) over ~1e-4 cm-1
    assert step.result["status"] == "doubtful" and step.result["reasons"]
    assert s.assignment.status == "doubtful"
    _flag_invariant(s)
    s.save(tmp_path / "locked.json")
    assert wk.Session.load(tmp_path / "locked.json").verify().ok


def test_unlock_gives_the_automatic_assignment_back(s, tmp_path):
    auto = s.assignments.set_index("line_id")
    c0 = s.constants
    lid = _line(s, "P(3)", H37)
    s.set_assignment(lid, label="P(4)", isotopologue=H37)
    assert s.assignments.set_index("line_id").loc[lid, "label"] == "P(4)"
    s.unlock_assignment(lid)
    step = s.history[-1]
    assert step.kind == "unlock_assignment" and lid not in s.locks
    assert "WARNING" in step.summary  # moving back is as large a move
    a = s.assignments.set_index("line_id")
    pd.testing.assert_series_equal(a["label"], auto["label"])
    pd.testing.assert_frame_equal(s.constants, c0)
    with pytest.raises(wk.SessionStateError, match="not locked"):
        s.unlock_assignment(lid)
    s.save(tmp_path / "unlocked.json")
    again = wk.Session.load(tmp_path / "unlocked.json")  # rebuilt from the record
    assert again.locks == {} and again.verify().ok
    pd.testing.assert_frame_equal(again.constants, c0)


def test_a_lock_then_a_clear_never_leaves_a_large_unflagged_residual(s):
    auto = s.assignments.set_index("line_id")
    lid = _line(s, "P(1)", H37)
    s.set_assignment(lid, label="P(2)", isotopologue=H37)
    _flag_invariant(s)
    other = _line(s, "R(1)", H35)
    s.clear_assignment(other)
    step = s.history[-1]
    assert step.kind == "clear_assignment" and "moved" in step.summary
    a = s.assignments.set_index("line_id")
    assert pd.isna(a.loc[other, "label"])
    # no strong 35Cl line becomes 37Cl (nor the reverse) on the way
    both = a["label"].notna() & auto["label"].notna()
    assert (a.loc[both, "isotopologue"] == auto.loc[both, "isotopologue"]).all()
    _flag_invariant(s)


def test_a_small_edit_moves_the_constants_little_and_says_so(s):
    s.clear_assignment(_line(s, "P(6)", H35))
    step = s.history[-1]
    assert "WARNING" not in step.summary and "constants moved by at most" in step.summary
    top = step.result["constant_shifts"][0]
    assert abs(top["shift_sigma"]) < 3


def test_a_lock_without_its_isotopologue_is_refused_and_changes_nothing(s):
    n, before = len(s.history), s.assignments
    lid = _line(s, "P(1)", H37)
    with pytest.raises(wk.AssignmentError, match="ambiguous lock") as err:
        s.set_assignment(lid, label="P(2)")
    assert H35 in str(err.value) and H37 in str(err.value)
    assert len(s.history) == n and s.assignments.equals(before)


def test_with_one_isotopologue_assigned_a_lock_names_it_itself():
    # only H35Cl in the data, HCl (two isotopologues) asked for: the assignment holds one
    sp = wk.simulate.rovibrational(wk.Diatomic("1H", "35Cl"), wk.simulate.HANDBOOK["1H-35Cl"],
                                   x_range=(2780, 3020), step=0.05, seed=3, noise=0.002,
                                   lorentz_hwhm=0.2, resolution=0.5)
    s = wk.Session(sp)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="lorentzian")
    s.assign_band("HCl")
    lid = _line(s, "R(1)", H35)
    s.set_assignment(lid, label="R(2)")
    assert s.history[-1].params == {"line_id": lid, "labels": {"label": "R(2)"}}  # as given
    assert s.locks[lid] == {"label": "R(2)", "isotopologue": H35}
    assert s.history[-1].result["locks"][str(lid)]["isotopologue"] == H35


def test_the_status_is_in_the_assign_step_result(s):
    step = s.history[-1]
    assert step.kind == "assign_band"
    assert step.result["status"] == "ok" and step.result["reasons"] == []
    assert "DOUBTFUL" not in step.summary


def test_a_raman_spectrum_is_refused_before_anything_changes():
    x = np.linspace(2800.0, 3000.0, 2001)
    rng = np.random.default_rng(2)
    y = sum(np.exp(-0.5 * ((x - c) / 0.3) ** 2) for c in np.arange(2810.0, 2990.0, 20.0))
    y = y + rng.normal(0.0, 0.01, x.size)
    sp = wk.Spectrum(x, y, y_kind="intensity", meta={"technique": "raman"})  # invented lines
    s = wk.Session(sp)
    s.find_peaks(min_snr=5)
    s.fit_lines(shape="gaussian")
    n = len(s.history)
    with pytest.raises(wk.AssignmentError, match="Raman spectrum"):
        s.assign_band("HCl")
    assert len(s.history) == n and s.assignment is None
