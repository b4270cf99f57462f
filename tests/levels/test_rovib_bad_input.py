"""Bad input to the rovibrational assignment: AssignmentError that says what to do."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.levels import Diatomic, assign_rovibrational

from .synth import HCL, line_list

MOL = Diatomic("H", "Cl")


@pytest.fixture(scope="module")
def lines():
    return line_list(MOL, HCL, J_max=10, sigma=0.003, area_noise=0.02, seed=5)


def test_fewer_lines_than_parameters(lines):
    few = lines[lines["iso"] == "1H-35Cl"].query("Jl <= 1")  # R(0), R(1), P(1)
    with pytest.raises(wk.AssignmentError, match="set_assignment"):
        assign_rovibrational(few, MOL)


def test_no_gap_in_an_evenly_spaced_comb():
    comb = pd.DataFrame({"line_id": np.arange(30), "position": 2800 + 20.0 * np.arange(30),
                         "position_err": 0.003, "area": 1.0})  # invented: no band origin
    with pytest.raises(wk.AssignmentError, match="lock two lines by hand"):
        assign_rovibrational(comb, MOL)


def test_missing_columns_and_duplicate_ids(lines):
    with pytest.raises(wk.AssignmentError, match="position"):
        assign_rovibrational(lines.drop(columns="position"), MOL)
    dup = lines.copy()
    dup.loc[1, "line_id"] = dup.loc[0, "line_id"]
    with pytest.raises(wk.AssignmentError, match="repeat"):
        assign_rovibrational(dup, MOL)
    nan = lines.copy()
    nan.loc[3, "position"] = np.nan
    with pytest.raises(wk.AssignmentError, match="not finite"):
        assign_rovibrational(nan, MOL)


def test_contradictory_locks(lines):
    a, b = (int(v) for v in lines["line_id"].iloc[:2])
    h35 = "1H-35Cl"
    with pytest.raises(wk.AssignmentError, match="contradictory locks"):
        assign_rovibrational(lines, MOL, locks={a: {"label": "R(0)", "isotopologue": h35},
                                                b: {"label": "R(0)", "isotopologue": h35}})
    with pytest.raises(wk.AssignmentError, match="contradicts"):
        assign_rovibrational(lines, MOL, locks={a: {"label": "R(0)", "J_upper": 3}})
    with pytest.raises(wk.AssignmentError, match="no Q branch"):
        assign_rovibrational(lines, MOL, locks={a: {"J_upper": 2, "J_lower": 2}})
    with pytest.raises(wk.AssignmentError, match="not in the lines table"):
        assign_rovibrational(lines, MOL, locks={12345: {"label": "R(0)"}})
    with pytest.raises(wk.AssignmentError, match="not an isotopologue"):
        assign_rovibrational(lines, MOL, locks={a: {"isotopologue": "1H-79Br"}})
    with pytest.raises(wk.AssignmentError, match="band being assigned"):
        assign_rovibrational(lines, MOL, locks={a: {"label": "R(0)", "v_upper": 2,
                                                    "isotopologue": h35}})


def test_ambiguous_isotopologue_split_asks_for_a_lock():
    # lines of one sub-band only, of a molecule whose two isotopologues are about equally
    # abundant (79Br 50.7 %, 81Br 49.3 %, periodictable): which one it is cannot be told
    mol = Diatomic("H", "Br")
    c = {"omega_e": 2649.0, "omega_e_x_e": 45.2, "B_e": 8.465, "alpha_e": 0.233,
         "D_e": 3.46e-4}  # HBr-like constants, from memory (invented for this check)
    df = line_list(Diatomic("1H", "79Br"), c, J_max=10, sigma=0.003, seed=1)
    with pytest.raises(wk.AssignmentError, match="ambiguous isotopologue split"):
        assign_rovibrational(df, mol)
    lid = int(df.loc[(df["Jl"] == 0) & (df["Ju"] == 1), "line_id"].iloc[0])
    res = assign_rovibrational(df, mol, locks={lid: {"isotopologue": "1H-79Br", "label": "R(0)"}})
    assert set(res.assignments["isotopologue"]) == {"1H-79Br"}


def test_bad_options_are_refused(lines):
    with pytest.raises(wk.AssignmentError, match="band must be"):
        assign_rovibrational(lines, MOL, band=(0, 1))
    with pytest.raises(wk.AssignmentError, match="centrifugal"):
        assign_rovibrational(lines, MOL, centrifugal="cubic")
    with pytest.raises(wk.AssignmentError, match="outlier_sigma"):
        assign_rovibrational(lines, MOL, outlier_sigma=0)


def test_the_input_table_is_not_changed(lines):
    before = lines.copy()
    assign_rovibrational(lines, MOL)
    pd.testing.assert_frame_equal(lines, before)


def test_a_single_sub_band_is_taken_as_the_most_abundant_isotopologue():
    df = line_list(Diatomic("1H", "35Cl"), HCL, J_max=10, sigma=0.003, seed=6)
    res = assign_rovibrational(df, MOL)  # H and Cl: 35Cl is 3 times as abundant (periodictable)
    assert set(res.assignments["isotopologue"]) == {"1H-35Cl"}
    assert any("1H-37Cl" in m for m in res.messages)
