"""Fast reopen: Session.load rebuilds the recorded states from the record (StepKind.restore)
instead of fitting again; verify still runs every step. The band is simulated (conftest:
demo data, self-consistency only): every comparison here is of the session with itself."""

import json

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.session import records
from widgetkit.session.steps import StepKind


def _live(path):
    """The same session with every step computed (the record's own results ignored)."""
    s = wk.Session.load(path)
    return [s.state_at(i) for i in range(len(s.history))], s


def _no_computation(monkeypatch):
    import widgetkit.levels as levels
    import widgetkit.lines as lines

    def refuse(*args, **kwargs):
        raise AssertionError("reopening ran a fit or an assignment")

    monkeypatch.setattr(lines, "fit", refuse)
    monkeypatch.setattr(levels, "assign_rovibrational", refuse)
    monkeypatch.setattr(levels, "assign_progression", refuse)


def test_reopening_runs_no_fit_and_no_assignment(hcl_saved, monkeypatch):
    _no_computation(monkeypatch)
    s = wk.Session.load(hcl_saved)
    assert s.line_fit.restored and s.assignment.restored
    assert len(s.lines) > 20 and s.assignments["label"].notna().sum() > 20


def test_reopening_subtracts_the_recorded_baseline_without_computing_it(session, tmp_path,
                                                                        monkeypatch):
    import widgetkit.processing as processing

    session.subtract_baseline("als", lam=1e5, p=0.01)
    session.save(tmp_path / "s.json")
    monkeypatch.setattr(processing, "subtract_baseline",
                        lambda *a, **k: (_ for _ in ()).throw(AssertionError("computed")))
    again = wk.Session.load(tmp_path / "s.json")
    assert again.spectrum == session.spectrum  # bit for bit
    np.testing.assert_array_equal(again.baseline, session.baseline)


def test_restored_tables_equal_the_computed_ones_with_their_dtypes(hcl_saved):
    s = wk.Session.load(hcl_saved)
    fit, assignment = s.line_fit.real(), s.assignment.real()  # computed on demand
    assert not isinstance(fit, records.Restored)
    pd.testing.assert_frame_equal(s.lines, fit.table)
    pd.testing.assert_frame_equal(s.assignments, assignment.assignments)
    # s.constants adds the column method ("line positions" for an assignment's constants)
    assert set(s.constants["method"]) == {"line positions"}
    pd.testing.assert_frame_equal(s.constants.drop(columns="method"), assignment.constants)
    for key, table in assignment.covariance.items():
        pd.testing.assert_frame_equal(s.assignment.covariance[key], table)
    assert s.assignment.messages == assignment.messages and s.assignment.band == (1, 0)


def test_restored_model_curves_equal_the_fitted_ones(hcl_saved):
    s = wk.Session.load(hcl_saved)
    restored = s.line_fit
    fitted = wk.Session.load(hcl_saved).line_fit.real()
    assert restored.flags == fitted.flags and restored.spec == fitted.spec
    for name in ("x", "model_y", "baseline_y", "residual", "components"):
        # far below the noise: the fit fixed its windows from its last pass (lines/record.py)
        np.testing.assert_allclose(getattr(restored, name), getattr(fitted, name),
                                   rtol=0, atol=1e-6 * fitted.noise)


def test_the_lmfit_result_of_a_reopened_fit_is_computed_when_asked_for(hcl_saved):
    s = wk.Session.load(hcl_saved)
    result = s.fit_result
    assert result is not None and hasattr(result, "params") and result.nfree > 0


def test_restored_results_are_read_only(hcl):
    with pytest.raises(AttributeError, match="read-only"):
        hcl.line_fit.table = None


def test_verify_still_runs_every_step(hcl_saved, monkeypatch):
    s = wk.Session.load(hcl_saved)
    _no_computation(monkeypatch)
    report = s.verify()
    assert not report.ok
    assert "step 2 (fit_lines): replay failed: AssertionError: 'reopening ran a fit" in \
        report.mismatches[0]


def test_editing_after_reopening_works_on_the_restored_fit(hcl):
    a = hcl.assignments
    r1 = int(a.loc[(a["label"] == "R(1)") & (a["isotopologue"] == "1H-35Cl"), "line_id"].iloc[0])
    hcl.clear_assignment(r1)
    assert hcl.locks == {r1: {}} and not isinstance(hcl.assignment, records.Restored)
    assert pd.isna(hcl.assignments.set_index("line_id").loc[r1, "label"])
    hcl.undo()
    assert hcl.assignment.restored


def test_a_record_that_does_not_fit_its_state_is_computed_and_reported(hcl_saved, tmp_path):
    doc = json.loads(hcl_saved.read_text())
    fit_step = doc["steps"][2]
    fit_step["result"]["record"]["fields"]["spec"]["positions"][0] += 0.5  # damaged record
    path = tmp_path / "damaged.json"
    path.write_text(json.dumps(doc))
    s = wk.Session.load(path)
    assert not getattr(s.line_fit, "restored", False)  # computed, not taken from the record
    report = s.verify()
    assert not report.ok
    assert any(m.startswith("step 2 (fit_lines)") and "computed again" in m
               for m in report.mismatches)


