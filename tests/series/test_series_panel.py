"""The Series panel, driven without a browser (traits and handlers)."""

import numpy as np
import pytest

import widgetkit as wk

pytest.importorskip("bqplot")
from widgetkit.widgets import AnalysisApp, SeriesPanel  # noqa: E402


@pytest.fixture(scope="module")
def mixed(recipe, series_dir, tmp_path_factory):
    """The test series plus one unreadable file: five ok, one failed."""
    folder = tmp_path_factory.mktemp("mixed")
    files = sorted(series_dir.iterdir())[:5]
    bad = folder / "cell_99_broken.jdx"
    bad.write_text("##TITLE=broken\n##END=\n")
    return wk.run_series(recipe, [*files, bad], variable="set temperature", workers=1,
                         progress=False, out=folder / "out")


def test_the_panel_plots_the_rotational_temperature_against_the_set_temperature(mixed):
    panel = SeriesPanel(mixed)
    assert panel.constant.value == "T_rot" and panel.isotopologue.value == "1H-35Cl"
    d = mixed.constant("T_rot", "1H-35Cl")
    ok = d[d["status"] == "ok"]
    np.testing.assert_allclose(panel.points.x, ok["variable"])
    np.testing.assert_allclose(panel.points.y, ok["value"])
    np.testing.assert_allclose(panel.bars.y[:, 1] - panel.bars.y[:, 0], 2 * ok["stderr"])
    assert panel.x_axis.label == "set temperature / K" and panel.y_axis.label == "T_rot / K"
    assert len(panel.failed_points.x) == 0  # the broken file has no variable: not placed on x
    assert "5 ok, 0 doubtful, 1 failed" in panel.status.value
    assert "cell_99_broken.jdx" in panel.spectra_table.value
    assert "step 0 (load)" in panel.spectra_table.value


def test_choosing_another_constant_and_isotopologue_redraws(mixed):
    panel = SeriesPanel(mixed)
    panel.constant.value = "band_origin"
    panel.isotopologue.value = "1H-37Cl"
    d = mixed.constant("band_origin", "1H-37Cl")
    np.testing.assert_allclose(panel.points.y, d["value"].dropna())
    assert panel.y_axis.label == "band_origin / cm-1"


def test_failed_spectra_with_a_variable_are_red_crosses_at_the_bottom(recipe, series_dir, tmp_path):
    files = sorted(series_dir.iterdir())[:2]
    bad = tmp_path / "cell_07_600K.jdx"
    bad.write_text("##TITLE=broken\n##END=\n")
    res = wk.run_series(recipe, [*files, bad], variable=r"_(\d+)K", workers=1, progress=False)
    panel = SeriesPanel(res)
    assert list(panel.failed_points.x) == [600.0]
    assert panel.failed_points.y[0] <= min(panel.bars.y[:, 0])
    assert panel.point_names[-1] == "cell_07_600K.jdx"


def test_a_click_opens_that_spectrums_session_in_the_app(mixed):
    app = AnalysisApp()
    panel = SeriesPanel(mixed, app=app)
    panel._on_point_click(panel.points, {"data": {"index": 3}})
    name = panel.point_names[3]
    assert panel.opened == name
    assert app.session is not None
    assert app.session.sources[0]["sha256"] == mixed.entry(name)["sha256"]
    assert "opened " + name in panel.status.value
    assert "wk-current" in panel.spectra_table.value


def test_without_an_app_the_panel_opens_one_below_the_plot(mixed):
    panel = SeriesPanel(mixed)
    assert panel.app_box.children == ()
    session = panel.open_spectrum(panel.point_names[0])
    assert isinstance(panel.app_box.children[0], AnalysisApp)
    assert panel.app_box.children[0].session is session


def test_a_spectrum_without_a_session_says_why(mixed):
    panel = SeriesPanel(mixed)
    assert panel.open_spectrum("cell_99_broken.jdx") is None
    assert "has no session" in panel.status.value and "step 0 (load)" in panel.status.value
