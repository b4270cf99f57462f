"""Plausibility checks before an assignment is accepted: each rule refuses or marks the result
doubtful, and each test fails without its rule. Sources are named beside the check values."""

import math

import numpy as np
import pandas as pd
import periodictable
import pytest
from scipy import constants as sc

import widgetkit as wk
from widgetkit.levels import Diatomic, assign_rovibrational, fit_progression, plausibility
from widgetkit.levels._lsq import weighted_lstsq

from .synth import CO, HCL, every_other_line_band, line_list

#: HBr-like constants, from memory (used for self-consistency only)
HBR = {"omega_e": 2649.0, "omega_e_x_e": 45.2, "B_e": 8.465, "alpha_e": 0.233, "D_e": 3.46e-4}

HCL_MOL = Diatomic("H", "Cl")
CO_MOL = Diatomic("C", "O")
#: CO2 ν3 band (00⁰1–00⁰0) and its hot band (01¹1–01¹0): band origins and B in cm-1,
#: handbook values from memory (Herzberg, *Infrared and Raman Spectra*, 1945)
CO2_V3 = dict(band_origin=2349.143, B_lower=0.39022, B_upper=0.38714)
CO2_HOT = dict(band_origin=2336.632, B_lower=0.39064, B_upper=0.38759, scale=0.08)


@pytest.fixture(scope="module")
def hcl_lines():
    return line_list(HCL_MOL, HCL, J_max=10, sigma=0.003, area_noise=0.02, seed=41)


# ---------------------------------------------------------------- what kind of spectrum it is
def test_a_raman_spectrum_is_refused_p_and_r_labels(hcl_lines):
    with pytest.raises(wk.AssignmentError, match="Raman spectrum.*raman_vibrational"):
        assign_rovibrational(hcl_lines, HCL_MOL, technique="raman")
    # an x axis of Raman shifts says so too (the readers' typed metadata)
    ctx = plausibility.spectrum_context({"x_axis": "raman_shift"})
    assert ctx["technique"] == "raman"
    with pytest.raises(wk.AssignmentError, match="O, Q and S branches"):
        assign_rovibrational(hcl_lines, HCL_MOL, **ctx)


@pytest.mark.parametrize("state", ["liquid", "solid"])
def test_a_condensed_sample_is_refused_rotational_assignment(hcl_lines, state):
    with pytest.raises(wk.AssignmentError, match=f"sample is a {state}.*kind='progression'"):
        assign_rovibrational(hcl_lines, HCL_MOL, sample_state=state)
    assert plausibility.spectrum_context({"sample_state": "Liquid"})["sample_state"] == "liquid"


def test_a_homonuclear_molecule_has_no_infrared_band(hcl_lines):
    # no electric dipole moment, no infrared rovibrational band (Herzberg, Spectra of Diatomic
    # Molecules, ch. III; from memory); positions are those of HCl, the molecule says N2
    with pytest.raises(wk.AssignmentError, match="homonuclear"):
        assign_rovibrational(hcl_lines[["line_id", "position", "position_err"]], Diatomic("N", "N"))


def test_a_raman_like_band_with_twice_the_spacing_does_not_give_a_confident_b():
    # O and S branches of vibrational Raman scattering are 4B apart (ΔJ = ±2; Herzberg); read
    # as P and R lines of HCl they give about twice B, outside the handbook range (from memory)
    B0 = HCL["B_e"] - HCL["alpha_e"] / 2
    B1 = HCL["B_e"] - 1.5 * HCL["alpha_e"]
    nu0 = 2885.98  # H35Cl 1-0 band origin, handbook value from memory
    rows = [nu0 + B1 * (J + 2) * (J + 3) - B0 * J * (J + 1) for J in range(0, 9)]
    rows += [nu0 + B1 * (J - 2) * (J - 1) - B0 * J * (J + 1) for J in range(2, 11)]
    df = pd.DataFrame({"line_id": np.arange(len(rows)), "position": np.sort(rows),
                       "position_err": 0.003})
    try:
        res = assign_rovibrational(df, Diatomic("1H", "35Cl"))
    except wk.AssignmentError as exc:
        assert "handbook" in str(exc) or "band-origin gap" in str(exc)
    else:  # pragma: no cover - what must not happen
        c = res.constants.set_index("name")["value"]
        pytest.fail(f"accepted B_lower = {c['B_lower']} with status {res.status}")


