"""Every argument is checked before anything is computed: a bad one raises a WidgetkitError
(also a built-in) naming the argument and the value, and the session is unchanged."""

import math

import pandas as pd
import pytest

import widgetkit as wk


def _unchanged(s, call, error, words):
    n, peaks = len(s.history), s.peaks
    with pytest.raises(error) as info:
        call(s)
    assert isinstance(info.value, wk.WidgetkitError)
    assert words in str(info.value), str(info.value)
    assert len(s.history) == n
    pd.testing.assert_frame_equal(s.peaks, peaks)
    return str(info.value)


@pytest.mark.parametrize("call, error, words", [
    (lambda s: s.crop("a", 3000), wk.ProcessingError,
     "crop: argument 'lo' must be a number in cm-1, got 'a' (str)"),
    (lambda s: s.crop(math.nan, 3000), wk.ProcessingError,
     "argument 'lo' must be a finite number, got nan"),
    (lambda s: s.add_peak(None), wk.ProcessingError,
     "add_peak: argument 'position' must be a number in cm-1, got None"),
    (lambda s: s.add_peak(2900.0, snap="yes"), wk.ProcessingError,
     "argument 'snap' must be True or False, got 'yes'"),
    (lambda s: s.remove_peak(1.7), wk.ProcessingError,
     "remove_peak: argument 'peak_id' must be a whole number, got 1.7"),
    (lambda s: s.find_peaks(min_snr=math.nan), wk.ProcessingError,
     "argument 'min_snr' must be a finite number, got nan"),
    (lambda s: s.find_peaks(min_snr=-2), wk.ProcessingError,
     "argument 'min_snr' must be a number above 0, got -2.0"),
    (lambda s: s.subtract_baseline("als", degree=2), wk.ProcessingError,
     "argument 'degree' is not an option of the 'als' baseline (its options: lam, p, max_iter)"),
    (lambda s: s.subtract_baseline("spline"), wk.ProcessingError,
     "argument 'method' must be one of 'poly', 'als', got 'spline'"),
    (lambda s: s.fit_lines(region=(1,)), wk.FitError,
     "fit_lines: argument 'region' must be a pair (lo, hi) in cm-1, got (1,) (tuple)"),
    (lambda s: s.fit_lines(bogus=1), wk.FitError,
     "fit_lines: argument 'bogus' is not a parameter of this step"),
    (lambda s: s.fit_lines(shape="voight"), wk.FitError,
     "argument 'shape' must be one of 'gaussian', 'lorentzian', 'voigt', 'pseudo_voigt'"),
    (lambda s: s.fit_lines(conf_interval=[f"l{i}_area" for i in range(36)]), wk.FitError,
     "argument 'conf_interval' must name at most 8 items, got 36"),
    (lambda s: s.fit_lines(constraints={"l1_area": "9**9**9"}), wk.FitError,
     "argument 'constraints.l1_area'"),
    (lambda s: s.fit_lines(constraints={"l1_area": "l2_area / 0"}), wk.FitError,
     "divides by zero"),
    (lambda s: s.fit_lines(constraints={"l1_area": "+".join(["l2_area"] * 200_000)}), wk.FitError,
     "holds a string of 1,599,999 characters"),
    (lambda s: s.fit_lines(constraints={"l1_area": "+".join(["l2_area"] * 500)}), wk.FitError,
     "is 3,999 characters long (at most 2,000)"),
    (lambda s: s.fit_lines(constraints={"l1_area": "l2_area * (-8) ** 0.5"}), wk.FitError,
     "cannot be evaluated"),
    (lambda s: s.fit_lines(constraints={"l1_area": "l2_area ** 0.5 ** -200"}), wk.FitError,
     "exponents are limited"),
    (lambda s: s.assign_band(wk.Diatomic("H", "Cl").to_dict() | {"min_abundance": -0.1}),
     wk.AssignmentError, "argument 'molecule.min_abundance' must be a number of at least 0"),
    (lambda s: s.assign_band("HCl", temperature="hot"), wk.AssignmentError,
     "argument 'temperature' must be a number in K, got 'hot'"),
    (lambda s: s.assign_band("HCl", band=(1, 1)), wk.AssignmentError,
     "argument 'band' must be (v_upper, v_lower)"),
    (lambda s: s.set_assignment("x", label="R(0)"), wk.AssignmentError,
     "argument 'line_id' must be a whole number, got 'x'"),
    (lambda s: s.set_assignment(1, label=7), wk.AssignmentError,
     "argument 'labels.label' must be a string, got 7"),
    (lambda s: s.set_assignment(1, branch="R"), wk.AssignmentError,
     "argument 'labels.branch' is not a label"),
    (lambda s: s.set_assignments({1.5: {"label": "R(0)"}}), wk.AssignmentError,
     "argument 'assignments.1.5' must be a whole number"),
    (lambda s: s.clear_assignment(None), wk.AssignmentError,
     "clear_assignment: argument 'line_id' must be a whole number, got None"),
    (lambda s: s.note(None), wk.SessionStateError, "note: argument 'text' must be a string"),
])
def test_a_bad_argument_is_named_with_its_value_and_changes_nothing(session, call, error, words):
    session.find_peaks(min_snr=10)
    message = _unchanged(session, call, error, words)
    assert len(message) < 400  # a value is never dumped


def test_replay_with_refuses_an_unknown_parameter_before_running_anything(session):
    session.crop(2750, 3050)
    session.find_peaks(min_snr=10)
    with pytest.raises(wk.ProcessingError,
                       match=r"replay_with: step 2 \(find_peaks\) parameter 'bogus' is not a "):
        session.replay_with(2, bogus=1)
    with pytest.raises(wk.ProcessingError, match="'min_snr' must be a number above 0"):
        session.replay_with(2, min_snr=0)
    changed = session.replay_with(2, min_snr=20.0)
    assert changed.history[2].params["min_snr"] == 20.0


def test_numbers_are_recorded_as_given_but_normalised(session):
    import numpy as np

    session.crop(np.int64(2750), 3050)
    assert session.history[-1].params == {"lo": 2750.0, "hi": 3050.0}
    assert all(type(v) is float for v in session.history[-1].params.values())


def test_a_constraint_that_fails_during_the_fit_is_a_fit_error(session):
    session.find_peaks(min_snr=10)
    ids = list(session.peaks["peak_id"])
    a, b, c = (f"l{i}_area" for i in ids)
    with pytest.raises(wk.FitError):
        session.fit_lines(shape="gaussian", constraints={a: f"{b} / ({c} - {c})"})
    assert session.line_fit is None
