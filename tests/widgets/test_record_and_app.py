"""The Record panel and the combined app: history, notes, stepping through, save, reopen, verify."""

import json

import numpy as np

import widgetkit as wk
from widgetkit.widgets import AnalysisApp, PeaksPanel, RecordPanel, SpectrumPanel


def _with_peaks(session):
    session.find_peaks(min_snr=10.0)
    session.add_peak(2854.0, snap=False)  # between P(1) and P(2): a place no peak holds
    return session


def test_the_history_lists_every_step_with_time_parameters_and_summary(session):
    record = RecordPanel(_with_peaks(session))
    table = record.history_table.value
    for step in session.history:
        shown = wk.formatting.summary_text(step.summary)   # cm⁻¹, as every panel writes it
        assert step.kind in table and shown.split(" (")[0] in table
    assert "min_snr=10.0" in table
    assert record.step_slider.max == len(session.history) - 1


def test_a_note_is_added_to_the_record(session):
    record = RecordPanel(session)
    record.note_text.value = "cell filled from cylinder B; purge checked"
    record.note_button.click()
    assert session.history[-1].kind == "note"
    assert session.history[-1].params == {"text": "cell filled from cylinder B; purge checked"}
    assert record.note_text.value == ""
    assert "cylinder B" in record.history_table.value


def test_an_empty_note_is_refused(session):
    record = RecordPanel(session)
    record.note_button.click()
    assert len(session.history) == 1 and "type the text" in record.status.value


def test_stepping_back_shows_the_earlier_state_in_every_panel_and_forward_returns(session):
    _with_peaks(session)
    record, peaks = RecordPanel(session), PeaksPanel(session)
    n_all = peaks.markers.x.size
    record.back_button.click()  # the state after find_peaks: one peak fewer
    assert session.viewing == 1
    assert peaks.markers.x.size == n_all - 1
    assert peaks.find_button.disabled and peaks.add_button.disabled  # read-only walk-through
    assert "wk-current" in record.history_table.value
    record.back_button.click()
    assert session.viewing == 0 and peaks.markers.x.size == 0
    assert record.back_button.disabled
    record.forward_button.click()
    assert session.viewing == 1
    record.latest_button.click()
    assert session.viewing == 2 and peaks.markers.x.size == n_all
    assert not peaks.find_button.disabled


def test_the_step_slider_jumps_to_a_step(session):
    _with_peaks(session)
    record = RecordPanel(session)
    record.step_slider.value = 0
    assert session.viewing == 0
    record.step_slider.value = 2
    assert session.viewing == 2


def test_undo_drops_the_last_step_everywhere(session):
    _with_peaks(session)
    record, peaks = RecordPanel(session), PeaksPanel(session)
    n = peaks.markers.x.size
    record.undo_button.click()
    assert len(session.history) == 2 and peaks.markers.x.size == n - 1
    assert "add_peak" not in record.history_table.value


def test_save_writes_the_steps_taken_with_the_mouse_and_reopen_shows_them(tmp_path, session,
                                                                          browser_side):
    app = AnalysisApp(session)
    app.peaks_panel.min_snr.value = 10.0
    app.peaks_panel.find_button.click()
    browser_side.update(app.peaks_panel.markers,
                        x=np.append(app.peaks_panel.markers.x, 2854.0),
                        y=np.append(app.peaks_panel.markers.y, 0.1))
    app.record_panel.note_text.value = "demo run"
    app.record_panel.note_button.click()
    path = tmp_path / "run.session.json"
    app.record_panel.save_path.value = str(path)
    app.record_panel.save_button.click()
    doc = json.loads(path.read_text())
    assert [s["kind"] for s in doc["steps"]] == ["load", "find_peaks", "add_peak", "note"]
    assert doc["steps"][2]["params"] == {"position": 2854.0, "snap": True}

    other = AnalysisApp(wk.Session(session.source_spectrum))
    other.record_panel.save_path.value = str(path)
    other.record_panel.open_button.click()
    reopened = other.session
    assert reopened is not None and len(reopened.history) == 4
    # every panel of the app switched to the reopened session
    assert all(p.session is reopened for p in other.panels)
    assert other.peaks_panel.markers.x.size == len(session.peaks)
    other.record_panel.verify_button.click()
    assert "all steps replay" in other.record_panel.verify_report.value


