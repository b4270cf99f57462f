"""Automatic assignment of linear-molecule bands: CO2 ν3 with its hot band, perpendicular bands
with a Q branch (HCN, C2H2), spin statistics (half the lines missing, 3:1 alternation), and
what must not happen (an isotopologue invented for a missing-line pattern)."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.levels import assign_linear
from widgetkit.simulate import LINEAR_HANDBOOK, linear_line_list

from .linear_synth import label_agreement, observed

CO2 = LINEAR_HANDBOOK["16O-12C-16O"]  # handbook values, from memory
HCN = LINEAR_HANDBOOK["1H-12C-14N"]  # handbook values, from memory
C2H2 = LINEAR_HANDBOOK["1H-12C-12C-1H"]  # handbook values, from memory
N2O = LINEAR_HANDBOOK["14N-14N-16O"]  # handbook values, from memory


def _within(result, band, name, want, k=3.0):
    v, e = result.constant(name, band)
    assert abs(v - want) <= k * e + 1e-12, (band, name, v, e, want)


@pytest.fixture(scope="module")
def co2():
    lines = linear_line_list(wk.Linear("OCO"), CO2, bands=[("00^01", "00^00"), ("01^11", "01^10")])
    table, truth = observed(lines, seed=11)
    return assign_linear(table, wk.Linear("OCO"), kind="parallel", temperature=296.0), truth


def test_co2_nu3_and_its_hot_band_are_labelled_right(co2):
    res, truth = co2
    ok = label_agreement(res, truth, {"00^01-00^00": "fundamental", "01^11-01^10": "hot"})
    assert ok["00^01-00^00"] >= 0.95 and ok["01^11-01^10"] >= 0.95, ok
    assert res.bands == ("fundamental", "hot") and res.status == "ok", res.reasons


def test_co2_constants_come_back_within_three_sigma(co2):
    res, _ = co2
    # simulated from the handbook levels: the fit must recover them (self-consistency)
    _within(res, "fundamental", "band_origin", CO2["00^01"]["energy"])
    _within(res, "fundamental", "B_upper", CO2["00^01"]["B"])
    _within(res, "fundamental", "B_lower", CO2["00^00"]["B"])
    _within(res, "hot", "band_origin", CO2["01^11"]["energy"] - CO2["01^10"]["energy"])
    _within(res, "hot", "B_lower", CO2["01^10"]["B"])
    _within(res, "hot", "q_lower", CO2["01^10"]["q"])
    _within(res, "hot", "q_upper", CO2["01^11"]["q"])
    t, e = res.constant("T_rot", "fundamental")
    assert abs(t - 296.0) < 3 * e + 5  # the temperature simulated


def test_a_missing_line_pattern_is_one_band_not_two_isotopologues(co2):
    res, _ = co2
    a = res.assignments
    assert set(a["isotopologue"].dropna()) == {"16O-12C-16O"}
    main = a[a["band"] == "fundamental"]
    assert (main["J_lower"] % 2 == 0).all()  # only even J″ in the ground state (16O: I = 0)
    # the lines are 4B apart: B is not doubled (B0 = 0.3902, handbook value from memory)
    assert res.constant("B_lower", "fundamental")[0] == pytest.approx(0.3902, rel=1e-3)
    assert any("no bond length" in m for m in res.messages)


@pytest.mark.parametrize("atoms,levels,band,kind", [
    ("HCN", HCN, ("01^10", "00^00"), "perpendicular"),
    ("HCCH", C2H2, ("nu5", "ground"), "perpendicular"),
    ("HCCH", C2H2, ("nu3", "ground"), "parallel"),
])
def test_bands_of_other_linear_molecules_are_assigned(atoms, levels, band, kind):
    mol = wk.Linear(atoms)
    table, truth = observed(linear_line_list(mol, levels, bands=[band]), seed=5)
    res = assign_linear(table, mol, kind=kind)
    ok = label_agreement(res, truth, {f"{band[0]}-{band[1]}": "fundamental"})
    assert min(ok.values()) >= 0.95, ok
    _within(res, "fundamental", "band_origin", levels[band[0]]["energy"])
    _within(res, "fundamental", "B_lower", levels[band[1]]["B"])
    if kind == "perpendicular":
        _within(res, "fundamental", "q_upper", levels[band[0]]["q"])
        assert "Q" in set(res.assignments["branch"].dropna())


def test_acetylene_alternation_does_not_shift_the_numbering():
    mol = wk.Linear("HCCH")
    table, truth = observed(linear_line_list(mol, C2H2, bands=[("nu3", "ground")]), seed=7)
    res = assign_linear(table, mol, kind="parallel")
    a = res.assignments.merge(truth, on="line_id")
    odd = a[a["J_lower"] % 2 == 1]["area"] if "area" in a else None
    assert odd is None or len(odd)
    got = res.assignments.set_index("line_id")
    # odd J″ lines are about 3 times stronger than their even neighbours (spin weights 3:1)
    r = table.set_index("line_id")["area"]
    ev = got[(got["J_lower"] == 10) & (got["branch"] == "R")].index
    od = got[(got["J_lower"] == 11) & (got["branch"] == "R")].index
    assert r.loc[od[0]] / r.loc[ev[0]] == pytest.approx(3.0, rel=0.2)


def test_nitrous_oxide_hot_band_with_unresolved_e_f_pairs():
    mol = wk.Linear("NNO")
    lines = linear_line_list(mol, N2O, bands=[("00^01", "00^00"), ("01^11", "01^10")])
    table, truth = observed(lines, seed=3)
    res = assign_linear(table, mol, kind="parallel")
    ok = label_agreement(res, truth, {"00^01-00^00": "fundamental", "01^11-01^10": "hot"})
    assert min(ok.values()) >= 0.95, ok
    _within(res, "hot", "band_origin", N2O["01^11"]["energy"] - N2O["01^10"]["energy"])


def test_a_lock_keeps_its_label_even_against_the_fit(co2):
    res, _ = co2
    a = res.assignments
    lid = int(a.loc[(a["band"] == "fundamental") & (a["label"] == "R(10)"), "line_id"].iloc[0])
    table = a[["line_id", "position", "position_err"]]
    locked = assign_linear(table, wk.Linear("OCO"), kind="parallel", hot_bands=False,
                           locks={lid: {"label": "R(12)"}})
    row = locked.assignments.set_index("line_id").loc[lid]
    assert row["label"] == "R(12)" and bool(row["locked"])


def test_bad_requests_are_refused_with_the_reason():
    mol = wk.Linear("OCO")
    table, _ = observed(linear_line_list(mol, CO2, bands=[("00^01", "00^00")]), seed=2)
    with pytest.raises(wk.AssignmentError, match="kind must be one of"):
        assign_linear(table, mol, kind="diagonal")
    with pytest.raises(wk.AssignmentError, match="unknown field"):
        assign_linear(table, mol, kind="parallel", locks={1: {"branch": "R"}})
    with pytest.raises(wk.AssignmentError, match="not in the lines table"):
        assign_linear(table, mol, kind="parallel", locks={9999: {"label": "R(0)"}})
    noise = table.assign(position=np.random.default_rng(1).uniform(2300, 2400, len(table)))
    try:
        res = assign_linear(noise, mol, kind="parallel")
    except wk.AssignmentError:
        return
    assert res.status == "doubtful" and res.reasons  # random lines are never a confident band


def test_a_partial_band_is_marked_doubtful_with_the_reason():
    mol = wk.Linear("OCO")
    lines = linear_line_list(mol, CO2, bands=[("00^01", "00^00")])
    table, _ = observed(lines[lines["position"] > 2350], seed=9)  # the R branch alone
    res = assign_linear(table, mol, kind="parallel", hot_bands=False)
    assert res.status == "doubtful"
    assert any("partial band" in r for r in res.reasons)


def test_impurity_lines_are_left_unassigned():
    mol = wk.Linear("OCO")
    table, truth = observed(linear_line_list(mol, CO2, bands=[("00^01", "00^00")]), seed=4)
    rng = np.random.default_rng(8)
    extra = table.iloc[:12].copy()
    extra["line_id"] = np.arange(500, 512)
    extra["position"] = rng.uniform(2300, 2390, 12)  # invented impurity lines, as strong as the band
    res = assign_linear(pd.concat([table, extra], ignore_index=True), mol, kind="parallel",
                        hot_bands=False)
    ok = label_agreement(res, truth, {"00^01-00^00": "fundamental"})
    assert ok["00^01-00^00"] >= 0.95
    left = res.assignments.set_index("line_id").loc[extra["line_id"], "label"]
    assert left.isna().mean() >= 0.75  # most impurities are not forced into the band
