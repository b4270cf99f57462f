"""The Levels panel with the linear-molecule and Raman kinds: choosing the kind and the detector,
the Fortrat plot by branch (S lines on both sides of the laser line), the band column."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.simulate import HANDBOOK, levels_from_equilibrium, raman_spectrum
from widgetkit.widgets import LevelsPanel
from widgetkit.widgets.levels_panel import KIND_CHOICES


@pytest.fixture(scope="module")
def raman_session():
    n2 = wk.Linear("NN")
    sp = raman_spectrum(n2, levels_from_equilibrium(n2, HANDBOOK["14N-14N"]), excitation=532.0,
                        medium="air", x_range=(-120, 120), step=0.05, resolution=0.5, noise=3.0,
                        seed=5)  # handbook values, from memory
    s = wk.Session(sp)
    s.find_peaks()
    s.fit_lines(shape="voigt")
    return s


def test_the_kind_list_offers_the_linear_and_raman_kinds():
    kinds = {v for _, v in KIND_CHOICES}
    assert {"parallel", "perpendicular", "raman_rotational", "raman_vibrational"} <= kinds


def test_assign_from_the_panel_with_a_detector_and_a_fortrat_plot_by_branch(raman_session):
    s = raman_session
    panel = LevelsPanel(s)
    panel.molecule.value = "NN"
    panel.kind.value = "raman_rotational"
    panel.detector.value = "photon_counting"
    panel.assign_button.click()
    step = s.history[-1]
    assert step.kind == "assign_band", panel.status.value
    assert step.params["kind"] == "raman_rotational" and step.params["detector"] == "photon_counting"
    m = np.asarray(panel.fortrat_obs.x, dtype=float)
    y = np.asarray(panel.fortrat_obs.y, dtype=float)
    assert (m > 0).any() and (m < 0).any()  # Stokes and anti-Stokes S lines
    k = np.isfinite(m) & (m != 0)  # S(0) has m = 0
    assert np.all(np.sign(m[k]) == np.sign(y[k]))  # anti-Stokes lines plotted at negative m
    assert "S branch" in panel.plot_legend.value
    assert "temperature" in panel.constants_table.value and "rotational" in panel.constants_table.value


def test_the_detector_is_not_sent_for_infrared_kinds(raman_session):
    panel = LevelsPanel(raman_session)
    panel.kind.value = "parallel"
    panel.detector.value = "energy"
    assert "detector" not in panel.assign_options()


def test_a_new_panel_shows_what_the_last_assignment_was_made_with(raman_session):
    s = raman_session
    s.assign_band(wk.Linear("NN"), kind="raman_rotational", detector="energy")
    panel = LevelsPanel(s)
    assert (panel.molecule.value, panel.kind.value, panel.detector.value) == (
        "NN", "raman_rotational", "energy")
