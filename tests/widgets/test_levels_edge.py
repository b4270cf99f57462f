"""A line cut by a crop through it: its fitted position ends at the edge of the data, so its
obs − calc measures nothing. The Levels panel marks it instead of plotting it as a good point.

The spectrum is the package's demo HCl cell spectrum (invented scenario, our simulator;
self-consistency only)."""

import re

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.widgets import AnalysisApp
from widgetkit.widgets.levels_panel import OUTLIER_COLOR, edge_lines


@pytest.fixture(scope="module")
def cut_band(tmp_path_factory):
    """The demo band cropped 0.4 cm⁻¹ above the centre of its highest line, R(10) of H³⁵Cl
    near 3072.8 cm⁻¹ (the demo's line list), then analysed as the README does."""
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.crop(2550.0, 3073.2)
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=8)
    # the plain fit: weighted for transmittance noise the cut line's position error grows to
    # cm-1 and the assignment leaves it out, which is right but not what this test is about
    s.fit_lines(shape="voigt", baseline="linear", weighting="none", add_missed=False)
    path = tmp_path_factory.mktemp("edge") / "cut.session.json"
    s.save(path)
    return path


def _app(path):
    s = wk.Session.load(path)
    app = AnalysisApp(s)
    app.levels_panel.assign_button.click()
    assert s.history[-1].kind == "assign_band", app.levels_panel.status.value
    return s, app.levels_panel


def test_the_line_cut_by_the_crop_is_found_from_the_fit_s_flags(cut_band):
    s = wk.Session.load(cut_band)
    cut = edge_lines(s.line_fit)                 # from the record: nothing is fitted again
    assert len(cut) == 1
    lid = cut.pop()
    position = float(s.lines.set_index("line_id").loc[lid, "position"])
    assert min(abs(position - s.spectrum.x[0]), abs(position - s.spectrum.x[-1])) < 1e-6


def test_the_levels_panel_marks_the_cut_line_in_red_and_says_why(cut_band):
    s, panel = _app(cut_band)
    a = s.assignments.set_index("line_id")
    lid = next(iter(edge_lines(s.line_fit)))
    omc = float(a.loc[lid, "obs_minus_calc"])
    assert abs(omc) > 0.1 and not bool(a.loc[lid, "outlier"])   # what the glitch looked like
    i = panel._plot_ids.index(lid)
    assert panel.residual_points.colors[i] == OUTLIER_COLOR
    assert panel.fortrat_obs.colors[i] == OUTLIER_COLOR
    good = [c for k, c in enumerate(panel.residual_points.colors) if k != i]
    assert OUTLIER_COLOR not in good
    assert "Cut by the edge of the data" in panel.verdict.value
    assert f"line {lid} at {a.loc[lid, 'position']:.3f}" in panel.verdict.value
    row = re.search(rf'<tr class="wk-outlier"><td>{lid}</td>', panel.assignment_table.value)
    assert row is not None


def test_an_uncut_band_shows_no_edge_note(cut_band):
    s = wk.Session.load(cut_band)
    s.crop(2550.0, 3065.0)                       # the cut line is gone
    s.fit_lines(shape="voigt", baseline="linear")   # defaults: nothing added at the edge
    app = AnalysisApp(s)
    app.levels_panel.assign_button.click()
    assert edge_lines(s.line_fit) == set()
    assert "edge of the data" not in app.levels_panel.verdict.value
    assert OUTLIER_COLOR not in list(np.asarray(app.levels_panel.residual_points.colors))