# ---------------------------------------------------------------- resolution
def test_lines_wider_than_the_rotational_spacing_are_refused_with_the_contour_pointer():
    df = line_list(Diatomic("12C", "16O"), CO, J_max=20, sigma=0.01, seed=2)
    df["fwhm"] = 5.0  # wider than B′ + B″ ≈ 3.83 cm-1 (handbook B_e of CO, from memory)
    with pytest.raises(wk.AssignmentError, match="not below the rotational line spacing") as err:
        assign_rovibrational(df, CO_MOL)
    msg = str(err.value)
    assert "s.fit_band_model" in msg and "2.358 √(B T)" in msg
    df["fwhm"] = 0.1
    with pytest.raises(wk.AssignmentError, match="instrument resolution, 4"):
        assign_rovibrational(df, CO_MOL, resolution=4.0)
    assert assign_rovibrational(df, CO_MOL, resolution=0.5).status == "ok"


def test_without_a_handbook_entry_the_fitted_spacing_is_the_measure():
    # HBr is not in wk.simulate.HANDBOOK: the check uses the fitted B′ + B″ ≈ 16.5 cm-1
    mol = Diatomic("1H", "79Br")
    df = line_list(mol, HBR, J_max=12, sigma=0.003, seed=4)
    assert plausibility.expected_B(mol.main) is None
    df["fwhm"] = 18.0
    with pytest.raises(wk.AssignmentError, match="B′ \\+ B″ of the assigned lines"):
        assign_rovibrational(df, mol)
    df["fwhm"] = 0.2
    assert assign_rovibrational(df, mol).status == "ok"


def test_the_p_r_separation_estimate():
    # Δν_PR = √(8kTB/(hc)) (Herzberg, from memory), k/(hc) from scipy.constants
    kT = sc.k / (sc.h * sc.c * 100.0)
    assert plausibility.expected_pr_separation(1.93, 296.0) == pytest.approx(
        math.sqrt(8 * kT * 1.93 * 296))
    # Herzberg (1950) prints 2.3583 (from memory); recomputed from CODATA constants
    assert plausibility.PR_COEFFICIENT == pytest.approx(2.3583, abs=5e-4)


def test_one_implementation_of_the_p_r_formula_serves_levels_and_the_band_model():
    from widgetkit.bandmodel import quick
    from widgetkit.levels import contour

    assert quick.PR_COEFFICIENT is contour.PR_COEFFICIENT
    assert quick.rotational_constant_from_separation is contour.rotational_constant_from_separation
    assert plausibility.expected_pr_separation is contour.expected_pr_separation
    assert not hasattr(plausibility, "pr_separation")
    # round trip: B from the separation expected for B (same formula both ways)
    d = contour.expected_pr_separation(1.93, 296.0)
    assert contour.rotational_constant_from_separation(d, 296.0) == pytest.approx(1.93, rel=1e-12)


# ---------------------------------------------------------------- rotational constants
def test_a_rotational_constant_must_be_positive():
    iso = Diatomic("12C", "32S").main  # not in the handbook: only the sign is checked
    assert plausibility.rotational_problems({"B_lower": 0.8, "B_upper": 0.79}, iso, (1, 0)) == []
    probs = plausibility.rotational_problems({"B_lower": -0.8, "B_upper": 0.79}, iso, (1, 0))
    assert len(probs) == 1 and "not positive" in probs[0]


