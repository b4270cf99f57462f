"""Band fit of the 12 remembered H35Cl lines, combination differences and derived constants."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.levels import (
    Diatomic,
    assign_rovibrational,
    combination_differences,
    equilibrium_constants,
    fit_band,
)

# H35Cl 1-0 line positions (HITRAN-type line list values, from memory)
R = [2906.25, 2925.90, 2944.91, 2963.29, 2981.00, 2998.05]  # R(0)..R(5)
P = [2865.10, 2843.63, 2821.57, 2798.94, 2775.77, 2752.04]  # P(1)..P(6)


def _arrays():
    Jl = np.r_[np.arange(6), np.arange(1, 7)]
    Ju = np.r_[np.arange(1, 7), np.arange(0, 6)]
    return Ju, Jl, np.r_[R, P]


def test_twelve_remembered_lines_give_the_listed_constants():
    Ju, Jl, y = _arrays()
    bf = fit_band(Ju, Jl, y, centrifugal="shared")
    v = bf.values
    # computed (least squares of these 12 lines): ν0 = 2885.977, B0 = 10.4399, B1 = 10.1362,
    # D = 5.24e-4, rms 0.0035
    assert v["band_origin"] == pytest.approx(2885.977, abs=5e-4)
    assert v["B_lower"] == pytest.approx(10.4399, abs=5e-5)
    assert v["B_upper"] == pytest.approx(10.1362, abs=5e-5)
    assert v["D_lower"] == pytest.approx(5.24e-4, abs=5e-6)
    assert np.sqrt(np.mean(bf.fit.residuals**2)) == pytest.approx(0.0035, abs=2e-4)


def test_twelve_remembered_lines_are_assigned_without_any_constants():
    df = pd.DataFrame({"line_id": np.arange(12), "position": np.r_[P[::-1], R]})
    res = assign_rovibrational(df.sample(frac=1, random_state=0), Diatomic("1H", "35Cl"),
                               centrifugal="shared")
    got = dict(zip(res.assignments["position"], res.assignments["label"], strict=True))
    assert [got[x] for x in R] == [f"R({j})" for j in range(6)]
    assert [got[x] for x in P] == [f"P({j})" for j in range(1, 7)]
    nu0, e = res.constant("band_origin")
    assert nu0 == pytest.approx(2885.977, abs=5e-4)  # computed (least squares of the 12 lines)
    assert res.constant("B_lower")[0] == pytest.approx(10.4399, abs=5e-5)  # same
    assert res.constant("B_upper")[0] == pytest.approx(10.1362, abs=5e-5)  # same
    assert 0 < e < 0.01  # from the scatter of lines rounded to 0.01 cm-1


def test_combination_differences_agree_with_the_full_fit():
    Ju, Jl, y = _arrays()
    bf = fit_band(Ju, Jl, y, centrifugal="separate")
    rows, consts = combination_differences(Ju, Jl, y, None, bf)
    c = {n: (v, e) for n, v, e, _ in consts}
    lower = [r for r in rows if r["state"] == "lower"]
    # R(J−1) − P(J+1) exists for J = 1..5 with R(0..5), P(1..6) (combination differences, Herzberg 1950)
    assert [r["J"] for r in lower] == [1, 2, 3, 4, 5]
    assert lower[0]["value"] == pytest.approx(R[0] - P[1], abs=1e-12)
    for state in ("lower", "upper"):
        d, e = c[f"B_{state}_cd_diff"]
        assert abs(d) < 3 * e  # the two routes to B agree within the exact error of their difference
    assert c["B_lower_cd"][0] == pytest.approx(10.4399, abs=2e-3)  # computed (least squares, 12 lines)


def test_combination_difference_of_exact_lines_recovers_b_and_d_exactly():
    B, D = 10.4, 5e-4  # self-consistency: exact lines from these made-up constants
    J = np.arange(0, 12)
    F = lambda j, b: b * j * (j + 1) - D * (j * (j + 1)) ** 2  # noqa: E731
    Ju = np.r_[J + 1, J[1:] - 1]
    Jl = np.r_[J, J[1:]]
    y = 2886.0 + F(Ju, B - 0.3) - F(Jl, B)
    bf = fit_band(Ju, Jl, y, centrifugal="separate")
    _, consts = combination_differences(Ju, Jl, y, None, bf)
    c = {n: v for n, v, _, _ in consts}
    assert c["B_lower_cd"] == pytest.approx(B, rel=1e-10)
    assert c["D_lower_cd"] == pytest.approx(D, rel=1e-7)
    assert c["B_upper_cd"] == pytest.approx(B - 0.3, rel=1e-10)


def test_equilibrium_constants_and_bond_length_of_hcl():
    # B0, B1 = 10.43982, 10.13264 (computed from the handbook Be, αe): exact lines, tiny errors
    J = np.arange(0, 10)
    Ju, Jl = np.r_[J + 1, J[1:] - 1], np.r_[J, J[1:]]
    y = 2886.0 + 10.13264 * Ju * (Ju + 1) - 10.43982 * Jl * (Jl + 1)
    bf = fit_band(Ju, Jl, y, np.full(len(y), 1e-4), centrifugal="none")
    c = {n: (v, e) for n, v, e, _ in equilibrium_constants(bf, 1, 0, 0.979592539)}
    assert c["B_e"][0] == pytest.approx(10.59341, abs=1e-5)  # Huber & Herzberg 1979, from memory
    assert c["alpha_e"][0] == pytest.approx(0.30718, abs=1e-5)  # same
    assert c["r_e"][0] == pytest.approx(1.2745522, abs=2e-6)  # computed (scipy.constants, periodictable)
    assert c["r_e"][1] > 0


def test_co_bond_length_from_handbook_be():
    from widgetkit.levels.bandfit import R_E_CONSTANT

    r = np.sqrt(R_E_CONSTANT / (6.85620864 * 1.93128087))
    assert r == pytest.approx(1.1283232, abs=1e-6)  # computed (scipy.constants, periodictable)


def test_too_few_lines_for_the_parameters_is_an_assignment_error():
    with pytest.raises(wk.AssignmentError, match="assign more lines"):
        fit_band([1, 2, 0], [0, 1, 1], [2906.25, 2925.9, 2865.1], centrifugal="separate")
