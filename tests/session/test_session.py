import json

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.session import codec


def analysed(session):
    session.crop(2750, 3050)
    session.subtract_baseline("poly", degree=1)
    session.find_peaks(min_snr=10)
    session.note("three lines seen")
    return session


def test_every_change_appends_one_step_with_kind_params_time_summary_and_versions(session):
    analysed(session)
    kinds = [s.kind for s in session.history]
    assert kinds == ["load", "crop", "subtract_baseline", "find_peaks", "note"]
    crop = session.history[1]
    assert crop.params == {"lo": 2750.0, "hi": 3050.0}
    assert crop.at.endswith("+00:00") and "T" in crop.at
    assert "cropped" in crop.summary
    assert set(crop.software) >= {"python", "numpy", "widgetkit"}


def test_find_peaks_finds_the_three_lines_with_stable_ids(session):
    peaks = analysed(session).peaks
    assert list(peaks["peak_id"]) == [1, 2, 3]
    # positions of the invented lines this fixture was built with (self-consistency)
    np.testing.assert_allclose(peaks["position"], [2800, 2900, 3000], atol=0.1)


def test_add_and_remove_peak_edit_the_table_and_undo_restores_it(session):
    analysed(session)
    pid = session.add_peak(2851.0, snap=False)
    assert pid == 4 and 4 in set(session.peaks["peak_id"])
    session.remove_peak(2)
    assert set(session.peaks["peak_id"]) == {1, 3, 4}
    session.undo()
    assert set(session.peaks["peak_id"]) == {1, 2, 3, 4}
    assert session.history[-1].kind == "add_peak"


def test_a_failing_step_leaves_the_session_unchanged(session):
    analysed(session)
    before = (len(session.history), session.peaks.copy())
    with pytest.raises(wk.WidgetkitError, match="no peak with peak_id 99"):
        session.remove_peak(99)
    with pytest.raises(ValueError):
        session.crop(5000, 6000)
    assert len(session.history) == before[0]
    pd.testing.assert_frame_equal(session.peaks, before[1])


def test_the_load_step_cannot_be_undone(session):
    with pytest.raises(wk.SessionStateError, match="nothing to undo"):
        session.undo()


def test_parameters_that_are_not_plain_data_are_refused(session):
    with pytest.raises(wk.ProcessingError, match="argument 'degree' must be a whole number"):
        session.subtract_baseline("poly", degree=object())
    with pytest.raises(wk.FitError, match="argument 'constraints.l1_area' must be plain data"):
        session.fit_lines(constraints={"l1_area": object()})
    assert len(session.history) == 1


def test_save_and_load_round_trip_keeps_the_record_and_the_state(session, tmp_path):
    analysed(session)
    path = tmp_path / "s.json"
    session.save(path)
    doc = json.loads(path.read_text())
    assert doc["format"] == "widgetkit-session" and doc["version"] == 1
    data = doc["sources"][0]["data"]
    assert data["x"]["dtype"] == "<f8" and data["x"]["shape"] == [4001]
    again = wk.Session.load(path)
    assert [s.to_json() for s in again.history] == [s.to_json() for s in session.history]
    pd.testing.assert_frame_equal(again.peaks, session.peaks)
    assert again.spectrum == session.spectrum


def test_verify_passes_on_an_untouched_file(session, tmp_path):
    analysed(session).save(tmp_path / "s.json")
    report = wk.Session.load(tmp_path / "s.json").verify()
    assert report.ok and report.mismatches == [] and report.steps_checked == 5


def _tamper(path, edit):
    doc = json.loads(path.read_text())
    edit(doc)
    path.write_text(json.dumps(doc))


def test_verify_names_the_step_and_field_when_a_parameter_was_changed(session, tmp_path):
    path = tmp_path / "s.json"
    analysed(session).save(path)
    _tamper(path, lambda d: d["steps"][1]["params"].update(lo=2760.0))
    report = wk.Session.load(path).verify()
    assert not report.ok
    assert any(m.startswith("step 1 (crop) result.x_min") for m in report.mismatches)


def test_verify_names_the_step_when_a_recorded_result_was_changed(session, tmp_path):
    path = tmp_path / "s.json"
    analysed(session).save(path)
    _tamper(path, lambda d: d["steps"][3]["result"]["peaks"]["position"].__setitem__(1, 2901.0))
    report = wk.Session.load(path).verify()
    assert not report.ok
    assert any("step 3 (find_peaks) result.peaks.position[1]" in m for m in report.mismatches)


