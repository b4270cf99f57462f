"""Raman assignment: rotational S lines of N2, O2 and CO2 on both sides of the laser line, the
vibrational O/Q/S band of N2, and the temperature from Stokes/anti-Stokes pairs."""

import numpy as np
import pytest
from scipy import constants as sc

import widgetkit as wk
from widgetkit.levels import assign_linear, stokes_anti_stokes_temperature
from widgetkit.simulate import HANDBOOK, LINEAR_HANDBOOK, levels_from_equilibrium, raman_line_list

from .linear_synth import label_agreement, observed

C2 = sc.h * sc.c * 100 / sc.k  # CODATA via scipy
NU0 = 18796.99  # laser line, cm-1 (vacuum); any value serves these self-consistency checks


def _rot(atoms, levels, *, detector="photon_counting", T=296.0, seed=1, **kw):
    mol = wk.Linear(atoms)
    lines = raman_line_list(mol, levels, excitation_wavenumber=NU0, detector=detector,
                            temperature=T, **kw)
    table, truth = observed(lines, sigma=0.01, seed=seed)
    res = assign_linear(table, mol, kind="raman_rotational", excitation_wavenumber=NU0,
                        detector=detector)
    return res, truth


@pytest.mark.parametrize("atoms,handbook", [("NN", "14N-14N"), ("OO", "16O-16O")])
def test_rotational_raman_of_nitrogen_and_oxygen(atoms, handbook):
    mol = wk.Linear(atoms)
    levels = levels_from_equilibrium(mol, HANDBOOK[handbook])  # handbook values, from memory
    res, truth = _rot(atoms, levels)
    ok = label_agreement(res, truth, {"v=0-v=0": "rotational"})
    assert ok["v=0-v=0"] >= 0.95, ok
    B0 = levels[mol.main.name]["v=0"]["B"]
    v, e = res.constant("B", "rotational")
    assert abs(v - B0) < 3 * e
    assert set(res.assignments["side"].dropna()) == {"Stokes", "anti-Stokes"}
    if atoms == "OO":  # only odd N of 16O2 (fact of the trade)
        assert (res.assignments["J_lower"].dropna() % 2 == 1).all()


def test_the_stokes_anti_stokes_temperature_is_recovered_for_both_detector_kinds():
    mol = wk.Linear("NN")
    levels = levels_from_equilibrium(mol, HANDBOOK["14N-14N"])  # handbook values, from memory
    for detector in ("energy", "photon_counting"):
        res, _ = _rot("NN", levels, detector=detector, T=420.0, seed=4)
        t, e = res.constant("temperature", "rotational")
        assert abs(t - 420.0) < 3 * e, (detector, t, e)  # the temperature simulated
    # the wrong detector kind gives a different temperature: the choice matters
    lines = raman_line_list(mol, levels, excitation_wavenumber=NU0, detector="energy", temperature=420.0)
    table, _ = observed(lines, sigma=0.01, seed=4)
    wrong = assign_linear(table, mol, kind="raman_rotational", excitation_wavenumber=NU0,
                          detector="photon_counting")
    assert wrong.constant("temperature", "rotational")[0] != pytest.approx(420.0, rel=0.003)


def test_without_a_detector_kind_there_is_no_temperature_and_the_result_says_why():
    mol = wk.Linear("NN")
    res, _ = _rot("NN", levels_from_equilibrium(mol, HANDBOOK["14N-14N"]), detector="energy")
    res2 = assign_linear(res.assignments[["line_id", "position", "position_err"]], mol,
                         kind="raman_rotational")
    assert "temperature" not in set(res2.constants["name"])
    assert any("detector=" in m for m in res2.messages)


def test_carbon_dioxide_rotational_raman_has_lines_8B_apart():
    co2 = {"00^00": LINEAR_HANDBOOK["16O-12C-16O"]["00^00"]}  # handbook values, from memory
    res, truth = _rot("OCO", co2, detector="energy")
    assert label_agreement(res, truth, {"00^00-00^00": "rotational"})["00^00-00^00"] >= 0.95
    assert (res.assignments["J_lower"].dropna() % 2 == 0).all()  # 16O: I = 0, even J only
    v, e = res.constant("B", "rotational")
    assert abs(v - 0.39021894) < 3 * e  # B is not doubled by the missing lines


def test_vibrational_raman_band_of_nitrogen():
    mol = wk.Linear("NN")
    levels = levels_from_equilibrium(mol, HANDBOOK["14N-14N"])  # handbook values, from memory
    lines = raman_line_list(mol, levels, excitation_wavenumber=NU0, bands=[("v=1", "v=0")],
                            anisotropy=0.5, anti_stokes=False, min_relative=1e-3)
    table, truth = observed(lines, sigma=0.005, min_intensity=1e-3, seed=2)
    res = assign_linear(table, mol, kind="raman_vibrational")
    assert label_agreement(res, truth, {"v=1-v=0": "fundamental"})["v=1-v=0"] >= 0.95
    nu = levels[mol.main.name]
    for name, want in (("band_origin", nu["v=1"]["energy"]), ("B_upper", nu["v=1"]["B"]),
                       ("B_lower", nu["v=0"]["B"])):
        v, e = res.constant(name, "fundamental")
        assert abs(v - want) < 3 * e, (name, v, e, want)
    assert {"O", "Q", "S"} <= set(res.assignments["branch"].dropna())


def test_temperature_from_pairs_against_the_closed_form():
    d = np.array([100.0, 200.0, 400.0])
    T = 350.0
    for det, n in (("energy", 4), ("photon_counting", 3)):
        # I_aS/I_S = ((ν0+Δ)/(ν0−Δ))^n exp(−c₂Δ/T) (Long 2002): made exactly, read back
        ratio = ((NU0 + d) / (NU0 - d)) ** n * np.exp(-C2 * d / T)
        res = stokes_anti_stokes_temperature(d, np.ones(3), ratio, excitation_wavenumber=NU0,
                                             detector=det, stokes_err=0.01 * np.ones(3),
                                             anti_stokes_err=0.01 * ratio)
        assert res.value == pytest.approx(T, rel=1e-9) and res.exponent == n and res.stderr > 0
    with pytest.raises(wk.AssignmentError, match="photon_counting"):
        stokes_anti_stokes_temperature(d, np.ones(3), ratio, excitation_wavenumber=NU0, detector="ccd")
    with pytest.raises(wk.AssignmentError, match="not weaker"):
        stokes_anti_stokes_temperature(d, np.ones(3), 2 * np.ones(3), excitation_wavenumber=NU0,
                                       detector="energy")
