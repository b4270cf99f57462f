"""Progressions: labelling fundamental, overtones and hot bands; ωe, ωexe and derived constants."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.levels import (
    Diatomic,
    assign_progression,
    birge_sponer,
    fit_progression,
    vib_term,
)

from .synth import CO, HCL

H35CL = Diatomic("1H", "35Cl")


def _bands(c, labels):
    G = lambda v: vib_term(v, c["omega_e"], c["omega_e_x_e"], c.get("omega_e_y_e", 0.0))  # noqa: E731
    return np.array([G(a) - G(b) for a, b in labels])


def test_two_term_constants_of_hcl_give_the_reference_derived_values():
    two = {"omega_e": HCL["omega_e"], "omega_e_x_e": HCL["omega_e_x_e"]}
    x = _bands(two, [(1, 0), (2, 0), (3, 0)])
    p = fit_progression(x, uncertainties=np.full(3, 0.01), molecule=H35CL)
    c = p.constants.set_index("name")
    assert list(p.assignments["label"]) == ["1-0", "2-0", "3-0"]
    assert c.loc["omega_e", "value"] == pytest.approx(2990.946, abs=1e-6)  # what went in
    assert c.loc["force_constant", "value"] == pytest.approx(516.31, abs=0.01)  # 4π²c²μωe², computed
    assert c.loc["force_constant", "unit"] == "N/m"
    assert c.loc["D_e_morse", "value"] == pytest.approx(42341.89, abs=0.01)  # ωe²/(4ωexe), computed
    assert c.loc["D_0_birge_sponer", "value"] == pytest.approx(40859.62, abs=0.01)  # same
    assert c.loc["zero_point", "value"] == pytest.approx(1482.26835, abs=1e-5)  # Morse G(0), computed


def test_co_force_constant_and_morse_depth():
    two = {"omega_e": CO["omega_e"], "omega_e_x_e": CO["omega_e_x_e"]}
    x = _bands(two, [(1, 0), (2, 0), (3, 0)])
    p = fit_progression(x, uncertainties=np.full(3, 0.01), molecule=Diatomic("12C", "16O"))
    c = p.constants.set_index("name")["value"]
    # computed (scipy.constants, periodictable)
    assert c["force_constant"] == pytest.approx(1901.86, abs=0.01)
    assert c["D_e_morse"] == pytest.approx(88575.80, abs=0.01)  # computed (scipy.constants, periodictable)


def test_shuffled_fundamental_overtones_and_hot_bands_are_labelled():
    labels = [(3, 0), (2, 1), (1, 0), (4, 0), (3, 2), (2, 0), (5, 0), (3, 1)]
    x = _bands(HCL, labels)
    p = fit_progression(x, uncertainties=np.full(8, 0.02), molecule=H35CL)
    assert list(zip(p.assignments["v_upper"], p.assignments["v_lower"], strict=True)) == labels
    kinds = dict(zip(p.assignments["label"], p.assignments["kind"], strict=True))
    assert kinds["1-0"] == "fundamental" and kinds["4-0"] == "overtone" and kinds["3-2"] == "hot"
    c = p.constants.set_index("name")
    for name in ("omega_e", "omega_e_x_e", "omega_e_y_e"):  # handbook, from memory, went in
        assert c.loc[name, "value"] == pytest.approx(HCL[name], abs=1e-6)


def test_the_numbering_prefers_the_fundamental_over_a_relabelled_series():
    x = _bands(HCL, [(1, 0), (2, 0), (3, 0), (4, 0)])
    p = fit_progression(x, uncertainties=np.full(4, 0.01))
    assert list(p.assignments["label"]) == ["1-0", "2-0", "3-0", "4-0"]
    assert p.constants["isotopologue"].eq("").all()
    assert "force_constant" not in set(p.constants["name"])  # no molecule, no reduced mass


def test_noisy_band_centres_are_fitted_within_their_errors():
    rng = np.random.default_rng(3)
    labels = [(1, 0), (2, 0), (3, 0), (4, 0), (5, 0), (2, 1)]
    two = {"omega_e": HCL["omega_e"], "omega_e_x_e": HCL["omega_e_x_e"]}
    s = 0.05
    x = _bands(two, labels) + rng.normal(0, s, len(labels))
    p = fit_progression(x, uncertainties=np.full(len(x), s), n_terms=2)
    c = p.constants.set_index("name")
    for name in ("omega_e", "omega_e_x_e"):
        assert abs(c.loc[name, "value"] - two[name]) < 3 * c.loc[name, "stderr"]


def test_an_impurity_band_is_flagged_as_outlier():
    labels = [(1, 0), (2, 0), (3, 0), (4, 0), (5, 0)]
    x = np.r_[_bands(HCL, labels), 0.0]
    x[-1] = x[1] + 7.0  # invented stray band near the first overtone
    p = fit_progression(x, uncertainties=np.full(len(x), 0.02), n_terms=3)
    assert p.assignments["outlier"].sum() == 1
    assert any("outlier" in m for m in p.messages)


def test_birge_sponer_convention_for_two_terms():
    we, wx = 2990.946, 52.8186
    # Birge–Sponer area, two-term G(v) (Herzberg 1950)
    assert birge_sponer(we, wx) == pytest.approx((we - wx) ** 2 / (4 * wx), rel=1e-12)
    # computed (scipy.constants, periodictable)
    assert birge_sponer(we, wx) == pytest.approx(40859.62, abs=0.01)


def test_lines_table_and_locks_through_assign_progression():
    x = _bands(HCL, [(1, 0), (2, 0), (3, 0)])
    df = pd.DataFrame({"line_id": [7, 8, 9], "position": x, "position_err": 0.01})
    p = assign_progression(df, H35CL)
    assert list(p.assignments["line_id"]) == [7, 8, 9]
    locked = assign_progression(df, H35CL, locks={7: {"label": "2-1"}})
    assert locked.assignments.set_index("line_id").loc[7, "label"] == "2-1"
    with pytest.raises(wk.AssignmentError, match="contradictory locks"):
        assign_progression(df, H35CL, locks={7: {"label": "1-0"}, 8: {"v_upper": 1, "v_lower": 0}})


def test_bad_progression_input():
    with pytest.raises(wk.AssignmentError, match="at least 2"):
        fit_progression([2886.0])
    with pytest.raises(wk.AssignmentError, match="finite"):
        fit_progression([2886.0, np.nan])
    with pytest.raises(wk.AssignmentError, match="uncertainties"):
        fit_progression([2886.0, 5668.0], uncertainties=[0.1])


def test_the_morse_range_parameter_follows_from_omega_e_and_the_well_depth():
    import scipy.constants as sc

    from widgetkit.levels import vib_term

    # handbook values, from memory (Huber & Herzberg 1979): H35Cl two-term G(v)
    we, wexe = 2990.946, 52.8186
    bands = [float(vib_term(v, we, wexe) - vib_term(0, we, wexe)) for v in (1, 2, 3)]
    p = fit_progression(bands, uncertainties=[0.01] * 3, molecule=Diatomic("1H", "35Cl"))
    c = p.constants.set_index("name")
    # Morse (1929): omega = a sqrt(2 D_e / mu), in SI with scipy.constants (CODATA)
    mu = Diatomic("1H", "35Cl").main.reduced_mass * sc.atomic_mass
    d_e = we**2 / (4 * wexe) * sc.h * sc.c * 100
    a = 2 * np.pi * sc.c * 100 * we * np.sqrt(mu / (2 * d_e)) * 1e-10
    assert c.loc["morse_a", "value"] == pytest.approx(a, rel=1e-9)
    assert c.loc["morse_a", "unit"] == "1/Å"
