"""The Levels panel's joint isotopologue fit: offered only when the assignment has lines of two
or more isotopologues, passed to assign_band, its mass-independent constants shown apart.

Spectra come from our own simulator (widgetkit.simulate, handbook constants of H-35Cl scaled to
the natural isotopologues): self-consistency use only.
"""

import pytest

import widgetkit as wk
from widgetkit.widgets import LevelsPanel

HCL = wk.Diatomic("H", "Cl")


@pytest.fixture(scope="module")
def two_isotopologues():
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items()
         if k not in ("r_e", "omega_e_y_e", "gamma_e")}
    return wk.simulate.rovibrational(HCL, c, x_range=(2600, 3150), step=0.02, seed=5,
                                     noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)


@pytest.fixture
def fitted_pair(two_isotopologues):
    s = wk.Session(two_isotopologues)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    return s


def test_the_joint_fit_is_offered_only_after_two_isotopologues_were_assigned(fitted_pair):
    panel = LevelsPanel(fitted_pair)
    panel.molecule.value = "HCl"
    assert panel.joint.disabled and "press Assign first" in panel.joint.tooltip
    panel.assign_button.click()
    assert panel.last_error is None, panel.status.value
    assert not panel.joint.disabled and "H³⁷Cl" in panel.joint.tooltip
    assert "joint" not in panel.assign_options()  # unchecked: not asked for
    panel.kind.value = "progression"
    assert panel.joint.disabled and panel.joint.tooltip == "only for a rovibrational band"
    panel.kind.value = "rovibrational"
    assert not panel.joint.disabled


def test_assign_with_the_joint_fit_records_it_and_shows_the_mass_independent_set(fitted_pair):
    panel = LevelsPanel(fitted_pair)
    panel.molecule.value = "HCl"
    panel.assign_button.click()
    panel.joint.value = True
    assert panel.assign_options()["joint"] is True
    panel.assign_button.click()
    assert panel.last_error is None, panel.status.value
    step = fitted_pair.history[-1]
    assert step.kind == "assign_band" and step.params["joint"] is True
    assert "(joint isotopologue fit)" in panel.status.value
    html = panel.constants_table.value
    main, _, joint = html.partition("wk-joint-heading")
    assert "mass-independent" not in main and "wk-joint-constants" in joint
    assert "joint fit of H³⁵Cl, H³⁷Cl, reference H³⁵Cl" in joint
    for name in ("U_10", "U_20", "U_01", "U_11", "r_e"):
        assert f"<td>{name}</td>" in joint
    assert "<td>cm⁻¹ u^1/2</td>" in joint  # the unit as recorded, cm⁻¹ written as the trade does
    assert panel.joint.value is True  # the control shows what the assignment was made with


def test_one_isotopologue_never_gets_the_joint_fit(session):
    session.find_peaks(min_snr=10.0)
    session.fit_lines(shape="lorentzian")
    panel = LevelsPanel(session)  # 1H-35Cl only
    panel.molecule.value = "1H35Cl"
    panel.assign_button.click()
    assert panel.joint.disabled and "(now 1)" in panel.joint.tooltip
    panel.joint.value = True  # a front end that ignores disabled
    assert "joint" not in panel.assign_options()
    assert "wk-joint-constants" not in panel.constants_table.value


def test_a_read_only_panel_and_a_reopened_session_keep_the_control_right(fitted_pair, tmp_path):
    fitted_pair.assign_band(HCL, temperature=296.0, joint=True)
    assert LevelsPanel(fitted_pair, read_only=True).joint.disabled
    fitted_pair.save(tmp_path / "joint.json")
    again = LevelsPanel(wk.Session.load(tmp_path / "joint.json"))
    assert again.joint.value is True and not again.joint.disabled
    assert "wk-joint-constants" in again.constants_table.value


def test_the_constants_view_follows_a_band_model_and_shows_method_and_fixed_note(session):
    session.find_peaks(min_snr=10.0)
    session.fit_lines(shape="lorentzian")
    hcl = wk.Diatomic("1H", "35Cl")
    session.assign_band(hcl, temperature=296.0)
    panel = LevelsPanel(session)
    assert "band model" not in panel.constants_table.value
    assert "<th>method</th>" not in panel.constants_table.value  # one route: no column for it
    session.fit_band_model(hcl, resolution=0.5, isotopologues="main", fix={"temperature": 296.0})
    html = panel.constants_table.value  # re-rendered although lines and assignment are unchanged
    assert "<th>method</th>" in html and "<td>band model</td>" in html
    t_rot = [r for r in html.split("<tr") if "T_rot" in r and "band model" in r]
    assert len(t_rot) == 1 and "fixed (not fitted)" in t_rot[0] and "296" in t_rot[0]
