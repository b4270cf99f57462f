"""Recipes: which steps a session's recipe keeps, how ids become positions, the file."""

import json

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.session.recipe import Recipe

from .simulated import HCL, simulate, work_out


def _line_at(session, label, iso="1H-35Cl") -> int:
    a = session.assignments
    return int(a.loc[(a["isotopologue"] == iso) & (a["label"] == label), "line_id"].iloc[0])


def test_a_recipe_holds_the_steps_after_loading_as_recorded(reference, recipe):
    kinds = [s.kind for s in recipe.steps]
    assert kinds == ["subtract_baseline", "find_peaks", "fit_lines", "assign_band"]
    assert recipe.steps[1].params == reference.history[2].params  # exactly as recorded
    assert recipe.read_options == reference.sources[0]["read_options"]
    assert recipe.reference["sha256"] == reference.sources[0]["sha256"]
    assert len(recipe.reference["lines"]["position"]) == len(reference.lines)


def test_notes_replaced_steps_and_stale_peak_edits_are_left_out():
    s = wk.Session(simulate(300.0, 1))
    s.subtract_baseline("poly", degree=2)
    s.note("first try")
    s.find_peaks(min_snr=5)
    s.add_peak(2700.0, snap=False)
    s.find_peaks(min_snr=10)          # replaces the table: the earlier edit no longer applies
    s.fit_lines(shape="gaussian")
    s.fit_lines(shape="voigt", shared_width=True)   # replaces the previous fit entirely
    kinds = [st.kind for st in s.recipe().steps]
    assert kinds == ["subtract_baseline", "find_peaks", "fit_lines"]
    assert s.recipe().steps[-1].params["shape"] == "voigt"


def test_only_locks_the_final_state_still_holds_are_kept():
    s = work_out(simulate(300.0, 2))
    r3, r4 = _line_at(s, "R(3)"), _line_at(s, "R(4)")
    s.set_assignment(r3, isotopologue="1H-35Cl")                 # a first lock ...
    s.set_assignment(r3, isotopologue="1H-35Cl", label="R(3)")   # ... replaced by a fuller one
    s.clear_assignment(r4)
    steps = s.recipe().steps
    locks = [st for st in steps if st.kind in ("set_assignment", "clear_assignment")]
    assert [(st.kind, st.params.get("labels")) for st in locks] == [
        ("set_assignment", {"isotopologue": "1H-35Cl", "label": "R(3)"}),
        ("clear_assignment", None)]
    anchor = locks[0].anchors[str(r3)]
    pos = float(s.lines.set_index("line_id").loc[r3, "position"])
    assert anchor["position"] == pytest.approx(pos, abs=1e-9)
    assert 0 < anchor["tolerance"] < 10.0  # at most half the distance to R(2) or R(4)


def test_a_lock_moves_to_the_line_at_the_same_place_in_another_spectrum():
    s = work_out(simulate(300.0, 3))
    r3 = _line_at(s, "R(3)")
    s.set_assignment(r3, isotopologue="1H-35Cl", label="R(3)")
    other = simulate(420.0, 4)  # hotter: more lines, so other ids
    run = s.recipe().apply(other)
    assert run.failed is None and not run.skipped
    new = run.session
    lock_step = new.history[-1]
    assert lock_step.kind == "set_assignment"
    new_id = int(lock_step.params["line_id"])
    assert new_id != r3  # ids differ between the spectra; the position decides
    pos_old = float(s.lines.set_index("line_id").loc[r3, "position"])
    pos_new = float(new.lines.set_index("line_id").loc[new_id, "position"])
    assert pos_new == pytest.approx(pos_old, abs=0.05)  # same line: R(3) of H35Cl
    assert new.verify().ok


def test_an_edit_that_does_not_apply_elsewhere_is_skipped_and_reported():
    s = work_out(simulate(300.0, 5))
    r3 = _line_at(s, "R(3)")
    s.set_assignment(r3, isotopologue="1H-35Cl", label="R(3)")
    far = simulate(300.0, 6).replace(x=simulate(300.0, 6).x - 40.0)  # every line moved 40 cm-1
    run = s.recipe().apply(far)
    assert run.failed is None
    assert len(run.skipped) == 1 and "set_assignment" in run.skipped[0]
    assert "no line within" in run.skipped[0]
    assert [st.kind for st in run.session.history][-1] == "assign_band"


def test_a_failing_step_stops_the_recipe_and_keeps_the_session_so_far(recipe):
    x = simulate(300.0, 7).x
    flat = wk.Spectrum(x, np.random.default_rng(7).normal(0.0, 0.002, x.size),
                       y_kind="absorbance")  # noise only: no band to fit
    run = recipe.apply(flat)
    assert run.failed is not None and run.failed.startswith("step ")
    assert [st.kind for st in run.session.history][0] == "load"
    failed_at = int(run.failed.split()[1])
    assert failed_at == len(run.session.history)  # numbered in the new session, load = 0


def test_a_recipe_file_round_trips_with_the_same_hash(recipe, tmp_path):
    path = tmp_path / "r.json"
    recipe.save(path)
    again = Recipe.load(path)
    assert again.sha256 == recipe.sha256
    assert again.steps == recipe.steps
    doc = json.loads(path.read_text())
    assert doc["format"] == "widgetkit-recipe"
    assert doc["version"] == wk.session.codec.VERSION  # versioned with the session format


@pytest.mark.parametrize("change, field", [
    (lambda d: d.update(format="something-else"), "format"),
    (lambda d: d.update(version=99), "version 99"),
    (lambda d: d["steps"][1].update(kind="no_such_step"), "steps/1/kind"),
    (lambda d: d["steps"][0].pop("params"), "steps/0"),
    (lambda d: d["steps"][2].update(anchors={"3": {"position": "x"}}), "steps/2/anchors"),
    (lambda d: d.update(read_options=[1]), "read_options"),
])
def test_a_bad_recipe_file_is_refused_naming_the_field(recipe, tmp_path, change, field):
    doc = recipe.to_json()
    change(doc)
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(doc))
    with pytest.raises(wk.SeriesError, match=field) as err:
        Recipe.load(path)
    assert str(path) in str(err.value)
    assert isinstance(err.value, ValueError)


def test_a_file_that_is_not_json_is_refused_with_its_line(tmp_path):
    path = tmp_path / "r.json"
    path.write_text('{"format": "widgetkit-recipe",\n  "version": }')
    with pytest.raises(wk.SeriesError, match="line 2"):
        Recipe.load(path)


def test_the_recipe_knows_its_molecule_without_the_session(recipe):
    step = recipe.steps[-1]
    assert step.kind == "assign_band"
    assert step.params["molecule"] == HCL.to_dict()
