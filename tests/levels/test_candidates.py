"""Candidate transitions and selection rules."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.levels import (
    Diatomic,
    candidate_transitions,
    format_label,
    parse_label,
    rotational_partition,
)

from .synth import HCL


def test_a_sigma_fundamental_has_no_q_branch_by_default():
    c = candidate_transitions(Diatomic("H", "Cl"), HCL, v_max=1, J_max=10)
    assert set(c["branch"]) == {"P", "R"}  # no Q branch in a ¹Σ fundamental (common practice)
    assert not (c["J_upper"] == c["J_lower"]).any()
    assert not ((c["J_lower"] == 0) & (c["J_upper"] == 0)).any()  # the gap at the origin


def test_q_branch_is_listed_only_when_asked():
    c = candidate_transitions(Diatomic("1H", "35Cl"), HCL, v_max=1, J_max=5, q_branch=True)
    q = c[c["branch"] == "Q"]
    assert sorted(q["J_lower"]) == [1, 2, 3, 4, 5]  # Q(0) does not exist (J'=J''=0, common practice)


def test_only_delta_v_one_is_allowed_harmonically():
    c = candidate_transitions(Diatomic("1H", "35Cl"), HCL, v_max=3, J_max=3)
    dv = c["v_upper"] - c["v_lower"]
    assert (c["allowed_harmonic"] == (dv == 1)).all()  # Δv = ±1 harmonic rule (common practice)
    kinds = dict(zip(c["band"], c["kind"], strict=False))
    assert kinds["1-0"] == "fundamental" and kinds["2-0"] == "overtone" and kinds["3-0"] == "overtone"


def test_hot_bands_need_a_temperature_and_a_populated_lower_level():
    mol = Diatomic("1H", "35Cl")
    cold = candidate_transitions(mol, HCL, v_max=3, J_max=3)
    assert set(cold["v_lower"]) == {0}
    warm = candidate_transitions(mol, HCL, v_max=3, J_max=3, temperature=2000.0)
    # exp(−c₂ ΔG/T) ≈ exp(−1.4388·2886/2000) ≈ 0.13 for v''=1 (c₂ from CODATA via scipy)
    assert 1 in set(warm["v_lower"])
    hot = warm[warm["v_lower"] == 1]
    assert set(hot["kind"]) == {"hot"}
    strict = candidate_transitions(mol, HCL, v_max=3, J_max=3, temperature=2000.0,
                                   population_threshold=0.5)
    assert set(strict["v_lower"]) == {0}


def test_isotopologue_lines_are_shifted_by_mass_scaling():
    c = candidate_transitions(Diatomic("H", "Cl"), HCL, v_max=1, J_max=2)
    r0 = c[c["label"] == "R(0)"].set_index("isotopologue")["position"]
    shift = r0["1H-35Cl"] - r0["1H-37Cl"]
    assert 1.9 < shift < 2.3  # R(0) 2906.25 vs 2904.11 (HITRAN-type line list values, from memory): 2.14


def test_most_populated_level_and_partition_function_of_hcl_at_300k():
    c = candidate_transitions(Diatomic("1H", "35Cl"), {**HCL, "D_e": 0.0}, v_max=1, J_max=20,
                              temperature=300.0)
    r = c[c["branch"] == "R"]
    assert int(r.loc[r["population"].idxmax(), "J_lower"]) == 3  # computed (Boltzmann populations)
    assert rotational_partition(10.43982, 0.0, 300.0) == pytest.approx(20.31, abs=0.01)  # same


def test_labels_parse_and_format_both_ways():
    assert parse_label("R(3)") == (4, 3)
    assert parse_label("P(2)") == (1, 2)
    assert format_label(4, 3) == "R(3)" and format_label(1, 2) == "P(2)"
    for bad in ("R3", "P(0)", "S(2)"):
        with pytest.raises(wk.AssignmentError):
            parse_label(bad)


def test_candidate_positions_are_sorted_and_positive():
    c = candidate_transitions(Diatomic("H", "Cl"), HCL, v_max=2, J_max=30)
    assert (c["position"] > 0).all()
    for _, g in c.groupby(["isotopologue", "band"]):
        assert np.all(np.diff(g["position"].to_numpy()) >= 0)
