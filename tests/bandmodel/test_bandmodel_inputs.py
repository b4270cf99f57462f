"""Bad input to the band model: a FitError (a WidgetkitError and a built-in) that names the
argument and the value and says what to give instead."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.bandmodel import fit, fit_spectrum
from widgetkit.errors import FitError, WidgetkitError


@pytest.fixture(scope="module")
def band(co_4cm):
    return co_4cm.x, co_4cm.y


@pytest.mark.parametrize(("kwargs", "words"), [
    ({"instrument": "lorentzian"}, "instrument must be one of"),
    ({"baseline": "cubic"}, "baseline must be one of"),
    ({"band": (0, 1)}, "not an absorption band"),
    ({"band": "fundamental"}, "band must be"),
    ({"fix": {"temprature": 296}}, r"fix: unknown parameter 'temprature'.*temperature"),
    ({"start": {"B_lower": "x"}}, r"start\['B_lower'\] must be a number"),
    ({"fix": {"temperature": -5}}, r"fix\['temperature'\] must be a finite number"),
    ({"isotopologues": ["1H-35Cl"]}, "'1H-35Cl' is not an isotopologue of"),
    ({"isotopologues": "all"}, "isotopologues must be"),
    ({"convolve": "both"}, "convolve must be one of"),
    ({"joint": False, "band": [(1, 0), (2, 0)]}, "several bands need joint=True"),
    ({"temperature": 0}, "temperature must be a finite number > 0"),
    ({"y_kind": "intensity"}, "not absorption bands"),
])
def test_bad_options_are_refused_with_what_to_do(band, kwargs, words):
    x, y = band
    with pytest.raises(FitError, match=words) as info:
        fit(x, y, "CO", **kwargs)
    assert isinstance(info.value, WidgetkitError) and isinstance(info.value, RuntimeError)


def test_bad_data_are_refused(band):
    x, y = band
    with pytest.raises(FitError, match="equal length"):
        fit(x, y[:-1], "CO")
    bad = y.copy()
    bad[7] = np.nan
    with pytest.raises(FitError, match="point 7"):
        fit(x, bad, "CO")
    with pytest.raises(FitError, match="at least 20 points"):
        fit(x[:5], y[:5], "CO")
    with pytest.raises(FitError, match="percent"):
        fit(x, 100 * np.exp(-y), "CO", y_kind="transmittance")
    with pytest.raises(FitError, match="Spectrum"):
        fit_spectrum(x, "CO")


def test_a_molecule_that_is_not_a_diatomic_is_refused(band):
    x, y = band
    with pytest.raises(FitError, match="Diatomic or a formula"):
        fit(x, y, 42)
    with pytest.raises(wk.AssignmentError, match="cannot read 'CO2' as a diatomic"):
        fit(x, y, "CO2")


def test_a_two_atom_linear_molecule_is_fitted_as_the_diatomic_it_is(band):
    from widgetkit.bandmodel.checks import check_molecule

    assert check_molecule(wk.Linear("CO")) == wk.Diatomic("C", "O")


def test_a_spectrum_without_a_band_is_refused_unless_starts_are_given():
    x = np.linspace(2000.0, 2300.0, 400)
    y = 0.01 + np.random.default_rng(0).normal(0, 0.001, x.size)
    with pytest.raises(FitError, match="cannot find the band"):
        fit(x, y, "CO", y_kind="absorbance")
    res = fit(x, y, "CO", y_kind="absorbance", resolution=1.0,
              start={"band_origin": 2143.0, "B_lower": 1.92}, fix={"temperature": 296.0})
    assert res.value("band_area") < 0.05  # nothing there: an area near zero, said honestly


def test_descending_x_is_accepted(band):
    x, y = band
    a = fit(x, y, "CO", resolution=4.0, fix={"temperature": 296.0}, y_kind="absorbance")
    b = fit(x[::-1], y[::-1], "CO", resolution=4.0, fix={"temperature": 296.0},
            y_kind="absorbance")
    assert a.constant("B_lower")[0] == pytest.approx(b.constant("B_lower")[0], rel=1e-9)
