"""The panels as a person meets them: a busy cue for slow work, status lines that never go stale,
the brush gone after a crop, table rows that select, the trade's words, distinct colours and a
readable metadata line. Driven without a browser (the recording comm of conftest)."""

from __future__ import annotations

import re

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.formatting import display_isotopologue
from widgetkit.widgets import AnalysisApp, LevelsPanel, LinesPanel, PeaksPanel, RecordPanel, SpectrumPanel
from widgetkit.widgets._plot import COLORS
from widgetkit.widgets.levels_panel import ISO_COLORS, OUTLIER_COLOR


def _fitted(session):
    session.find_peaks(min_snr=10.0)
    session.fit_lines(shape="lorentzian")
    return session


def _watch(monkeypatch, session, name, seen, panel, *widgets):
    """Wrap a session method: note what the panel shows while it runs."""
    original = getattr(session, name)

    def wrapped(*args, **kwargs):
        seen.append((panel.status.value, [w.disabled for w in widgets], panel._dom_classes))
        return original(*args, **kwargs)

    monkeypatch.setattr(session, name, wrapped)


# ---------------------------------------------------------------------- busy indicator
def test_the_busy_cue_is_up_while_a_fit_runs_and_gone_after(session, monkeypatch):
    session.find_peaks(min_snr=10.0)
    panel = LinesPanel(session)
    seen = []
    _watch(monkeypatch, session, "fit_lines", seen, panel, panel.fit_button)
    panel.fit_button.click()
    (status, disabled, classes), = seen
    assert "wk-status-busy" in status and "wk-spinner" in status and "fitting" in status
    assert disabled == [True] and "wk-busy" in classes     # no second click meanwhile
    assert "wk-status-ok" in panel.status.value and "wk-busy" not in panel._dom_classes
    assert not panel.fit_button.disabled and not panel.busy


@pytest.mark.parametrize(("make", "method", "press"), [
    (PeaksPanel, "find_peaks", lambda p: p.find_button.click()),
    (LevelsPanel, "assign_band", lambda p: p.assign_button.click()),
    (RecordPanel, "verify", lambda p: p.verify_button.click()),
])
def test_every_slow_action_shows_the_busy_cue(make, method, press, session, monkeypatch):
    if make is LevelsPanel:
        _fitted(session)
    panel = make(session)
    seen = []
    _watch(monkeypatch, session, method, seen, panel)
    press(panel)
    assert seen and "wk-status-busy" in seen[0][0]
    assert "wk-status-busy" not in panel.status.value


def test_the_busy_cue_is_taken_down_when_the_action_fails(session):
    panel = LinesPanel(session)           # no peaks: the fit is refused
    panel.fit_button.click()
    assert "wk-status-error" in panel.status.value
    assert not panel.busy and "wk-busy" not in panel._dom_classes
    assert not panel.fit_button.disabled


def test_long_work_can_report_its_progress_through_the_busy_cue(session):
    panel = RecordPanel(session)
    shown = []
    with panel.working("replaying…") as update:
        update("replaying step 3 of 9…")
        shown.append(panel.status.value)
        with panel.working("nested") as inner:   # an action inside another keeps one cue
            inner("still going")
        assert panel.busy
    assert "step 3 of 9" in shown[0] and "wk-status-busy" in shown[0]
    assert not panel.busy and not panel.note_button.disabled


# ---------------------------------------------------------------------- status lines
def test_status_lines_follow_stepping_back_and_forward(session):
    _fitted(session)
    app = AnalysisApp(session)
    app.lines_panel.show_status("ok", "fitted 11 lines")        # what the panel said last
    app.record_panel.back_button.click()
    for p in app.panels:
        assert "showing the state after step 1 of 2 (find_peaks)" in p.status.value, p.title
    assert "fitted 11 lines" not in app.lines_panel.status.value
    app.record_panel.latest_button.click()
    for p in app.panels:
        assert "showing the latest state (step 2, fit_lines)" in p.status.value, p.title


def test_status_lines_follow_an_undo_and_a_change_made_in_a_notebook_cell(session):
    app = AnalysisApp(session)
    session.find_peaks(min_snr=10.0)                   # a cell, not a panel
    n = len(session.peaks)
    for p in app.panels:
        assert f"step 1 (find_peaks): found {n} peaks" in p.status.value
    app.record_panel.undo_button.click()
    assert "undid step 1 (find_peaks)" in app.lines_panel.status.value
    assert "last step undone" in app.record_panel.status.value   # the panel that did it


