"""Raman line lists and spectra: Placzek–Teller factors, spin statistics, Stokes/anti-Stokes."""

import numpy as np
import pytest
from scipy import constants as sc

import widgetkit as wk
from widgetkit.levels import placzek_teller
from widgetkit.simulate import HANDBOOK, levels_from_equilibrium, raman_line_list, raman_spectrum

C2 = sc.h * sc.c * 100 / sc.k  # CODATA via scipy
NU0 = 18796.99  # a laser line, cm-1 (vacuum): any value serves these self-consistency checks


def _n2(**kw):
    n2 = wk.Linear("NN")
    lv = levels_from_equilibrium(n2, HANDBOOK["14N-14N"])  # handbook values, from memory
    return raman_line_list(n2, lv, excitation_wavenumber=NU0, **kw)


def _reduced(t, n=3, T=296.0):
    """Intensity divided by everything but the spin weight (Long 2002, the Raman intensity)."""
    J = t.index.to_numpy()
    return t["intensity"] / (placzek_teller(J, 2) * (2 * J + 1)
                             * np.exp(-C2 * t["E_lower"] / T) * (NU0 - t["position"]) ** n)


def test_nitrogen_s_lines_alternate_two_to_one():
    s = _n2()
    st = s[s["side"] == "Stokes"].set_index("J_lower")
    # S(0) = 6B0 − 36D; B0 = 1.98957 from B_e, α_e (handbook values, from memory)
    assert st.loc[0, "position"] == pytest.approx(6 * 1.98957, abs=2e-3)
    red = _reduced(st)
    assert red.loc[2] / red.loc[3] == pytest.approx(2.0, rel=1e-9)  # 14N2 even:odd 2:1 (Herzberg 1950)
    assert red.loc[10] / red.loc[11] == pytest.approx(2.0, rel=1e-9)


def test_oxygen_has_only_odd_N():
    o2 = wk.Linear("OO")
    lines = raman_line_list(o2, levels_from_equilibrium(o2, HANDBOOK["16O-16O"]),
                            excitation_wavenumber=NU0)
    assert (lines["J_lower"] % 2 == 1).all()  # 16O2 X 3Σg-: only odd N (fact of the trade)
    assert lines.loc[lines["side"] == "Stokes", "position"].min() == pytest.approx(10 * 1.43768, abs=3e-3)


@pytest.mark.parametrize("detector,n", [("energy", 4), ("photon_counting", 3)])
def test_anti_stokes_to_stokes_ratio_follows_boltzmann_and_the_frequency_factor(detector, n):
    s = _n2(detector=detector, temperature=500.0)
    st = s[s["side"] == "Stokes"].set_index("label")
    an = s[s["side"] == "anti-Stokes"].set_index("label")
    d = st.loc["S(6)", "position"]
    assert an.loc["S(6)", "position"] == pytest.approx(-d)
    # I_aS/I_S = ((ν0+Δ)/(ν0−Δ))^n exp(−c₂Δ/T) (Long 2002; ν^4 energy, ν^3 photon counting)
    want = ((NU0 + d) / (NU0 - d)) ** n * np.exp(-C2 * d / 500.0)
    assert an.loc["S(6)", "intensity"] / st.loc["S(6)", "intensity"] == pytest.approx(want, rel=1e-9)


def test_a_vibrational_raman_band_has_a_strong_q_branch_and_weak_o_and_s():
    s = _n2(bands=[("v=1", "v=0")], anti_stokes=False)
    sums = s.groupby("branch")["intensity"].sum()
    assert sums["Q"] > 10 * sums["S"] and sums["Q"] > 10 * sums["O"]  # isotropic part (Long 2002)
    q1 = s[s["label"] == "Q(0)"]
    assert len(q1) == 1  # Q(0) has no anisotropic part but the isotropic one


def test_a_raman_spectrum_is_on_a_raman_shift_axis():
    n2 = wk.Linear("NN")
    sp = raman_spectrum(n2, levels_from_equilibrium(n2, HANDBOOK["14N-14N"]), excitation=532.0,
                        medium="air", x_range=(-150, 150), step=0.05, noise=2.0, seed=1)
    assert sp.y_kind == "intensity" and sp.meta["x_axis"] == "raman_shift"
    assert sp.meta["excitation_wavenumber"] == pytest.approx(1e7 / wk.units.air_to_vacuum_nm(532.0))
    with pytest.raises(wk.SimulationError, match="medium"):
        raman_spectrum(n2, levels_from_equilibrium(n2, HANDBOOK["14N-14N"]), excitation=532.0)
    with pytest.raises(wk.SimulationError, match="photon_counting"):
        _n2(detector="ccd")
