"""Spectrum and Peaks panels driven as a user would, headless; other panels follow the session."""

import numpy as np

import widgetkit as wk
from widgetkit.widgets import LinesPanel, PeaksPanel, RecordPanel, SpectrumPanel


def test_cropping_a_brushed_region_is_a_session_step_that_every_panel_shows(session):
    spectrum, peaks = SpectrumPanel(session), PeaksPanel(session)
    spectrum.mouse_mode.value = "select"
    assert spectrum.plot.figure.interaction is spectrum.plot.brush
    brush = spectrum.plot.brush
    brush.brushing = True
    brush.selected = np.array([2950.0, 2850.0])  # as the browser sends it while dragging
    brush.brushing = False
    assert (spectrum.crop_lo.value, spectrum.crop_hi.value) == (2850.0, 2950.0)
    assert len(session.history) == 1  # selecting is view state only
    spectrum.crop_button.click()
    assert session.history[-1].kind == "crop"
    assert session.history[-1].params == {"lo": 2850.0, "hi": 2950.0}
    # the other panel re-rendered from the session: its curve lies inside the new range
    xs = np.asarray(peaks.plot.curve("data").x, dtype=float)
    assert xs.min() >= 2849.9 and xs.max() <= 2950.1


def test_the_baseline_preview_changes_nothing_until_it_is_subtracted(session):
    panel = SpectrumPanel(session)
    first = np.asarray(panel.plot.curve("baseline").y).copy()
    assert first.size > 0
    panel.baseline_degree.value = 1
    second = np.asarray(panel.plot.curve("baseline").y)
    assert not np.array_equal(first, second)
    assert len(session.history) == 1
    panel.baseline_method.value = "als"
    assert panel.baseline_box.children == (panel.baseline_lam, panel.baseline_p)
    previewed = panel.preview_baseline()
    panel.subtract_button.click()
    step = session.history[-1]
    assert step.kind == "subtract_baseline"
    assert step.params["method"] == "als" and step.params["lam"] == panel.baseline_lam.value
    # the subtracted baseline is the one previewed (self-consistency: same function, same options)
    np.testing.assert_allclose(session.baseline, previewed, rtol=1e-12)


def test_an_error_of_the_session_is_shown_in_the_status_line_and_nothing_changes(session):
    panel = SpectrumPanel(session)
    panel.crop_lo.value, panel.crop_hi.value = 5000.0, 6000.0
    panel.crop_button.click()
    assert "wk-status-error" in panel.status.value
    assert "crop" in panel.status.value and "choose a wider range" in panel.status.value
    assert isinstance(panel.last_error, wk.WidgetkitError)
    assert len(session.history) == 1


def test_the_metadata_of_the_file_and_the_axis_direction_are_shown(session):
    panel = SpectrumPanel(session)
    assert "test band" in panel.meta_html.value
    assert f"{session.spectrum.x.size}" in panel.meta_html.value
    assert panel.plot.x_scale.reverse is True  # absorbance: high to low (common practice)
    panel.high_to_low.value = False
    assert panel.plot.x_scale.reverse is False


def test_an_intensity_spectrum_runs_low_to_high_by_default(small_spectrum):
    raman = wk.Spectrum(small_spectrum.x, small_spectrum.y, y_kind="intensity")
    assert PeaksPanel(wk.Session(raman)).plot.x_scale.reverse is False


def test_opening_a_file_by_path_starts_a_session(tmp_path, small_spectrum):
    path = tmp_path / "three.csv"
    np.savetxt(path, np.column_stack([small_spectrum.x, small_spectrum.y]), delimiter=",",
               header="wavenumber (cm-1),absorbance", comments="")
    panel = SpectrumPanel()
    assert panel.crop_button.disabled  # nothing to act on yet
    panel.path_text.value = str(path)
    panel.open_button.click()
    assert panel.session is not None and panel.session.spectrum.x.size == 4001
    assert not panel.crop_button.disabled
    assert "three.csv" in panel.meta_html.value


def test_uploading_a_file_from_the_browser_starts_a_session(small_spectrum):
    text = "wavenumber (cm-1),absorbance\n" + "\n".join(
        f"{a:.3f},{b:.6f}" for a, b in zip(small_spectrum.x, small_spectrum.y))
    panel = SpectrumPanel()
    # the state the browser sends (files as JSON with their bytes; time in ms)
    panel.upload.set_state({"value": [{"name": "three.csv", "type": "text/csv", "size": len(text),
                                       "content": memoryview(text.encode()), "last_modified": 0}]})
    assert panel.session is not None
    assert panel.session.spectrum.x.size == 4001


def test_a_missing_file_is_reported_not_raised():
    panel = SpectrumPanel()
    panel.path_text.value = "/nonexistent/band.jdx"
    panel.open_button.click()
    assert "wk-status-error" in panel.status.value and panel.session is None


def test_find_peaks_fills_the_markers_and_table_of_every_panel_on_the_session(session):
    peaks, lines, record = PeaksPanel(session), LinesPanel(session), RecordPanel(session)
    peaks.min_snr.value = 10.0
    peaks.min_separation.value = 5.0
    peaks.find_button.click()
    assert session.history[-1].kind == "find_peaks"
    assert session.history[-1].params == {"min_snr": 10.0, "min_separation": 5.0, "fringe": True}
    n = len(session.peaks)
    assert n > 5
    assert peaks.markers.x.size == n
    assert len(peaks.peak_list.options) == n  # one row of the peak table per peak
    assert [pid for _, pid in peaks.peak_list.options] == session.peaks["peak_id"].tolist()
    assert "find_peaks" in record.history_table.value
    assert lines.plot.curve("data").x.size > 0


