"""Locks are observations that win: a band is renumbered around a lock where it can agree, and
a lock it cannot agree with keeps its label and is shown as an outlier. Line lists simulated
from the handbook constants of H35Cl (reference/diatomics.md, handbook values from memory),
both chlorine isotopologues; every lock here differs from the automatic label."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.levels import Diatomic, assign_rovibrational

from .synth import HCL, correct, line_list

MOL = Diatomic("H", "Cl")
H35, H37 = "1H-35Cl", "1H-37Cl"


@pytest.fixture(scope="module")
def band():
    df = line_list(MOL, HCL, J_max=10, sigma=0.003, area_noise=0.02, seed=31)
    return df, assign_rovibrational(df, MOL, temperature=296.0)


def _id(df, iso, Ju, Jl):
    return int(df.loc[(df["iso"] == iso) & (df["Ju"] == Ju) & (df["Jl"] == Jl), "line_id"].iloc[0])


def _m(a):
    """Running number m of each assigned line (m = J″+1 for R, −J″ for P; common practice)."""
    ju, jl = a["J_upper"].astype(float), a["J_lower"].astype(float)
    return np.where(ju > jl, jl + 1, -jl)


@pytest.mark.parametrize("iso", [H35, H37])
def test_locking_r2_as_r3_renumbers_the_whole_band_by_one(band, iso):
    df, auto = band
    lid = _id(df, iso, 3, 2)  # the R(2) line, locked as R(3)
    res = assign_rovibrational(df, MOL, temperature=296.0,
                               locks={lid: {"label": "R(3)", "isotopologue": iso}})
    a = res.assignments.set_index("line_id")
    b = auto.assignments.set_index("line_id")
    assert a.loc[lid, "label"] == "R(3)" and a.loc[lid, "isotopologue"] == iso
    assert not a.loc[lid, "outlier"]
    # every line of both sub-bands that keeps a label moves up by one in m
    both = a["label"].notna() & b["label"].notna()
    shift = _m(a[both]) - _m(b.loc[both[both].index])
    assert set(shift.tolist()) == {1.0}
    assert set(a.loc[both, "isotopologue"]) == {H35, H37}
    # the line that would be m = 0 (the automatic P(1)) has no label in this numbering
    p1 = _id(df, iso, 0, 1)
    assert pd.isna(a.loc[p1, "label"])
    assert res.status == "doubtful"
    assert any("numbering follows the lock" in r and str(lid) in r for r in res.reasons)


def test_locking_a_p_line_lower_renumbers_the_other_way(band):
    df, auto = band
    lid = _id(df, H35, 4, 5)  # P(5) locked as P(4): m from −5 to −4, k = +1
    res = assign_rovibrational(df, MOL, locks={lid: {"label": "P(4)", "isotopologue": H35}})
    a = res.assignments.set_index("line_id")
    assert a.loc[lid, "label"] == "P(4)" and not a.loc[lid, "outlier"]
    r0 = _id(df, H35, 1, 0)  # the automatic R(0) becomes R(1)
    assert a.loc[r0, "label"] == "R(1)"
    v_auto, _ = auto.constant("band_origin", H35)
    v_lock, _ = res.constant("band_origin", H35)
    # the origin moves by about one line spacing, B′ + B″ ≈ 20.6 cm-1 (handbook B, from memory)
    assert 15 < v_auto - v_lock < 25


def test_a_lock_the_band_cannot_agree_with_is_kept_and_shown_as_an_outlier(band):
    df, auto = band
    lid = _id(df, H35, 3, 2)  # the H35Cl R(2) line, locked as R(2) of H37Cl
    res = assign_rovibrational(df, MOL, locks={lid: {"label": "R(2)", "isotopologue": H37}})
    a = res.assignments.set_index("line_id")
    assert a.loc[lid, "label"] == "R(2)" and a.loc[lid, "isotopologue"] == H37
    assert a.loc[lid, "locked"] and a.loc[lid, "outlier"] and a.loc[lid, "weight"] == 0
    # obs − calc is the 35Cl/37Cl isotope shift of R(2), about +2.2 cm-1 (self-consistency)
    assert 1.5 < a.loc[lid, "obs_minus_calc"] < 3.0
    assert abs(a.loc[lid, "normalised_residual"]) > res.outlier_sigma
    assert res.status == "doubtful"
    assert any(f"line {lid} is locked" in r and "cannot agree" in r for r in res.reasons)
    # the lock does not drag the constants of either sub-band
    for iso in (H35, H37):
        v0, e0 = auto.constant("band_origin", iso)
        v1, _ = res.constant("band_origin", iso)
        assert abs(v1 - v0) < 5 * e0


def test_a_far_lock_does_not_bend_a_short_band_into_hiding_it():
    # eleven lines of one sub-band: a lock 22 cm-1 off at the end of the band must be flagged,
    # not absorbed by the five band constants (self-consistency)
    mol = Diatomic("1H", "35Cl")
    df = line_list(mol, HCL, J_max=5, sigma=0.002, seed=3)
    df = df[~((df["Ju"] == 6) & (df["Jl"] == 5))]
    lid = _id(df, H35, 4, 5)  # P(5) locked as R(5): a renumbering would leave no P branch
    res = assign_rovibrational(df, mol, locks={lid: {"label": "R(5)"}})
    a = res.assignments.set_index("line_id")
    assert a.loc[lid, "label"] == "R(5)" and a.loc[lid, "outlier"]
    others = a.drop(index=lid)
    assert correct(res, df.set_index("line_id").drop(index=lid).reset_index()).all()
    assert (np.abs(others["obs_minus_calc"]) < 4 * others["position_err"] + 1e-9).all()


def test_a_lock_that_agrees_changes_nothing_and_is_ok(band):
    df, auto = band
    lid = _id(df, H37, 2, 3)
    res = assign_rovibrational(df, MOL, temperature=296.0,
                               locks={lid: {"label": "P(3)", "isotopologue": H37}})
    assert res.status == "ok", res.reasons
    assert correct(res, df).all()
    v0, e0 = auto.constant("B_lower", H37)
    assert abs(res.constant("B_lower", H37)[0] - v0) < e0


def test_a_lock_without_its_isotopologue_is_refused_naming_both(band):
    df, _ = band
    lid = _id(df, H37, 0, 1)
    with pytest.raises(wk.AssignmentError, match="ambiguous lock") as err:
        assign_rovibrational(df, MOL, locks={lid: {"label": "P(1)"}})
    assert H35 in str(err.value) and H37 in str(err.value)
    assert "isotopologue=" in str(err.value)


def test_two_consistent_locks_outweigh_one_that_disagrees(band):
    df, auto = band
    r1, p4, r5 = _id(df, H35, 2, 1), _id(df, H35, 3, 4), _id(df, H35, 6, 5)
    locks = {r1: {"label": "R(1)", "isotopologue": H35}, p4: {"label": "P(4)", "isotopologue": H35},
             r5: {"label": "R(6)", "isotopologue": H35}}  # the last disagrees with the others
    res = assign_rovibrational(df, MOL, locks=locks)
    a = res.assignments.set_index("line_id")
    assert a.loc[r5, "label"] == "R(6)" and a.loc[r5, "outlier"]
    assert not a.loc[r1, "outlier"] and not a.loc[p4, "outlier"]
    r6 = _id(df, H35, 7, 6)  # the true R(6) line: its label is the lock's, it is left unassigned
    assert pd.isna(a.loc[r6, "label"])
    assert correct(res, df[~df["line_id"].isin([r5, r6])]).all()


def test_a_lock_may_name_its_isotopologue_as_the_trade_writes_it(band):
    df, _ = band
    lid = _id(df, H37, 2, 3)
    res = assign_rovibrational(df, MOL, locks={lid: {"label": "P(3)", "isotopologue": "H³⁷Cl"}})
    a = res.assignments.set_index("line_id")
    assert a.loc[lid, "isotopologue"] == H37 and a.loc[lid, "locked"]
    with pytest.raises(wk.AssignmentError, match="not an isotopologue"):
        assign_rovibrational(df, MOL, locks={lid: {"label": "P(3)", "isotopologue": "HCl"}})