def test_status_lines_follow_a_reopened_session(session, tmp_path):
    _fitted(session)
    session.save(tmp_path / "s.json")
    app = AnalysisApp(wk.Session(session.source_spectrum))
    app.peaks_panel.show_status("ok", "found 99 peaks")           # about the old session
    app.record_panel.save_path.value = str(tmp_path / "s.json")
    app.record_panel.open_button.click()
    assert "reopened" in app.record_panel.status.value and "3 steps" in app.record_panel.status.value
    for p in (app.spectrum_panel, app.peaks_panel, app.lines_panel, app.levels_panel):
        assert "reopened s.json: 3 steps (0–2); showing step 2 (fit_lines)" in p.status.value
    assert "99" not in app.peaks_panel.status.value


def test_a_verification_shown_is_cleared_when_the_record_changes(session):
    record = RecordPanel(session)
    record.verify_button.click()
    assert "all steps replay" in record.verify_report.value
    session.find_peaks(min_snr=10.0)
    assert record.verify_report.value == ""


# ---------------------------------------------------------------------- spectrum panel
def _brush(browser_side, panel, lo, hi):
    """A drag over the plot as the browser reports it: brushing starts, the interval, it ends."""
    browser_side.update(panel.plot.brush, brushing=True)
    browser_side.update(panel.plot.brush, selected=np.array([lo, hi]))
    browser_side.update(panel.plot.brush, brushing=False)


def test_the_brush_rectangle_is_cleared_after_crop(session, sent, browser_side):
    panel = SpectrumPanel(session)
    panel.mouse_mode.value = "select"
    _brush(browser_side, panel, 2850.0, 2950.0)
    assert (panel.crop_lo.value, panel.crop_hi.value) == (2850.0, 2950.0)
    sent.clear()
    panel.crop_button.click()
    assert session.history[-1].kind == "crop"
    assert panel.plot.brush.selected is None
    resets = [d for cid, t, d, _ in sent.messages if cid == panel.plot.brush.comm.comm_id
              and d.get("method") == "custom" and d.get("content") == {"type": "reset"}]
    assert len(resets) == 1                               # the browser removes the rectangle


def test_a_refused_crop_keeps_the_brushed_region(session, browser_side):
    panel = SpectrumPanel(session)
    _brush(browser_side, panel, 5000.0, 5100.0)
    panel.crop_button.click()                             # outside the data: refused
    assert "wk-status-error" in panel.status.value
    assert list(panel.plot.brush.selected) == [5000.0, 5100.0]


def test_the_metadata_line_shows_readable_fields_not_reader_keys():
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    text = SpectrumPanel(s).meta_html.value
    assert "hcl_cell_296K.jdx" in text and "QM-24-017" in text and "infrared" in text
    assert "Quillmere" in text                            # the file's ORIGIN label
    for internal in ("x_unit_from", "y_kind_from", "data_form", "block", "read_options", "checks",
                     "percent_from", "<b>jcamp</b>", "{", "firsty", "yfactor"):
        assert internal not in text, internal


def test_the_metadata_line_says_what_the_reader_converted_and_warned():
    from widgetkit.widgets.spectrum_panel import readable_metadata

    meta = {"title": "film", "resolution": 0.5, "sample_state": "solid", "x_converted": "nm -> cm-1 (vacuum)",
            "transmittance_percent": True, "warnings": ["FIRSTY differs in the last written digit"],
            "x_unit_from": "file", "jcamp": {"spectrometerdatasystem": "bench B", "xfactor": "1"}}
    shown = dict(readable_metadata(meta))
    assert shown["resolution"] == "0.5 cm⁻¹" and shown["sample"] == "solid"
    assert shown["x in the file"] == "nm → cm⁻¹ (vacuum)" and "divided by 100" in shown["y in the file"]
    assert shown["instrument"] == "bench B" and "1 warning: FIRSTY" in shown["⚠ reader"]
    assert "x_unit_from" not in shown and "xfactor" not in shown


def test_the_baseline_controls_wrap_instead_of_being_clipped(session):
    panel = SpectrumPanel(session)
    panel.baseline_method.value = "als"
    for slider in (panel.baseline_lam, panel.baseline_p):
        assert slider in panel.baseline_box.children
        assert slider.style.description_width == "initial"   # the whole description shows
    rows = [c for c in panel.children if "HBox" in type(c).__name__]
    assert rows and all(r.layout.flex_flow == "row wrap" for r in rows)


# ---------------------------------------------------------------------- peaks table
def test_clicking_a_row_of_the_peak_table_selects_that_peak(session, browser_side):
    panel = PeaksPanel(session)
    panel.min_snr.value = 10.0
    panel.find_button.click()
    ids = session.peaks["peak_id"].tolist()
    browser_side.update(panel.peak_list, index=3)          # the browser sends the clicked row
    assert panel.selected_peak == ids[3]
    assert list(panel.markers.selected) == [3]              # its marker lights up
    assert f"peak <b>{ids[3]}</b>" in panel.selected_label.value
    panel.remove_button.click()
    assert ids[3] not in session.peaks["peak_id"].tolist()
    assert panel.peak_list.value is None and panel.selected_peak is None