def test_a_changed_summary_is_a_mismatch(hcl_saved, tmp_path):
    doc = json.loads(hcl_saved.read_text())
    doc["steps"][1]["summary"] = "found 99 peaks"
    path = tmp_path / "summary.json"
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert any(m.startswith("step 1 (find_peaks) summary: recorded 'found 99 peaks'")
               for m in report.mismatches)


def test_the_default_restore_runs_apply():
    calls = []

    class Probe(StepKind):
        kind = "probe_restore"

        def apply(self, state, params, ctx):
            calls.append(params)
            return state, {}, "probe"

    assert Probe().restore("state", {"a": 1}, {}, None) == "state" and calls == [{"a": 1}]


@pytest.mark.parametrize("table", [
    pd.DataFrame({"i": [1, 2], "f": [0.5, np.nan], "s": ["a", None], "b": [True, False],
                  "I": pd.array([3, None], dtype="Int64"), "o": [None, [1, 2]]}),
    pd.DataFrame({"x": [1.0, 2.0]}, index=["first", "second"]),
    pd.DataFrame({"f": pd.Series([], dtype="float64"), "i": pd.Series([], dtype="int64")}),
])
def test_tables_survive_the_record_with_their_column_types(table):
    again = records.decode(json.loads(json.dumps(records.encode(table))))
    assert records.table_kinds(again) == records.table_kinds(table)
    pd.testing.assert_frame_equal(again, table, check_dtype=False, check_index_type=False)
    assert [str(t) for t in again.dtypes[[c for c in table if c != "o"]]] == \
        [str(t) for t in table.dtypes[[c for c in table if c != "o"]]]


def test_values_survive_the_record():
    value = {"flags": {3: ("below noise",), "fit": ("chi-square high",)}, "nan": float("nan"),
             "$odd": [1, (2, 3)]}
    again = records.decode(json.loads(json.dumps(records.encode(value))))
    assert again["flags"] == value["flags"] and again["$odd"] == [1, (2, 3)]
    assert np.isnan(again["nan"])


def test_a_record_naming_an_unknown_type_is_refused():
    with pytest.raises(wk.SessionFormatError, match="result type 'os:system'"):
        records.result_type("os:system")


def test_reopening_in_a_fresh_process_imports_no_fitting_validation_or_assignment_code(hcl_saved):
    import subprocess
    import sys

    code = ("import sys, widgetkit as wk; s = wk.Session.load(sys.argv[1]); s.lines; "
            "s.constants; s.peaks; "
            "heavy = [m for m in ('lmfit', 'scipy', 'jsonschema', 'widgetkit.levels', "
            "'widgetkit.processing', 'widgetkit.lines.fitting', 'matplotlib', 'ipywidgets') "
            "if m in sys.modules]; print(','.join(heavy))")
    run = subprocess.run([sys.executable, "-c", code, str(hcl_saved)], capture_output=True,
                         text=True, timeout=120)
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip() == ""


def test_a_record_of_a_fit_too_large_to_hold_is_refused_on_reopening(hcl_saved, monkeypatch):
    from widgetkit.session import kinds_lines

    s = wk.Session.load(hcl_saved)
    cells = len(s.lines) * len(s.spectrum.x)
    monkeypatch.setattr(kinds_lines, "MAX_FIT_CELLS", cells - 1)  # as if the file held more
    with pytest.raises(wk.SessionFormatError,
                       match=r"step 2 \(fit_lines\) cannot be reopened: .*more than one fit can "
                             "hold"):
        wk.Session.load(hcl_saved)


def test_restored_results_pickle_and_copy_as_the_real_ones(hcl):
    import copy
    import pickle

    again = pickle.loads(pickle.dumps(hcl.assignment))
    assert not isinstance(again, records.Restored)
    pd.testing.assert_frame_equal(again.constants, hcl.assignment.constants)
    fit = copy.deepcopy(hcl.line_fit)
    pd.testing.assert_frame_equal(fit.table, hcl.lines)


def test_opening_a_file_is_bounded_in_recomputation_and_in_memory(hcl_saved, tmp_path,
                                                                  monkeypatch):
    from widgetkit.session import persist

    doc = json.loads(hcl_saved.read_text())
    doc["steps"][2]["result"]["record"] = 5  # one damaged record: computed instead
    path = tmp_path / "damaged.json"
    path.write_text(json.dumps(doc))
    monkeypatch.setattr(persist, "MAX_RECOMPUTED", 0)
    with pytest.raises(wk.SessionFormatError, match="records of more than 0 steps do not fit"):
        wk.Session.load(path)
    monkeypatch.setattr(persist, "MAX_RECOMPUTED", 20)
    assert wk.Session.load(path).line_fit is not None
    monkeypatch.setattr(persist, "MAX_STATE_POINTS", 1000)  # the spectrum alone holds 7001
    with pytest.raises(wk.SessionFormatError, match=r"step 0 \(load\): .*more than 1,000 points"):
        wk.Session.load(hcl_saved)