def test_verify_lists_the_mismatches_of_a_tampered_file(tmp_path, session):
    record = RecordPanel(_with_peaks(session))
    path = tmp_path / "run.session.json"
    session.save(path)
    doc = json.loads(path.read_text())
    doc["steps"][1]["result"]["noise"] *= 2.0  # tampered after saving
    path.write_text(json.dumps(doc))
    record.save_path.value = str(path)
    record.open_button.click()
    record.verify_button.click()
    assert "wk-verify-bad" in record.verify_report.value
    assert "noise" in record.verify_report.value


def test_reopening_a_missing_file_is_reported(tmp_path, session):
    record = RecordPanel(session)
    record.save_path.value = str(tmp_path / "nothing.json")
    record.open_button.click()
    assert "wk-status-error" in record.status.value and record.session is session


def test_a_panel_alone_follows_changes_made_elsewhere(session):
    # e.g. PeaksPanel(session) in one cell and session.find_peaks() in another
    panel = PeaksPanel(session)
    session.find_peaks(min_snr=10.0)
    assert panel.markers.x.size == len(session.peaks) > 0


def test_a_closed_panel_stops_listening(session):
    panel = SpectrumPanel(session)
    panel.close()
    session.find_peaks(min_snr=10.0)  # would fail if a closed widget were still rendered
    assert len(session.history) == 2


def test_the_app_shows_all_panels_as_tabs_on_one_session(session):
    app = AnalysisApp(session)
    assert [app.tabs.get_title(i) for i in range(6)] == ["Spectrum", "Peaks", "Lines", "Levels",
                                                          "Band model", "Record"]
    assert all(p.session is session for p in app.panels)
    app.spectrum_panel.crop_lo.value, app.spectrum_panel.crop_hi.value = 2800.0, 3000.0
    app.spectrum_panel.crop_button.click()
    for panel in (app.peaks_panel, app.lines_panel):
        xs = np.asarray(panel.plot.curve("data").x, dtype=float)
        assert xs.min() >= 2799.9 and xs.max() <= 3000.1
    assert "crop" in app.record_panel.history_table.value


def test_a_read_only_app_walks_through_the_record_but_changes_nothing(session):
    _with_peaks(session)
    app = AnalysisApp(session, read_only=True)
    for button in (app.peaks_panel.find_button, app.lines_panel.fit_button,
                   app.levels_panel.assign_button, app.spectrum_panel.crop_button,
                   app.record_panel.note_button, app.record_panel.save_button,
                   app.spectrum_panel.open_button):
        assert button.disabled
    app.record_panel.back_button.click()  # stepping through still works
    assert session.viewing == 1
    assert app.peaks_panel.markers.x.size == len(session.peaks)
    app.record_panel.latest_button.click()
    assert app.peaks_panel.find_button.disabled  # still read-only at the end


def test_the_axis_direction_check_box_turns_every_spectrum_plot_of_the_app(session):
    app = AnalysisApp(session)
    assert app.peaks_panel.plot.x_scale.reverse is True  # absorbance: high to low
    app.spectrum_panel.high_to_low.value = False
    assert app.peaks_panel.plot.x_scale.reverse is False
    assert app.lines_panel.plot.x_scale.reverse is False


def test_the_chosen_axis_direction_survives_a_crop(session):
    app = AnalysisApp(session)
    app.spectrum_panel.high_to_low.value = False
    session.crop(2800.0, 3000.0)
    assert app.peaks_panel.plot.x_scale.reverse is False
    assert app.spectrum_panel.plot.x_scale.reverse is False
