"""The Band model panel: controls -> one recorded fit_band_model step; data, model, residual,
parameters, constants and correlations shown from the session; errors in the status line."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.errors import FitError
from widgetkit.simulate import HANDBOOK
from widgetkit.widgets import AnalysisApp, BandModelPanel
from widgetkit.widgets.bandmodel_panel import parse_band, parse_fix

CO = wk.Diatomic("C", "O")


@pytest.fixture(scope="module")
def co_4cm():
    """CO 1-0 at 4 cm-1, simulated from the handbook constants (self-consistency only)."""
    return wk.simulate.rovibrational(CO, HANDBOOK["12C-16O"], temperature=296.0, resolution=4.0,
                                     step=1.0, noise=0.002, seed=4)


def test_fit_band_at_four_wavenumbers_records_one_step_and_shows_everything(co_4cm):
    s = wk.Session(co_4cm)
    panel = BandModelPanel(s)
    panel.resolution.value = 4.0
    panel.fix_temperature.value = True
    panel.fit_button.click()
    assert panel.last_error is None, panel.status.value
    assert [st.kind for st in s.history] == ["load", "fit_band_model"]
    assert s.history[-1].params["fix"] == {"temperature": 296.0}
    fit = s.band_model
    model = np.asarray(panel.plot.curve("model").y, dtype=float)
    assert model.size > 0 and np.isfinite(model).all()
    assert np.asarray(panel.plot.curve("residual").y).size > 0
    assert "wk-band-parameters" in panel.parameter_table.value
    assert "B_e" in panel.parameter_table.value and "held" in panel.parameter_table.value
    assert "wk-band-constants" in panel.constant_table.value
    assert fit.status in panel.status.value or "fitted" in panel.status.value
    # T was fixed by the user: T_rot is no measurement, neither in the panel nor in s.constants
    t_row = [r for r in panel.constant_table.value.split("<tr") if "T_rot" in r][0]
    assert "fixed (not fitted)" in t_row and "(0)" not in t_row
    k = s.constants
    t_rot = k[k["name"] == "T_rot"].iloc[0]
    assert t_rot["value"] == 296.0 and np.isnan(t_rot["stderr"])
    assert t_rot["note"] == "fixed (not fitted)"
    b_e = k[k["name"] == "B_e"]
    assert (b_e["note"] == "").all() and (b_e["stderr"] > 0).all()  # fitted: no note
    assert panel.fit_button.description == "Fit band" and not panel.fit_button.disabled


def test_an_unresolved_contour_shows_why_it_is_doubtful(co_4cm):
    sp = wk.simulate.rovibrational(CO, HANDBOOK["12C-16O"], temperature=296.0, resolution=8.0,
                                   step=2.0, noise=0.002, seed=3)
    s = wk.Session(sp)
    panel = BandModelPanel(s)
    panel.resolution.value = 8.0
    panel.fit_button.click()
    assert s.band_model.status == "doubtful"
    assert "wk-band-reasons" in panel.summary.value and "correlated" in panel.summary.value
    assert "strong correlations" in panel.correlations.value
    assert "warning" in panel.status.value


def test_a_high_resolution_band_works_too():
    sp = wk.simulate.rovibrational(CO, HANDBOOK["12C-16O"], temperature=296.0, resolution=0.01,
                                   x_range=(2120.0, 2170.0), step=0.0025, lorentz_hwhm=0.01,
                                   noise=0.003, seed=2)
    s = wk.Session(sp)
    panel = BandModelPanel(s)
    panel.resolution.value = 0.01
    panel.fit_button.click()
    assert panel.last_error is None, panel.status.value
    b, e = s.band_model.constant("B_lower")
    assert abs(b - 1.92253) < 3 * e + 1e-5  # B0 = Be - αe/2 of the constants simulated


def test_bad_input_goes_to_the_status_line_and_changes_nothing(co_4cm):
    s = wk.Session(co_4cm)
    panel = BandModelPanel(s)
    panel.band.value = "one-zero"
    panel.fit_button.click()
    assert isinstance(panel.last_error, FitError) and "upper-lower" in panel.status.value
    panel.band.value = "1-0"
    panel.fix_more.value = "B_e:1.9"
    panel.fit_button.click()
    assert "name=value" in panel.status.value
    panel.fix_more.value = ""
    panel.molecule.value = "Xy"
    panel.fit_button.click()
    assert panel.last_error is not None and "error" in panel.status.value
    assert len(s.history) == 1


def test_parsers():
    assert parse_band("2-0") == [2, 0] and parse_band(" 1 - 0 ") == [1, 0]
    assert parse_fix("B_e=1.93, temperature = 300") == {"B_e": 1.93, "temperature": 300.0}
    assert parse_fix("  ") == {}
    with pytest.raises(FitError):
        parse_band("10")


def test_the_app_has_a_band_model_tab_that_follows_the_session(co_4cm):
    s = wk.Session(co_4cm)
    app = AnalysisApp(s)
    titles = [app.tabs.get_title(i) for i in range(len(app.panels))]
    assert "Band model" in titles and titles[-1] == "Record"
    s.fit_band_model("CO", resolution=4.0, fix={"temperature": 296.0})
    assert app.bandmodel_panel.constant_table.value  # rendered from the session
    s.crop(2000.0, 2300.0)
    assert app.bandmodel_panel.constant_table.value == ""  # a new spectrum clears the fit
    ro = AnalysisApp(s, read_only=True)
    assert ro.bandmodel_panel.fit_button.disabled


def test_a_linear_molecule_typed_as_its_atoms_along_the_axis_is_fitted(tmp_path):
    """CO2 ν3 (a parallel band), simulated from widgetkit.simulate.LINEAR_HANDBOOK (HITRAN-based
    level constants; self-consistency only)."""
    oco = wk.Linear("OCO")
    sp = wk.simulate.linear_spectrum(oco, wk.simulate.LINEAR_HANDBOOK["16O-12C-16O"],
                                     bands=[("00^01", "00^00")], x_range=(2250, 2420), step=0.5,
                                     resolution=2.0, noise=0.002, seed=3, temperature=296.0,
                                     lorentz_hwhm=0.05)
    s = wk.Session(sp)
    panel = BandModelPanel(s)
    panel.molecule.value = "CO2"  # a formula: not the order of the atoms along the axis
    panel.fit_button.click()
    assert isinstance(panel.last_error, FitError) and "OCO" in panel.status.value
    assert len(s.history) == 1
    panel.molecule.value = "OCO"
    panel.resolution.value = 2.0
    panel.fit_button.click()
    assert panel.last_error is None, panel.status.value
    assert s.history[-1].params["molecule"] == "OCO"
    assert "16O-12C-16O" in set(s.constants["isotopologue"])
    assert "band_origin" in panel.constant_table.value
    assert s.verify().ok  # the formula is read the same way on replay
    s.save(tmp_path / "co2.json")
    again = wk.Session.load(tmp_path / "co2.json")  # and on reopening (from the record)
    assert again.constants["value"].tolist() == s.constants["value"].tolist()


def test_the_controls_show_the_options_of_the_fit_shown(co_4cm):
    # a fit made in code (or a session reopened): the controls say how it was made, so that
    # "Fit band" repeats it; before, "fix T" stayed unticked and a click refitted T free
    s = wk.Session(co_4cm)
    s.fit_band_model("CO", resolution=4.0, instrument="triangular", baseline="poly2",
                     fix={"temperature": 250.0, "B_e": 1.93128087})
    panel = BandModelPanel(s)
    assert panel.fix_temperature.value and panel.temperature.value == 250.0
    assert parse_fix(panel.fix_more.value) == {"B_e": 1.93128087}
    assert (panel.instrument.value, panel.baseline.value, panel.resolution.value) == \
        ("triangular", "poly2", 4.0)
    assert panel.fit_options()["fix"] == {"B_e": 1.93128087, "temperature": 250.0}
    panel.fit_button.click()  # the same fit again, recorded as a second step
    assert panel.last_error is None, panel.status.value
    assert s.history[-1].params["fix"] == s.history[-2].params["fix"]
    assert s.history[-1].params["instrument"] == "triangular"