def test_b_far_from_the_mass_scaled_handbook_value_is_refused():
    # a CO2-like band (every other line, 4B apart) named CO: B ≈ 0.3 against 1.92 cm-1
    df = every_other_line_band(**CO2_V3, hot=CO2_HOT)
    with pytest.raises(wk.AssignmentError, match="impossible constants.*handbook"):
        assign_rovibrational(df, CO_MOL)
    # the handbook B_0 of 13C16O: B_e scaled by ρ², α_e by ρ³, ρ² = μ(12C16O)/μ(13C16O)
    # (Herzberg's isotope relations; periodictable masses)
    c13 = Diatomic("13C", "16O").main
    B, key = plausibility.expected_B(c13, 0)
    rho2 = CO_MOL.main.reduced_mass / c13.reduced_mass
    assert key == "12C-16O"
    assert B == pytest.approx(CO["B_e"] * rho2 - CO["alpha_e"] * rho2**1.5 / 2, rel=1e-12)
    # DCl is scaled from the HCl entry in the same way
    assert plausibility.expected_B(Diatomic("2H", "35Cl").main)[1] == "1H-35Cl"


def test_a_polyatomic_band_does_not_invent_an_isotopologue_with_an_ok_status():
    # the same CO2-like lines named CS (not in the handbook): whatever sub-bands are found, the
    # result is doubtful, never an ok isotopologue ratio far from natural abundance
    df = every_other_line_band(**CO2_V3, hot=CO2_HOT)
    try:
        res = assign_rovibrational(df, Diatomic("C", "S"))
    except wk.AssignmentError:
        return
    assert res.status == "doubtful" and res.reasons


def test_handbook_omega_e_refuses_a_progression_of_another_molecule():
    # HCl band centres 1-0, 2-0, 3-0 (handbook constants, from memory) named CO
    G = lambda v: wk.levels.vib_term(v, HCL["omega_e"], HCL["omega_e_x_e"])  # noqa: E731
    x = [G(v) - G(0) for v in (1, 2, 3)]
    with pytest.raises(wk.AssignmentError, match="plausible ωe for 12C-16O"):
        fit_progression(x, uncertainties=[0.01] * 3, molecule=CO_MOL)
    assert fit_progression(x, uncertainties=[0.01] * 3, molecule=HCL_MOL).status == "ok"


# ---------------------------------------------------------------- intensities
def test_an_isotopologue_far_from_natural_abundance_is_doubtful(hcl_lines):
    nat = (periodictable.Cl[37].abundance / periodictable.Cl[35].abundance)  # IUPAC via periodictable
    ok = assign_rovibrational(hcl_lines, HCL_MOL, temperature=296.0)
    assert ok.status == "ok", ok.reasons
    assert ok.constant("abundance_ratio", "1H-37Cl")[0] == pytest.approx(nat, rel=0.1)
    rich = hcl_lines.copy()
    rich.loc[rich["iso"] == "1H-37Cl", "area"] *= 6.0  # a 37Cl-enriched sample, invented
    res = assign_rovibrational(rich, HCL_MOL, temperature=296.0)
    assert res.status == "doubtful"
    assert any("1H-37Cl" in r and "natural abundance" in r for r in res.reasons)


def test_a_rotational_temperature_far_from_the_one_given_is_doubtful(hcl_lines):
    # the lines were simulated at 296 K; the analyst says 900 K (more than twice as hot)
    res = assign_rovibrational(hcl_lines, HCL_MOL, temperature=900.0)
    assert any("rotational temperature" in r and "900 K" in r for r in res.reasons)
    # a first guess somewhat off (450 K) is no reason for doubt: the areas measure T
    assert assign_rovibrational(hcl_lines, HCL_MOL, temperature=450.0).status == "ok"


def test_lines_that_scatter_far_beyond_their_stated_errors_are_doubtful():
    df = line_list(Diatomic("1H", "35Cl"), HCL, J_max=10, sigma=0.02, seed=5)
    df["position_err"] = 0.002  # stated ten times too small (invented)
    res = assign_rovibrational(df, Diatomic("1H", "35Cl"))
    assert res.status == "doubtful"
    assert any("scatter" in r and "stated position errors" in r for r in res.reasons)


# ---------------------------------------------------------------- hot bands
def _co_bands():
    G = lambda v: wk.levels.vib_term(v, CO["omega_e"], CO["omega_e_x_e"])  # noqa: E731
    return np.array([G(1) - G(0), G(2) - G(1)])  # 1-0 and 2-1 (handbook constants, from memory)


