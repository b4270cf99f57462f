"""Lines and Levels panels driven headless: fit, busy state, tables, assignment, locks, plots."""

import re

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.widgets import LevelsPanel, LinesPanel, PeaksPanel, RecordPanel, fortrat_m

# value(uncertainty) as the trade writes it, e.g. 2885.977(3)
PAREN = re.compile(r"<td>-?\d+\.\d+\(\d+\)</td>")


@pytest.fixture
def peaked(session):
    session.find_peaks(min_snr=10.0)
    return session


@pytest.fixture
def fitted(peaked):
    peaked.fit_lines(shape="lorentzian", baseline="linear")  # the quickest shape to fit
    return peaked


def test_fit_lines_runs_the_session_fit_with_the_chosen_settings(peaked):
    lines, peaks = LinesPanel(peaked), PeaksPanel(peaked)
    lines.shape.value = "lorentzian"
    lines.baseline.value = "constant"
    lines.fit_button.click()
    step = peaked.history[-1]
    assert step.kind == "fit_lines", lines.status.value
    assert step.params["shape"] == "lorentzian" and step.params["baseline"] == "constant"
    assert step.params["region"] is None and step.params["shared_width"] is False
    assert len(peaked.lines) == len(peaked.peaks)
    assert peaks.markers.x.size == len(peaked.peaks)  # the other panel is unchanged and current


def test_the_fit_button_is_disabled_and_says_so_while_the_fit_runs(peaked):
    seen, panels = [], []
    # subscribed before the panel, so it is told of the fit step before the panel re-renders
    peaked.subscribe(lambda session, event: seen.append(
        (panels[0].fit_button.disabled, panels[0].fit_button.description)))
    panels.append(LinesPanel(peaked))
    panels[0].fit_button.click()
    assert seen and seen[0] == (True, "Fitting…")
    assert panels[0].fit_button.disabled is False
    assert panels[0].fit_button.description == "Fit lines"


def test_model_components_and_residuals_are_drawn_under_the_spectrum(fitted):
    panel = LinesPanel(fitted)
    fit = fitted.line_fit
    model = panel.plot.curve("model")
    assert 0 < model.x.size <= 2 * panel.plot.n_bins + 2
    comp = panel.plot.curve("component")
    assert comp.y.shape[0] == len(fit.table)  # one row per line
    resid = panel.plot.curve("residual")
    assert resid.y.size > 0
    assert panel.plot.residual_figure is not None and resid in panel.plot.residual_figure.marks
    # the residual shown is y − model of the full fit, decimated (self-consistency)
    full = fit.residual
    assert float(np.max(resid.y)) == pytest.approx(float(full.max()), rel=1e-5)


def test_the_line_table_writes_values_with_uncertainties_in_parentheses(fitted):
    panel = LinesPanel(fitted)
    html = panel.table.value
    assert html.count("<tr") == len(fitted.lines) + 1
    assert len(PAREN.findall(html)) >= 3 * len(fitted.lines)  # position, area, fwhm at least
    assert "position_err" not in html  # folded into the value column
    assert "converged" in panel.fit_summary.value and "reduced χ²" in panel.fit_summary.value


def test_a_brushed_region_limits_the_fit(peaked):
    panel = LinesPanel(peaked)
    panel.mouse_mode.value = "select"
    panel.plot.brush.brushing = True
    panel.plot.brush.selected = np.array([2910.0, 2990.0])
    panel.plot.brush.brushing = False
    assert panel.use_region.value is True
    panel.shape.value = "lorentzian"
    panel.fit_button.click()
    assert peaked.history[-1].params["region"] == [2910.0, 2990.0]
    inside = peaked.peaks[(peaked.peaks.position >= 2910) & (peaked.peaks.position <= 2990)]
    assert len(peaked.lines) == len(inside)


def test_a_fit_without_peaks_is_refused_in_the_status_line(session):
    panel = LinesPanel(session)
    panel.fit_button.click()
    assert "wk-status-error" in panel.status.value and "no peaks" in panel.status.value
    assert len(session.history) == 1
    assert panel.fit_button.disabled is False