def test_the_peak_table_rows_line_up_under_their_heading(session):
    panel = PeaksPanel(session)
    session.find_peaks(min_snr=10.0)
    head = re.search(r'wk-peaks-head">(.*?)</div>', panel.table.value).group(1)
    for text, pid in panel.peak_list.options:
        assert len(text) == len(head.replace("&amp;", "&"))   # fixed-width columns
        assert text.replace("\u00a0", " ").split()[0] == str(pid)


# ---------------------------------------------------------------------- lines and levels
def test_the_line_table_uses_the_trades_names_and_no_solver_messages(session):
    session.find_peaks(min_snr=10.0)
    session.fit_lines(shape="voigt")
    panel = LinesPanel(session)
    heads = re.findall(r"<th>(.*?)</th>", panel.table.value)
    assert "Gaussian σ / cm⁻¹" in heads and "Lorentzian γ (HWHM) / cm⁻¹" in heads
    assert not any(h.startswith(("sigma", "gamma")) for h in heads)
    summary = panel.fit_summary.value
    assert "Voigt lines" in summary and "converged" in summary
    assert "lmfit" not in summary and "ftol" not in summary and "Gauss-Newton" not in summary


def test_a_failed_fit_is_told_in_our_words():
    from widgetkit.formatting import fit_verdict

    lib = "not converged: the solver stopped: Some internal `xtol` message; lmfit: more"
    assert fit_verdict(False, lib).startswith("did not converge: the solver stopped before")
    assert "xtol" not in fit_verdict(False, lib) and "lmfit" not in fit_verdict(False, lib)
    ours = "not converged: a further Gauss-Newton step would still lower chi-square by 3; lmfit: x"
    assert fit_verdict(False, ours) == ("did not converge: a further Gauss-Newton step would still "
                                        "lower chi-square by 3")
    assert fit_verdict(True, ours) == "converged"


def test_a_fit_error_is_shown_without_the_solver_librarys_words(session, monkeypatch):
    session.find_peaks(min_snr=10.0)
    panel = LinesPanel(session)

    def failing(**kwargs):
        raise wk.FitError("the line fit did not converge (not converged: a further step would "
                          "lower chi-square by 3; lmfit: Some `xtol` internals); the previous "
                          "lines are kept")

    monkeypatch.setattr(session, "fit_lines", failing)
    panel.fit_button.click()
    text = panel.status.value
    assert "wk-status-error" in text and "did not converge" in text and "previous lines" in text
    assert "lmfit" not in text and "xtol" not in text


def test_isotopologues_are_written_as_the_trade_writes_them():
    # mass numbers as left superscripts, hydrogen isotopes as H, D, T (common practice)
    assert display_isotopologue("1H-35Cl") == "H³⁵Cl"
    assert display_isotopologue("2H-37Cl") == "D³⁷Cl"
    assert display_isotopologue("12C-16O") == "¹²C¹⁶O"
    assert display_isotopologue("14N-14N") == "¹⁴N₂"
    assert display_isotopologue("16O-12C-18O") == "¹⁶O¹²C¹⁸O"
    assert display_isotopologue("HCl") == "HCl" and display_isotopologue(None) == "–"


def test_the_raman_detector_choice_shows_only_for_raman_kinds_and_never_empty(session):
    panel = LevelsPanel(session)
    assert panel.detector.layout.display == "none" and panel.detector.index == 0
    assert panel.detector.label.startswith("detector")          # not an empty box
    raman = next(v for _, v in panel.kind.options if str(v).startswith("raman"))
    panel.kind.value = raman
    assert panel.detector.layout.display == ""
    panel.kind.value = "rovibrational"
    assert panel.detector.layout.display == "none"


def _lab(hex_colour: str) -> np.ndarray:
    """CIE L*a*b* (D65) of an sRGB colour: sRGB transfer function and matrix of IEC 61966-2-1,
    Lab of CIE 15:2004 (formulas from those standards)."""
    c = np.array([int(hex_colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    m = np.array([[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]])
    xyz = m @ lin / np.array([0.95047, 1.0, 1.08883])
    f = np.where(xyz > (6 / 29) ** 3, np.cbrt(xyz), xyz / (3 * (6 / 29) ** 2) + 4 / 29)
    return np.array([116 * f[1] - 16, 500 * (f[0] - f[1]), 200 * (f[1] - f[2])])


def test_model_and_outliers_have_clearly_different_colours():
    # CIE76 colour difference; above about 20 two colours are told apart at a glance
    # (a just-noticeable difference is about 2.3: common practice)
    def delta(a, b):
        return float(np.linalg.norm(_lab(a) - _lab(b)))

    assert delta(COLORS["model"], OUTLIER_COLOR) > 20
    assert delta(COLORS["model"], COLORS["data"]) > 20
    for c in ISO_COLORS:
        assert delta(c, OUTLIER_COLOR) > 20 and delta(c, COLORS["model"]) > 20, c
