"""Infrared line lists of linear molecules: positions from the term values, spin statistics,
Hönl–London factors and the Boltzmann weight of hot bands."""

import numpy as np
import pytest
from scipy import constants as sc

import widgetkit as wk
from widgetkit.simulate import LINEAR_HANDBOOK, linear_line_list, linear_spectrum

C2 = sc.h * sc.c * 100 / sc.k  # second radiation constant, CODATA via scipy
CO2 = LINEAR_HANDBOOK["16O-12C-16O"]  # handbook values, from memory
HCN = LINEAR_HANDBOOK["1H-12C-14N"]  # handbook values, from memory


@pytest.fixture(scope="module")
def co2_lines():
    return linear_line_list(wk.Linear("OCO"), CO2, bands=[("00^01", "00^00"), ("01^11", "01^10")])


def test_co2_nu3_lines_lie_where_the_term_values_put_them(co2_lines):
    main = co2_lines[co2_lines["band"] == "00^01-00^00"].set_index("label")
    u, g = CO2["00^01"], CO2["00^00"]
    F = lambda lev, J: lev["energy"] + lev["B"] * J * (J + 1) - lev["D"] * (J * (J + 1)) ** 2  # noqa: E731
    # R(J): J' = J+1, P(J): J' = J−1 (Herzberg 1945)
    assert main.loc["R(0)", "position"] == pytest.approx(F(u, 1) - F(g, 0), abs=1e-9)
    assert main.loc["P(20)", "position"] == pytest.approx(F(u, 19) - F(g, 20), abs=1e-9)
    assert main.loc["R(0)", "position"] == pytest.approx(2349.14291 + 2 * 0.38714, abs=1e-3)


def test_co2_ground_state_lines_exist_only_for_even_J(co2_lines):
    main = co2_lines[co2_lines["band"] == "00^01-00^00"]
    assert (main["J_lower"] % 2 == 0).all()  # 16O has I = 0 (Herzberg 1945)
    assert "P(1)" not in set(main["label"]) and "R(1)" not in set(main["label"])


def test_the_hot_band_has_the_boltzmann_weight_of_the_doubly_degenerate_bending_level(co2_lines):
    s = co2_lines.groupby("band")["intensity"].sum()
    # 01^10 lies 667.38 cm-1 up and is doubly degenerate (ℓ = ±1); the band strengths are equal
    # here: ratio 2 exp(−c₂ E/T) × ν_hot/ν_main (Herzberg 1945; c₂ from scipy)
    want = 2 * np.exp(-C2 * 667.37998 / 296.0) * 2336.63 / 2349.14
    assert s["01^11-01^10"] / s["00^01-00^00"] == pytest.approx(want, rel=0.01)
    hot = co2_lines[co2_lines["band"] == "01^11-01^10"]
    assert set(hot.loc[hot["branch"] == "R", "J_lower"]) >= set(range(1, 40))  # every J


def test_hcn_bend_has_p_q_r_branches_in_honl_london_ratio():
    lines = linear_line_list(wk.Linear("HCN"), HCN, bands=[("01^10", "00^00")])
    J = 10
    row = {b: lines[(lines["branch"] == b) & (lines["J_lower"] == J)].iloc[0] for b in "PQR"}
    # same lower level: intensities ∝ L · ν (1 − e^{−c₂ν/T}); L = (J+2)/2, (2J+1)/2, (J−1)/2
    # (Herzberg 1950, Hönl–London formulae for ΔΛ = +1)
    red = {b: r["intensity"] / (r["position"] * -np.expm1(-C2 * r["position"] / 296.0))
           for b, r in row.items()}
    assert red["R"] / red["Q"] == pytest.approx((J + 2) / (2 * J + 1), rel=1e-9)
    assert red["P"] / red["Q"] == pytest.approx((J - 1) / (2 * J + 1), rel=1e-9)


def test_perpendicular_q_lines_are_split_by_l_type_doubling():
    lines = linear_line_list(wk.Linear("HCN"), HCN, bands=[("01^10", "00^00")])
    q = lines[lines["branch"] == "Q"].set_index("J_lower")
    r = lines[lines["branch"] == "R"].set_index("J_lower")
    p = lines[lines["branch"] == "P"].set_index("J_lower")
    J = 8
    # R(J−1) and P(J+1) reach the e level J, Q(J) the f level J: R(J−1) − Q(J) = E_e(J) − E_f(J)
    # + F″(J) − F″(J−1) and Q(J) − P(J+1) = F″(J+1) − F″(J) + E_f(J) − E_e(J)
    g = HCN["00^00"]
    F = lambda J: g["B"] * J * (J + 1) - g["D"] * (J * (J + 1)) ** 2  # noqa: E731
    split = (r.loc[J - 1, "position"] - q.loc[J, "position"]) - (F(J) - F(J - 1))
    assert split == pytest.approx(HCN["01^10"]["q"] * J * (J + 1), rel=1e-9)  # our convention
    split2 = (F(J + 1) - F(J)) - (q.loc[J, "position"] - p.loc[J + 1, "position"])
    assert split2 == pytest.approx(split, rel=1e-9)


def test_a_spectrum_records_how_it_was_made_and_is_infrared():
    sp = linear_spectrum(wk.Linear("OCO"), CO2, bands=[("00^01", "00^00")], x_range=(2300, 2400),
                         step=0.01, noise=0.001, seed=3)
    assert sp.meta["technique"] == "infrared" and sp.y_kind == "absorbance"
    assert sp.meta["simulated"]["params"]["molecule"]["atoms"] == ["O", "C", "O"]
    assert sp.y.max() == pytest.approx(1.0, abs=0.05)  # strength = peak absorbance of the tallest line


def test_bad_band_names_and_levels_are_refused_with_the_names():
    with pytest.raises(wk.SimulationError, match="'00\\^02', which is not given"):
        linear_line_list(wk.Linear("OCO"), CO2, bands=[("00^02", "00^00")])
    with pytest.raises(wk.SimulationError, match="inversion"):
        linear_line_list(wk.Linear("HCCH"), {"a": {"energy": 0, "B": 1.17}}, bands=[("a", "a")])
    with pytest.raises(wk.SimulationError, match="no allowed line"):
        linear_line_list(wk.Linear("OCO"), CO2, bands=[("01^11", "00^00")])  # g ← g