def test_the_boltzmann_factor_of_a_hot_band():
    x = _co_bands()
    g1 = x[0]  # G(1) − G(0)
    c2 = sc.h * sc.c * 100.0 / sc.k  # second radiation constant, scipy.constants
    # harmonic |<2|q|1>|² = 2 |<1|q|0>|² (reference/diatomics.md formula checks: ⟨v|q|v+1⟩ = √((v+1)/2))
    want = 2 * math.exp(-c2 * g1 / 296.0) * x[1] / x[0]
    assert plausibility.hot_band_ratio(2, 1, g1, x[1], x[0], 296.0) == pytest.approx(want)


def test_a_hot_band_as_strong_as_the_fundamental_is_doubtful_at_room_temperature():
    x = _co_bands()
    res = fit_progression(x, uncertainties=[0.01, 0.01], molecule=CO_MOL, areas=[1.0, 0.9],
                          temperature=296.0)
    assert res.status == "doubtful"
    assert any("hot band 2-1" in r and "Boltzmann factor at 296 K" in r for r in res.reasons)
    # without a temperature: the implied population needs thousands of kelvin
    res = fit_progression(x, uncertainties=[0.01, 0.01], molecule=CO_MOL, areas=[1.0, 0.9])
    assert any("hot band 2-1" in r and "needs" in r for r in res.reasons)


def test_a_hot_band_at_its_boltzmann_strength_is_accepted():
    # 1-0, 2-1, 2-0, 3-1 at 1500 K, areas from the harmonic estimate itself (self-consistency)
    G = lambda v: wk.levels.vib_term(v, CO["omega_e"], CO["omega_e_x_e"])  # noqa: E731
    lab = [(1, 0), (2, 1), (2, 0), (3, 1)]
    x = np.array([G(a) - G(b) for a, b in lab])
    areas = np.array([1.0, plausibility.hot_band_ratio(2, 1, G(1) - G(0), x[1], x[0], 1500.0),
                      0.01, 0.01 * plausibility.hot_band_ratio(3, 1, G(1) - G(0), x[3], x[2],
                                                               1500.0)])
    res = fit_progression(x, uncertainties=[0.01] * 4, molecule=CO_MOL, areas=areas,
                          temperature=1500.0)
    assert [lbl for lbl in res.assignments["label"]] == ["1-0", "2-1", "2-0", "3-1"]
    assert not any("hot band" in r for r in res.reasons), res.reasons


def test_a_hot_band_without_its_cold_partner_is_doubtful():
    x = _co_bands()[1:]
    G = lambda v: wk.levels.vib_term(v, CO["omega_e"], CO["omega_e_x_e"])  # noqa: E731
    res = fit_progression([x[0], G(3) - G(1)], uncertainties=[0.01, 0.01], molecule=CO_MOL,
                          locks={0: (2, 1), 1: (3, 1)})
    assert any("2-1" in r and "1-0" in r and "not among the bands" in r for r in res.reasons)


# ---------------------------------------------------------------- degrees of freedom
def test_as_many_data_as_parameters_give_no_uncertainties():
    f = weighted_lstsq(np.array([[1.0, 0.0], [0.0, 1.0]]), [1.0, 2.0], [0.1, 0.1])
    assert f.dof == 0 and np.isnan(f.stderr).all()
    x = _co_bands()[:1].tolist() + [wk.levels.vib_term(2, CO["omega_e"], CO["omega_e_x_e"])
                                     - wk.levels.vib_term(0, CO["omega_e"], CO["omega_e_x_e"])]
    res = fit_progression(x, uncertainties=[0.01, 0.01], molecule=CO_MOL)
    c = res.constants.set_index("name")
    assert c.loc["omega_e", "value"] == pytest.approx(CO["omega_e"], rel=1e-9)  # exact solution
    assert c["stderr"].isna().all()
    assert res.status == "doubtful"
    assert any("nothing tests it" in r for r in res.reasons)


def test_rotational_lines_read_as_band_centres_are_doubtful(hcl_lines):
    # forty P and R lines are not a progression: most cannot be labelled (self-consistency)
    res = wk.levels.assign_progression(hcl_lines, HCL_MOL)
    assert res.status == "doubtful"
    assert any("band centres fit one progression" in r for r in res.reasons)