def test_verify_reports_changed_source_data_by_its_sha256(session, tmp_path):
    path = tmp_path / "s.json"
    analysed(session).save(path)

    def edit(d):
        arr = d["sources"][0]["data"]["y"]
        y, _ = codec.decode_array(arr, where="test")
        y[100] += 0.5
        arr["data"] = codec.encode_array(y)["data"]  # keep the old sha256

    _tamper(path, edit)
    report = wk.Session.load(path).verify()
    assert not report.ok
    assert any("source src1 field data.y" in m and "sha256" in m for m in report.mismatches)


def test_a_newer_file_version_is_refused_naming_both_versions(session, tmp_path):
    path = tmp_path / "s.json"
    session.save(path)
    _tamper(path, lambda d: d.update(version=7))
    with pytest.raises(wk.SessionFormatError, match="version 7.*up to 1"):
        wk.Session.load(path)


def test_a_file_that_fails_the_schema_is_refused_naming_the_field(session, tmp_path):
    path = tmp_path / "s.json"
    session.save(path)
    _tamper(path, lambda d: d["steps"][0].pop("params"))
    with pytest.raises(wk.SessionFormatError, match="steps/0"):
        wk.Session.load(path)


def test_invalid_json_is_refused_with_its_line(tmp_path):
    path = tmp_path / "bad.json"
    path.write_text('{"format": "widgetkit-session",\n "version": 1,\n oops}')
    with pytest.raises(wk.SessionFormatError, match="line 3"):
        wk.Session.load(path)


def test_older_versions_load_through_the_ordered_migrations(session, tmp_path, monkeypatch):
    path = tmp_path / "s.json"
    session.save(path)
    schema_v1 = codec._schema(1)
    schema_v2 = json.loads(json.dumps(schema_v1))
    schema_v2["properties"]["version"] = {"const": 2}
    schema_v2["properties"]["renamed_note"] = {"type": "string"}

    def v1_to_v2(doc):
        doc["renamed_note"] = "migrated"
        return doc

    monkeypatch.setattr(codec, "VERSION", 2)
    monkeypatch.setattr(codec, "MIGRATIONS", [v1_to_v2])
    monkeypatch.setattr(codec, "_schema", lambda v: schema_v2)
    doc = codec.read_document(path)
    assert doc["version"] == 2 and doc["renamed_note"] == "migrated"
    assert wk.Session.load(path).history[0].kind == "load"


def test_a_failed_save_leaves_the_previous_file_untouched(session, tmp_path, monkeypatch):
    path = tmp_path / "s.json"
    session.save(path)
    before = path.read_bytes()
    session.note("more work")

    def broken_replace(src, dst):
        raise OSError("disk full (injected)")

    monkeypatch.setattr(codec.os, "replace", broken_replace)
    with pytest.raises(OSError, match="injected"):
        session.save(path)
    assert path.read_bytes() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["s.json"]  # no temporary left behind


def test_observers_hear_each_change_once_and_in_order_even_when_they_change_the_session(session):
    heard = []

    def first(s, event):
        heard.append(("first", event.kind, event.step.kind))
        if event.step.kind == "crop":
            s.note("noted from an observer")  # re-entrant change: queued, not nested

    def second(s, event):
        heard.append(("second", event.kind, event.step.kind))

    session.subscribe(first)
    session.subscribe(second)
    session.crop(2750, 3050)
    assert heard == [("first", "step", "crop"), ("second", "step", "crop"),
                     ("first", "step", "note"), ("second", "step", "note")]
    session.unsubscribe(first)
    session.undo()
    assert heard[-1] == ("second", "undo", "note")


def test_viewing_an_earlier_step_shows_its_state_and_blocks_changes(session):
    analysed(session)
    session.view(1)
    assert session.viewing == 1 and len(session.peaks) == 0
    assert session.spectrum.x[0] >= 2750
    with pytest.raises(wk.SessionStateError, match="view_latest"):
        session.find_peaks()
    session.view_latest()
    assert len(session.peaks) == 3


def test_a_session_saved_without_data_rereads_the_file_and_detects_a_changed_file(tmp_path):
    src = tmp_path / "band.csv"
    x = np.linspace(1000, 1100, 201)
    y = np.exp(-0.5 * ((x - 1050) / 2.0) ** 2)
    src.write_text("wavenumber (cm-1),absorbance\n"
                   + "\n".join(f"{float(a)!r},{float(b)!r}" for a, b in zip(x, y)))
    s = wk.Session.from_file(src)
    s.find_peaks(min_snr=5)
    path = tmp_path / "s.json"
    s.save(path, embed=False)
    assert json.loads(path.read_text())["sources"][0]["data"] is None
    assert wk.Session.load(path).verify().ok
    src.write_text(src.read_text().replace("wavenumber", "Wavenumber"))
    report = wk.Session.load(path).verify()
    assert not report.ok and any("sha256" in m for m in report.mismatches)
