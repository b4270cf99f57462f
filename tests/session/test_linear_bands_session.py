"""Infrared bands of linear molecules through the session: CO2 ν3 with its hot band and the HCN
bend with its Q branch, from simulated spectra (handbook level constants, from memory) to
constants, and the refusals that keep the kinds apart."""

import pytest

import widgetkit as wk
from widgetkit.simulate import (
    HANDBOOK,
    LINEAR_HANDBOOK,
    levels_from_equilibrium,
    linear_spectrum,
    raman_spectrum,
)

CO2 = LINEAR_HANDBOOK["16O-12C-16O"]  # handbook values, from memory
HCN = LINEAR_HANDBOOK["1H-12C-14N"]  # handbook values, from memory


def _run(molecule, levels, bands, x_range, kind, *, step=0.004, lorentz=0.0, resolution=0.02,
         shape="gaussian"):
    sp = linear_spectrum(molecule, levels, bands=bands, x_range=x_range, step=step,
                         lorentz_hwhm=lorentz, resolution=resolution, noise=0.002, seed=3,
                         strength=0.8)
    s = wk.Session(sp)
    s.find_peaks()
    s.fit_lines(shape=shape)
    s.assign_band(molecule, kind=kind, temperature=296.0)
    return s


def _within(s, band, name, want):
    c = s.constants
    row = c[(c["band"] == band) & (c["name"] == name)].iloc[0]
    assert abs(row["value"] - want) < 3 * row["stderr"] + 1e-12, (band, name, row["value"], want)


@pytest.fixture(scope="module")
def co2():
    return _run(wk.Linear("OCO"), CO2, [("00^01", "00^00"), ("01^11", "01^10")], (2290, 2390),
                "parallel")


def test_co2_band_and_hot_band_through_the_session(co2):
    s = co2
    assert s.assignment.status == "ok" and s.assignment.bands == ("fundamental", "hot")
    _within(s, "fundamental", "band_origin", CO2["00^01"]["energy"])
    _within(s, "fundamental", "B_lower", CO2["00^00"]["B"])
    _within(s, "hot", "band_origin", CO2["01^11"]["energy"] - CO2["01^10"]["energy"])
    _within(s, "hot", "B_lower", CO2["01^10"]["B"])
    assert s.assignments["label"].notna().mean() > 0.95
    assert s.verify().ok


def test_hcn_bend_with_its_q_branch_through_the_session():
    s = _run(wk.Linear("HCN"), HCN, [("01^10", "00^00")], (650, 780), "perpendicular", step=0.002,
             lorentz=0.003, resolution=0.0, shape="voigt")
    assert s.assignment.status == "ok"
    _within(s, "fundamental", "band_origin", HCN["01^10"]["energy"])
    _within(s, "fundamental", "q_upper", HCN["01^10"]["q"])
    assert "Q" in set(s.assignments["branch"].dropna())


def test_infrared_kinds_refuse_a_raman_spectrum_and_the_reverse(co2):
    with pytest.raises(wk.AssignmentError, match="raman_rotational"):
        co2.assign_band("OCO", kind="raman_rotational", technique="infrared")
    n2 = wk.Linear("NN")
    sp = raman_spectrum(n2, levels_from_equilibrium(n2, HANDBOOK["14N-14N"]), excitation=532.0,
                        medium="air", x_range=(5, 120), step=0.05, noise=3.0, seed=2)
    s = wk.Session(sp)
    s.find_peaks()
    s.fit_lines(shape="voigt")
    with pytest.raises(wk.AssignmentError, match="raman_rotational"):
        s.assign_band("NN", kind="parallel")  # a Raman-shift axis: no P/R labels
    s.assign_band("NN", kind="raman_rotational")
    assert s.assignment.status == "ok"
