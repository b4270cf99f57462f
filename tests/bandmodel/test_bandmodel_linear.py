"""The band model takes parallel (Σ–Σ) bands of linear polyatomic molecules: the simulator's
line system with the ground state's nuclear-spin weights. Check values: the CO2 ν3 band
simulated from handbook level constants (widgetkit.simulate.LINEAR_HANDBOOK: HITRAN papers and
Herzberg 1945, values from memory), recovered within 3 standard errors; spin weights against
the closed form for ¹⁶O¹²C¹⁶O (spin-0 identical end nuclei: only even J in the ground state,
Herzberg 1945, from memory)."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.bandmodel import fit
from widgetkit.bandmodel.linear import spacing_in_B
from widgetkit.errors import FitError
from widgetkit.simulate import LINEAR_HANDBOOK

CO2 = LINEAR_HANDBOOK["16O-12C-16O"]  # handbook values, from memory
TRUTH = {"band_origin": CO2["00^01"]["energy"], "B_upper": CO2["00^01"]["B"],
         "B_lower": CO2["00^00"]["B"], "T_rot": 296.0}
OCO = wk.Linear("OCO")


def _band(resolution: float, step: float, seed: int = 3) -> wk.Spectrum:
    return wk.simulate.linear_spectrum(OCO, CO2, bands=[("00^01", "00^00")], x_range=(2250, 2420),
                                       step=step, resolution=resolution, noise=0.002, seed=seed,
                                       temperature=296.0, lorentz_hwhm=0.05)


@pytest.mark.parametrize(("resolution", "step"), [(0.2, 0.05), (2.0, 0.5)])
def test_co2_nu3_constants_come_back_within_three_sigma(resolution, step):
    sp = _band(resolution, step)
    res = fit(sp.x, sp.y, OCO, resolution=resolution)
    for name, want in TRUTH.items():
        v, e = res.constant(name)
        assert e > 0 and abs(v - want) < 3 * e, (name, v, e, want)
    names = set(res.constants["name"])
    assert not {"r_e", "B_e", "alpha_e"} & names  # one B of a molecule with two bond lengths
    assert set(res.constants["isotopologue"]) == {"16O-12C-16O"}


def test_only_even_j_lines_of_the_co2_ground_state_are_in_the_model():
    sp = _band(2.0, 0.5)
    res = fit(sp.x, sp.y, OCO, resolution=2.0)
    J = res.lines["J_lower"].to_numpy()
    assert len(J) > 20 and np.all(J % 2 == 0)
    assert spacing_in_B(OCO) == 4.0 and spacing_in_B(wk.Linear("HCN")) == 2.0
    assert spacing_in_B(wk.Diatomic("C", "O")) == 2.0


def test_what_a_linear_molecule_cannot_have_is_refused_naming_what_is_supported():
    sp = _band(2.0, 0.5)
    with pytest.raises(FitError, match="main isotopologue only"):
        fit(sp.x, sp.y, OCO, isotopologues=["16O-12C-16O", "16O-13C-16O"])
    with pytest.raises(FitError, match="one parallel"):
        fit(sp.x, sp.y, OCO, band=[(1, 0), (2, 0)])


def test_the_session_records_and_replays_a_linear_band_model():
    s = wk.Session(_band(2.0, 0.5))
    s.fit_band_model(OCO, resolution=2.0)
    c = s.constants
    row = c[(c["method"] == "band model") & (c["name"] == "band_origin")]
    assert abs(row["value"].iloc[0] - TRUTH["band_origin"]) < 3 * row["stderr"].iloc[0]
    assert s.verify().ok


def test_a_perpendicular_band_is_refused_naming_what_is_supported():
    sp = _band(2.0, 0.5)
    with pytest.raises(FitError, match=r"parallel \(Σ–Σ\) bands only.*kind='perpendicular'"):
        fit(sp.x, sp.y, wk.Linear("HCN"), kind="perpendicular")
    s = wk.Session(sp)
    with pytest.raises(FitError, match="parallel"):
        s.fit_band_model(OCO, kind="perpendicular", resolution=2.0)
    assert len(s.history) == 1
    assert fit(sp.x, sp.y, OCO, kind="parallel", resolution=2.0).constant("band_origin")[1] > 0
