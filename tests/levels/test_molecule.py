"""Molecules, isotopologues and mass scaling (reduced masses computed from periodictable's AME2020 masses)."""

import numpy as np
import periodictable
import pytest

import widgetkit as wk
from widgetkit.levels import Diatomic, isotope, scale_constants


def test_hcl_has_both_chlorine_isotopologues_named_by_mass_number():
    names = [i.name for i in Diatomic("H", "Cl").isotopologues]
    assert names == ["1H-35Cl", "1H-37Cl"]  # 35Cl and 37Cl are the stable isotopes (common practice)


def test_reduced_masses_come_from_periodictable():
    hcl = Diatomic("H", "Cl").main
    co = Diatomic("C", "O").main
    m1, m35 = periodictable.H[1].mass, periodictable.Cl[35].mass  # reference library (AME2020)
    assert hcl.reduced_mass == pytest.approx(m1 * m35 / (m1 + m35), rel=1e-15)
    # computed, periodictable masses (AME2020)
    assert hcl.reduced_mass == pytest.approx(0.979592539, rel=1e-9)
    assert co.reduced_mass == pytest.approx(6.85620864, rel=1e-9)  # computed, periodictable masses (AME2020)


def test_abundances_are_products_of_natural_abundances():
    h37 = Diatomic("H", "Cl").isotopologue("1H-37Cl")
    want = periodictable.H[1].abundance / 100 * periodictable.Cl[37].abundance / 100  # periodictable
    assert h37.abundance == pytest.approx(want, rel=1e-12)


def test_rare_isotopes_below_min_abundance_are_left_out():
    names = [i.name for i in Diatomic("C", "O").isotopologues]
    assert names == ["12C-16O", "13C-16O"]  # 17O, 18O < 1 % natural abundance (periodictable)
    more = [i.name for i in Diatomic("C", "O", min_abundance=1e-3).isotopologues]
    assert "12C-18O" in more  # 18O is about 0.2 % (periodictable)


def test_named_isotopes_are_taken_as_pure():
    d = Diatomic("D", "35Cl")
    assert [i.name for i in d.isotopologues] == ["2H-35Cl"]
    assert d.main.abundance == 1.0


def test_isotope_ratio_rho_matches_reference():
    hcl = Diatomic("H", "Cl").isotopologues
    co = Diatomic("C", "O").isotopologues
    rho_hcl = np.sqrt(hcl[0].reduced_mass / hcl[1].reduced_mass)
    rho_co = np.sqrt(co[0].reduced_mass / co[1].reduced_mass)
    assert rho_hcl == pytest.approx(0.9992430171, rel=1e-9)  # computed, periodictable masses (AME2020)
    assert rho_co == pytest.approx(0.9777084824, rel=1e-9)  # computed, periodictable masses (AME2020)


def test_mass_scaling_uses_the_textbook_powers_of_rho():
    c = scale_constants({"omega_e": 1.0, "omega_e_x_e": 1.0, "B_e": 1.0, "alpha_e": 1.0,
                         "D_e": 1.0, "other": 5.0}, 0.5)
    # ωe ∝ ρ, ωexe ∝ ρ², Be ∝ ρ², αe ∝ ρ³, D ∝ ρ⁴ (Herzberg, Spectra of Diatomic Molecules, 1950)
    assert c == {"omega_e": 0.5, "omega_e_x_e": 0.25, "B_e": 0.25, "alpha_e": 0.125,
                 "D_e": 0.0625, "other": 5.0}


def test_formula_parsing_and_round_trip():
    assert Diatomic.parse("HCl") == Diatomic("H", "Cl")
    assert Diatomic.parse("N2") == Diatomic("N", "N")
    d = Diatomic("1H", "81Br")
    assert Diatomic.from_dict(d.to_dict()) == d


def test_unknown_atoms_raise_assignment_error_with_a_hint():
    with pytest.raises(wk.AssignmentError, match="element symbol"):
        Diatomic("Xx", "Cl")
    with pytest.raises(wk.AssignmentError, match="mass number"):
        isotope("Cl", 99)
    with pytest.raises(ValueError):  # AssignmentError is also a ValueError
        Diatomic.parse("H2O")


def test_an_isotopologue_is_found_by_the_trades_spellings():
    # isotopologue names as written in spectroscopy texts (common practice): H35Cl, H³⁵Cl, D35Cl
    hcl = Diatomic("H", "Cl")
    assert hcl.isotopologue("H³⁵Cl").name == "1H-35Cl"
    assert hcl.isotopologue("35Cl-1H").name == "1H-35Cl"
    assert hcl.isotopologue("H37Cl").name == "1H-37Cl"
    assert Diatomic("2H", "Cl").isotopologue("D35Cl").name == "2H-35Cl"
    with pytest.raises(wk.AssignmentError, match="single isotopologue"):
        hcl.isotopologue("HCl")  # both chlorine isotopes fit
