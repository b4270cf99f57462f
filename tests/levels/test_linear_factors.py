"""Term values, selection rules, Hönl–London and Placzek–Teller factors of linear molecules."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.levels import Linear, VibLevel, allowed_lines, honl_london_linear, placzek_teller, term_value


def test_sigma_sigma_honl_london_factors_are_J_plus_1_and_J():
    J = np.arange(1, 30)
    # Σ–Σ: R(J) J+1, P(J) J (Herzberg, Spectra of Diatomic Molecules, 1950)
    assert np.allclose(honl_london_linear(0, 0, J, 1), J + 1)
    assert np.allclose(honl_london_linear(0, 0, J, -1), J)
    assert np.allclose(honl_london_linear(0, 0, J, 0), 0)


def test_pi_sigma_honl_london_factors_follow_the_closed_forms():
    J = np.arange(1, 30)
    # Π←Σ: R (J+2)/2, Q (2J+1)/2, P (J−1)/2 (Herzberg 1950, Hönl–London formulae, ΔΛ = +1)
    assert np.allclose(honl_london_linear(0, 1, J, 1), (J + 2) / 2)
    assert np.allclose(honl_london_linear(0, 1, J, 0), (2 * J + 1) / 2)
    assert np.allclose(honl_london_linear(0, 1, J, -1), (J - 1) / 2)


def test_hönl_london_sum_rule_holds_for_parallel_bands_of_any_l():
    # sum over branches from one lower level = 2J+1 for ΔΛ = 0 (Herzberg 1950, sum rule)
    for l in (0, 1, 2):
        J = np.arange(max(l, 1), 40)
        total = sum(honl_london_linear(l, l, J, d) for d in (-1, 0, 1))
        assert np.allclose(total, 2 * J + 1)


def test_placzek_teller_factors_follow_the_closed_forms_and_sum_to_one():
    J = np.arange(0, 40)
    s = placzek_teller(J, 2)
    # S(J): 3(J+1)(J+2)/(2(2J+1)(2J+3)) (Placzek & Teller 1933)
    assert np.allclose(s, 3 * (J + 1) * (J + 2) / (2 * (2 * J + 1) * (2 * J + 3)))
    Jq = J[1:]
    total = placzek_teller(Jq, 2) + placzek_teller(Jq, 0) + placzek_teller(Jq, -2)
    assert np.allclose(total, 1.0)  # sum rule of the Placzek–Teller coefficients (Long 2002)
    # detailed balance: (2J+1) b(J→J+2) = (2J+5) b(J+2→J) (same matrix element both ways)
    assert np.allclose((2 * J + 1) * s, (2 * J + 5) * placzek_teller(J + 2, -2))
    assert placzek_teller(0, 0) == 0 and placzek_teller(1, -2) == 0  # Q(0), O(1) have no anisotropic part


def test_l_type_doubling_puts_e_above_f_by_q_J_J_plus_1():
    lev = VibLevel("01^10", 667.38, 0.39064, 1.35e-7, l=1, q=6e-4)
    J = np.arange(1, 20)
    split = term_value(lev, J, "e") - term_value(lev, J, "f")
    assert np.allclose(split, 6e-4 * J * (J + 1))  # our stated convention
    # F(J) = G + B[J(J+1) − ℓ²] − D[...]² (Herzberg 1945); J = 0 does not exist for ℓ = 1
    mean = 0.5 * (term_value(lev, J, "e") + term_value(lev, J, "f"))
    x = J * (J + 1) - 1
    assert np.allclose(mean, 667.38 + 0.39064 * x - 1.35e-7 * x**2)
    assert np.isnan(term_value(lev, 0, "e"))


def _co2_levels():
    iso = Linear("OCO").main
    mk = lambda name, e, b, **kw: VibLevel.from_mapping(name, dict(energy=e, B=b, **kw),  # noqa: E731
                                                        centrosymmetric=True)
    return iso, mk("00^00", 0, 0.3902), mk("00^01", 2349.1, 0.3871), mk("01^10", 667.4, 0.3906, q=6e-4), \
        mk("01^11", 3004.0, 0.3875, q=6e-4)


def test_co2_fundamentals_have_only_even_lower_J_and_the_bend_has_a_q_branch():
    iso, g, v3, v2, hot = _co2_levels()
    assert (v3.inversion, v2.inversion, hot.inversion) == ("u", "u", "g")  # (−1)^(v2+v3) (Herzberg 1945)
    par = allowed_lines(g, v3, iso, 20)
    assert set(par.branch) == {"P", "R"} and np.all(par.J_lower % 2 == 0)
    perp = allowed_lines(g, v2, iso, 20)
    assert set(perp.branch) == {"P", "Q", "R"} and np.all(perp.J_lower % 2 == 0)
    # P and R reach the e levels of the Π state, Q the f levels (parity + ↔ −, Brown et al. 1975)
    assert set(perp.comp_upper[perp.branch == "Q"]) == {"f"}
    assert set(perp.comp_upper[perp.branch != "Q"]) == {"e"}
    assert "P(2)" in {f"{b}({j})" for b, j in zip(perp.branch, perp.J_lower)}
    assert 1 not in set(perp.J_upper[perp.branch == "P"]) or 2 in set(perp.J_lower)


def test_co2_hot_band_has_lines_from_every_J_alternating_e_and_f():
    iso, g, v3, v2, hot = _co2_levels()
    lines = allowed_lines(v2, hot, iso, 12)
    pr = lines.branch != "Q"
    J = lines.J_lower[pr]
    comp = lines.comp_lower[pr]
    assert set(J) == set(range(1, 13))  # every J ≥ 1 of the Π level carries lines
    # only one e/f component exists at each J (16O has I = 0): e at odd J, f at even J
    assert set(comp[J % 2 == 1]) == {"e"} and set(comp[J % 2 == 0]) == {"f"}


def test_raman_lines_keep_parity_and_infrared_lines_change_it():
    iso, g, v3, v2, hot = _co2_levels()
    ram = allowed_lines(g, g, iso, 10, process="raman")
    assert set(ram.branch) == {"O", "Q", "S"}
    assert len(allowed_lines(g, v3, iso, 10, process="raman")) == 0  # g ↔ u is Raman-forbidden
    assert len(allowed_lines(g, g, iso, 10)) == 0  # g ↔ g is infrared-forbidden
    with pytest.raises(wk.AssignmentError, match="Σ levels only"):
        allowed_lines(g, v2, iso, 10, process="raman")


def test_nitrogen_raman_lines_carry_the_two_to_one_spin_weights():
    iso = Linear("N2").main
    g = VibLevel("v=0", 0.0, 1.98957, inversion="g")
    s = allowed_lines(g, g, iso, 10, process="raman")
    sel = s.branch == "S"
    w = dict(zip(s.J_lower[sel], s.weight[sel]))
    assert w[0] / w[1] == 2 and w[2] / w[3] == 2  # 14N2 even:odd = 2:1 (Herzberg 1950)


def test_a_level_needs_its_inversion_symmetry_in_a_centrosymmetric_molecule():
    with pytest.raises(wk.AssignmentError, match="inversion"):
        VibLevel.from_mapping("v3", {"energy": 3294.8, "B": 1.17}, centrosymmetric=True)
    with pytest.raises(wk.AssignmentError, match="unknown field"):
        VibLevel.from_mapping("00^01", {"energy": 1.0, "B": 1.0, "Bee": 2}, centrosymmetric=True)