def test_assign_fills_the_assignment_and_constants_tables_and_both_plots(fitted):
    panel, record = LevelsPanel(fitted), RecordPanel(fitted)
    panel.molecule.value = "HCl"
    panel.assign_button.click()
    step = fitted.history[-1]
    assert step.kind == "assign_band", panel.status.value
    a = fitted.assignments
    assert a["label"].notna().all()
    html = panel.assignment_table.value
    assert html.count("<tr") == len(a) + 1
    for label in ("P(1)", "R(0)"):
        assert f"<td>{label}</td>" in html
    names = fitted.constants["name"].tolist()
    assert "band_origin" in names and "B_e" in names
    assert "band_origin" in panel.constants_table.value
    assert PAREN.search(panel.constants_table.value)
    # Fortrat plot: position against m, m = J'' + 1 (R) and −J'' (P)
    m = np.asarray(panel.fortrat_obs.x)
    assert set(m.astype(int)) == set(fortrat_m(a["J_upper"], a["J_lower"]).astype(int))
    assert 0 not in m.astype(int)  # no line at m = 0 (the band-origin gap)
    assert panel.residual_points.y.size == len(a)
    assert panel.fortrat_calc.x.size == len(a)
    # isotopologues as the trade writes them (the data keep the ASCII key)
    assert "H³⁵Cl" in panel.plot_legend.value and "outlier" in panel.plot_legend.value
    assert "1H-35Cl" not in panel.plot_legend.value and "1H-35Cl" in set(a["isotopologue"])
    assert "<td>H³⁵Cl</td>" in html and "<td>H³⁵Cl</td>" in panel.constants_table.value
    assert "cm-1" not in panel.constants_table.value and "<td>cm⁻¹</td>" in panel.constants_table.value
    assert "assign_band" in record.history_table.value


def test_locking_and_clearing_one_line_are_session_steps(fitted):
    panel = LevelsPanel(fitted)
    panel.assign_button.click()
    a = fitted.assignments
    lid = int(a["line_id"].iloc[0])
    label, iso = str(a["label"].iloc[0]), str(a["isotopologue"].iloc[0])
    # a click on the first point of the Fortrat plot selects its line, label and isotopologue
    panel._on_point_click(panel.fortrat_obs, {"event": "element_click", "data": {"index": 0}})
    assert panel.edit_line.value == lid and panel.edit_label.value == label
    assert panel.edit_isotopologue.value == iso
    # lock it one J higher than the automatic label: the band is renumbered around the lock
    branch, j = label[0], int(label[2:-1])
    other = f"{branch}({j + 1})"
    panel.edit_label.value = other
    panel.lock_button.click()
    assert fitted.history[-1].kind == "set_assignment", panel.status.value
    assert fitted.history[-1].params == {"line_id": lid,
                                         "labels": {"label": other, "isotopologue": iso}}
    assert "<td>locked</td>" in panel.assignment_table.value
    assert fitted.assignments.set_index("line_id").loc[lid, "label"] == other
    # the constants moved by many standard errors: said in the status line, and why in the panel
    assert "wk-status-warning" in panel.status.value and "WARNING" in panel.status.value
    assert "Doubtful" in panel.verdict.value and "numbering follows the lock" in panel.verdict.value
    panel.unlock_button.click()
    assert fitted.history[-1].kind == "unlock_assignment", panel.status.value
    assert fitted.locks == {} and panel.verdict.value == ""
    assert fitted.assignments.set_index("line_id").loc[lid, "label"] == label
    panel.clear_button.click()
    assert fitted.history[-1].kind == "clear_assignment"
    assert fitted.locks[lid] == {}


def test_choosing_a_line_fills_its_label_and_isotopologue(fitted):
    panel = LevelsPanel(fitted)
    panel.assign_button.click()
    a = fitted.assignments.set_index("line_id")
    lid = int(a.index[-1])
    panel.edit_line.value = lid
    assert panel.edit_label.value == a.loc[lid, "label"]
    assert panel.edit_isotopologue.value == a.loc[lid, "isotopologue"]


