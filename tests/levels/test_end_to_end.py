"""Headless path spectrum -> peaks -> lines -> assignments -> constants through the session,
on a spectrum simulated by widgetkit.simulate from the handbook constants of H35Cl
(Huber & Herzberg 1979, handbook values from memory)."""

import numpy as np
import pytest

import widgetkit as wk


@pytest.fixture(scope="module")
def session():
    hcl = wk.Diatomic("H", "Cl")
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items() if k != "r_e"}
    sp = wk.simulate.rovibrational(hcl, c, x_range=(2600, 3150), step=0.02, seed=1,
                                   noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    s.assign_band(hcl, temperature=296.0)
    return s, c


def _const(s, iso, name):
    row = s.constants[(s.constants["isotopologue"] == iso) & (s.constants["name"] == name)]
    return float(row["value"].iloc[0]), float(row["stderr"].iloc[0])


def test_both_isotopologue_sub_bands_are_found_with_p_and_r_branches(session):
    s, _ = session
    a = s.assignments
    assert set(a["isotopologue"].dropna()) == {"1H-35Cl", "1H-37Cl"}
    labels = set(a.loc[a["isotopologue"] == "1H-35Cl", "label"])
    assert {"R(0)", "P(1)"} <= labels and not any(lab.startswith("Q") for lab in labels)


def test_constants_agree_with_those_simulated(session):
    s, c = session
    # band constants implied by the simulated equilibrium constants (with γe), self-consistency
    G = wk.levels.vib_term([0, 1], c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])
    Bv = wk.levels.rot_constant([0, 1], c["B_e"], c["alpha_e"], c["gamma_e"])
    want = {"band_origin": G[1] - G[0], "B_lower": Bv[0], "B_upper": Bv[1]}
    for name, v in want.items():
        got, err = _const(s, "1H-35Cl", name)
        assert abs(got - v) < max(4 * err, 1e-4), (name, got, v, err)


def test_bond_length_and_rotational_temperature(session):
    s, _ = session
    r, _ = _const(s, "1H-35Cl", "r_e")
    assert r == pytest.approx(1.27455, abs=2e-4)  # handbook value, from memory (γe shifts B_e)
    t, e = _const(s, "1H-35Cl", "T_rot")
    assert t == pytest.approx(296.0, rel=0.01) and e > 0  # simulated at 296 K


def test_the_session_replays_to_the_same_assignment(session):
    s, _ = session
    report = s.verify()
    assert report.ok, report.mismatches


def test_a_manual_assignment_is_locked_and_wins(session):
    s, _ = session
    a = s.assignments
    lid = int(a.loc[(a["isotopologue"] == "1H-35Cl") & (a["label"] == "R(3)"), "line_id"].iloc[0])
    s.set_assignment(lid, isotopologue="1H-35Cl", label="R(3)")
    b = s.assignments.set_index("line_id")
    assert b.loc[lid, "locked"] and b.loc[lid, "label"] == "R(3)"
    assert np.isfinite(b["calc"]).sum() >= len(b) - 2