def test_a_click_on_the_plot_adds_a_peak_snapped_to_the_nearest_maximum(session, browser_side):
    panel = PeaksPanel(session)
    panel.mouse_mode.value = "click"
    assert panel.plot.figure.interaction is None  # clicks reach the marks
    # bqplot's "add" interaction appends the clicked point to the marker data in the browser
    browser_side.update(panel.markers, x=np.array([2906.0]), y=np.array([0.1]))
    step = session.history[-1]
    assert step.kind == "add_peak" and step.params == {"position": 2906.0, "snap": True}
    pos = float(session.peaks["position"].iloc[0])
    assert pos != 2906.0 and abs(pos - 2906.0) < 2.0  # moved onto the line's top
    assert np.asarray(panel.markers.x).tolist() == [pos]  # markers show the session again
    assert panel.selected_peak == int(session.peaks["peak_id"].iloc[0])


def test_a_click_outside_the_data_is_refused_and_the_markers_are_restored(session, browser_side):
    panel = PeaksPanel(session)
    browser_side.update(panel.markers, x=np.array([5000.0]), y=np.array([0.1]))
    assert len(session.history) == 1
    assert "outside the spectrum" in panel.status.value
    assert panel.markers.x.size == 0


def test_clicking_a_marker_selects_the_peak_and_remove_deletes_it(session, browser_side):
    panel = PeaksPanel(session)
    panel.min_snr.value = 10.0
    panel.find_button.click()
    ids = session.peaks["peak_id"].tolist()
    browser_side.event(panel.markers, "element_click", {"index": 2, "x": 0.0, "y": 0.0})
    assert panel.selected_peak == ids[2]
    assert list(panel.markers.selected) == [2]
    assert panel.peak_list.value == ids[2]                 # its row of the table is selected
    panel.remove_button.click()
    assert session.history[-1].kind == "remove_peak"
    assert session.history[-1].params == {"peak_id": ids[2]}
    assert ids[2] not in session.peaks["peak_id"].tolist()
    assert panel.markers.x.size == len(ids) - 1
    assert panel.selected_peak is None


def test_remove_without_a_selection_says_what_to_do(session):
    panel = PeaksPanel(session)
    panel.remove_button.click()
    assert "select a peak first" in panel.status.value


def test_a_typed_position_adds_a_peak_too(session):
    panel = PeaksPanel(session)
    panel.add_position.value = 2843.0
    panel.add_button.click()
    assert session.history[-1].kind == "add_peak"
    assert len(session.peaks) == 1


def test_a_transmittance_spectrum_is_converted_to_absorbance_by_its_button(small_spectrum):
    # invented data (self-consistency): T = 10^-A of the three-line demo spectrum
    t = wk.Spectrum(small_spectrum.x, 10.0 ** -small_spectrum.y, y_kind="transmittance")
    session = wk.Session(t)
    panel = SpectrumPanel(session)
    assert not panel.absorbance_button.disabled
    assert panel.plot.curve("baseline").x.size == 0  # no baseline preview on transmittance
    assert panel.plot.x_scale.reverse is True  # transmittance also runs high to low
    panel.absorbance_button.click()
    assert session.history[-1].kind == "to_absorbance"
    assert session.spectrum.y_kind == "absorbance"
    np.testing.assert_allclose(session.spectrum.y, small_spectrum.y, rtol=1e-12)  # A = −log10 T
    assert panel.absorbance_button.disabled  # nothing left to convert
    assert panel.plot.y_axis.label == "absorbance"


def test_adding_a_peak_on_a_maximum_that_has_one_is_refused_naming_it(session):
    panel = PeaksPanel(session)
    panel.min_snr.value = 10.0
    panel.find_button.click()
    first = session.peaks.iloc[0]
    n = len(session.history)
    assert panel.add_peak_at(float(first["position"]) + 0.05) is None  # climbs to that top
    assert len(session.history) == n  # nothing recorded
    assert f"already taken by peak {int(first['peak_id'])}" in panel.status.value


def test_the_automatic_threshold_is_used_until_one_is_typed(session):
    panel = PeaksPanel(session)
    assert panel.auto_snr.value
    panel.find_button.click()
    assert session.history[-1].params["min_snr"] is None
    assert "SNR ≥" in panel.status.value and "noise" in panel.status.value
    panel.min_snr.value = 12.0
    assert not panel.auto_snr.value
    panel.find_button.click()
    assert session.history[-1].params["min_snr"] == 12.0


def test_the_live_baseline_preview_starts_off_for_a_large_spectrum():
    # invented data (self-consistency): 300,000 points of a sloping line
    x = np.linspace(400.0, 4000.0, 300_000)
    panel = SpectrumPanel(wk.Session(wk.Spectrum(x, 1e-4 * x)))
    assert panel.baseline_preview.value is False
    assert panel.plot.curve("baseline").x.size == 0
    assert "preview is off" in panel.status.value


def test_an_unexpected_error_is_shown_and_not_swallowed(session, monkeypatch):
    import pytest

    panel = PeaksPanel(session)

    def broken(**kwargs):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr(session, "find_peaks", broken)
    with pytest.raises(RuntimeError, match="disk on fire"):  # the handler lets it through ...
        panel._on_find_click(panel.find_button)
    assert "unexpected RuntimeError" in panel.status.value and "bug" in panel.status.value
    panel.show_status("info", "")
    panel.find_button.click()  # ... to ipywidgets, which logs the traceback
    assert "unexpected RuntimeError" in panel.status.value