def test_a_lock_without_a_label_says_what_to_type(fitted):
    panel = LevelsPanel(fitted)
    panel.assign_button.click()
    n = len(fitted.history)
    panel.edit_label.value = ""
    panel.lock_button.click()
    assert len(fitted.history) == n and "type a label" in panel.status.value


def test_an_unknown_molecule_is_reported(fitted):
    panel = LevelsPanel(fitted)
    panel.molecule.value = "Xq"
    panel.assign_button.click()
    assert "wk-status-error" in panel.status.value
    assert fitted.history[-1].kind == "fit_lines"


def test_fortrat_m_follows_the_convention_of_the_branches():
    # m = J'' + 1 for R(J''), m = −J'' for P(J'') (Herzberg 1950; common practice)
    m = fortrat_m([1, 2, 0, 1, 3], [0, 1, 1, 2, 3])
    assert m[:4].tolist() == [1.0, 2.0, -1.0, -2.0] and np.isnan(m[4])


def test_the_whole_analysis_with_the_panels_replays_and_verifies(tmp_path, session):
    from widgetkit.widgets import AnalysisApp

    app = AnalysisApp(session)
    app.peaks_panel.min_snr.value = 10.0
    app.peaks_panel.find_button.click()
    app.lines_panel.fit_button.click()
    app.levels_panel.assign_button.click()
    kinds = [s.kind for s in session.history]
    assert kinds == ["load", "find_peaks", "fit_lines", "assign_band"], app.levels_panel.status.value
    path = tmp_path / "hcl.session.json"
    session.save(path)
    assert wk.Session.load(path).verify().ok


def test_a_progression_is_plotted_against_the_upper_level():
    # demo data from our simulator: band centres of the 1-0, 2-0 and 3-0 bands of H-35Cl
    hcl = wk.Diatomic("1H", "35Cl")
    sp = wk.simulate.vibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"], rotational=False, seed=1,
                                 noise=1e-5, lorentz_hwhm=2.0, resolution=2.0,
                                 x_range=(2500, 8700), step=0.5)
    session = wk.Session(sp)
    session.find_peaks(min_snr=10.0)
    session.fit_lines(shape="lorentzian")
    panel = LevelsPanel(session)
    panel.kind.value = "progression"
    panel.assign_button.click()
    assert session.history[-1].kind == "assign_band", panel.status.value
    assert session.history[-1].params["kind"] == "progression"
    assert panel.fortrat_fig.axes[0].label == "v′"
    n_labelled = int(session.assignments["label"].notna().sum())
    assert panel.fortrat_obs.x.size == n_labelled > 0
    assert "omega_e" in panel.constants_table.value


def test_the_fit_shows_its_progress_and_keeps_a_fit_stopped_by_its_budget(peaked, monkeypatch):
    panel = LinesPanel(peaked)
    statuses = []
    panel.status.observe(lambda change: statuses.append(change["new"]), "value")
    opts = panel.fit_options()
    monkeypatch.setattr(panel, "fit_options", lambda: {**opts, "max_nfev": 1})
    panel.fit_button.click()
    assert any("of the budget" in s for s in statuses)          # progress in the busy line
    fit = peaked.line_fit
    assert fit is not None and not fit.converged and fit.stopped == "evaluations"
    assert "kept although it did not converge" in panel.status.value
    assert "evaluations was spent" in panel.status.value and "lmfit" not in panel.status.value
    assert "did not converge" in panel.fit_summary.value
    assert panel.plot.curve("model").x.size > 0                  # and its figure is drawn


def test_the_fit_summary_names_the_lines_removed_as_unsupported(peaked, monkeypatch):
    from widgetkit.session import kinds_lines

    monkeypatch.setattr(kinds_lines, "_by_hand", lambda peaks: None)  # as if found
    hand = peaked.add_peak(2950.0, snap=False)    # only noise there (invented band)
    peaked.fit_lines(shape="gaussian")
    panel = LinesPanel(peaked)
    summary = panel.fit_summary.value
    assert f"1 line removed as unsupported by the data ({hand})" in summary
    assert "standard errors" in summary or "bound" in summary or "moved" in summary
