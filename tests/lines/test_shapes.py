"""Conformance of every registered line shape, and outside checks of the Voigt."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants, integrate
from scipy.special import voigt_profile

import widgetkit.lines as wl
from widgetkit.errors import FitError
from widgetkit.lines.shapes import get_shape

WIDTHS = {"sigma": 0.7, "gamma": 0.4}


def _args(shape, area=1.7, position=3.2):
    return [area, position] + [WIDTHS[w] for w in shape.widths]


@pytest.mark.parametrize("name", sorted(wl.SHAPES))
def test_every_shape_has_unit_area_per_unit_area_parameter(name):
    sh = wl.SHAPES[name]
    args = _args(sh, area=1.0)
    total, _ = integrate.quad(lambda t: float(sh.profile(t, *args)), -np.inf, np.inf,
                              limit=500)
    assert total == pytest.approx(1.0, rel=1e-7)  # definition of an area-normalised profile


@pytest.mark.parametrize("name", sorted(wl.SHAPES))
def test_every_shape_gradient_matches_central_finite_differences(name):
    sh = wl.SHAPES[name]
    x = np.linspace(-4.0, 10.0, 57)
    args = _args(sh)
    grad = sh.gradient(x, *args)
    assert np.allclose(grad[0], sh.profile(x, *args), rtol=1e-14, atol=0)
    for k in range(len(args)):
        h = 1e-6 * max(abs(args[k]), 1.0)
        up, dn = list(args), list(args)
        up[k] += h
        dn[k] -= h
        fd = (sh.profile(x, *up) - sh.profile(x, *dn)) / (2 * h)
        # central differences are accurate to O(h^2) (common practice)
        assert np.allclose(grad[k + 1], fd, rtol=1e-6, atol=1e-9), sh.param_names[k]


@pytest.mark.parametrize("name", sorted(wl.SHAPES))
def test_every_shape_is_symmetric_about_its_position(name):
    sh = wl.SHAPES[name]
    d = np.linspace(0.0, 6.0, 31)
    args = _args(sh)
    assert np.allclose(sh.profile(3.2 + d, *args), sh.profile(3.2 - d, *args), rtol=1e-13)


@pytest.mark.parametrize("name", sorted(wl.SHAPES))
def test_every_shape_is_at_half_its_height_at_half_the_fwhm(name):
    sh = wl.SHAPES[name]
    w = [WIDTHS[k] for k in sh.widths]
    f = float(sh.fwhm(*w))
    h = float(sh.height(2.0, *w))
    assert float(sh.profile(3.2 + f / 2, 2.0, 3.2, *w)) == pytest.approx(h / 2, rel=1e-10)
    assert h == pytest.approx(float(sh.profile(3.2, 2.0, 3.2, *w)), rel=1e-14)


@pytest.mark.parametrize("name", sorted(wl.SHAPES))
def test_every_shape_fwhm_gradient_matches_finite_differences(name):
    sh = wl.SHAPES[name]
    w = np.array([WIDTHS[k] for k in sh.widths])
    _, grad = sh.fwhm_grad(*[np.array([v]) for v in w])
    for k in range(w.size):
        up, dn = w.copy(), w.copy()
        up[k] += 1e-6
        dn[k] -= 1e-6
        fd = (sh.fwhm(*up) - sh.fwhm(*dn)) / 2e-6
        assert grad[k, 0] == pytest.approx(float(fd), rel=1e-6)


def test_voigt_equals_scipy_voigt_profile():
    x = np.linspace(-20, 20, 401)
    for sigma, gamma in [(0.7, 0.4), (0.05, 2.0), (3.0, 0.01), (1.0, 0.0)]:
        ref = 2.5 * voigt_profile(x - 1.1, sigma, gamma)  # scipy.special.voigt_profile
        assert np.allclose(wl.voigt(x, 2.5, 1.1, sigma, gamma), ref, rtol=1e-12, atol=1e-300)


@pytest.mark.parametrize("ratio", [0.01, 0.1, 0.5, 1.0, 2.0, 10.0, 100.0])
def test_exact_voigt_fwhm_agrees_with_olivero_longbothum_within_its_stated_accuracy(ratio):
    sigma, gamma = 0.3, 0.3 * ratio
    exact = float(wl.voigt_fwhm(sigma, gamma))
    # Olivero & Longbothum, JQSRT 17 (1977) 233: accurate to "about 0.02 %"; the largest
    # deviation on this grid is 0.0213 % (near f_L/f_G = 0.4), hence 0.022 %
    assert exact == pytest.approx(float(wl.olivero_fwhm(sigma, gamma)), rel=2.2e-4)
    x = np.array([exact / 2])
    half = wl.voigt(x, 1.0, 0.0, sigma, gamma)[0] / wl.voigt(0.0, 1.0, 0.0, sigma, gamma)
    assert half == pytest.approx(0.5, rel=1e-12)  # definition of the FWHM


def test_voigt_fwhm_reduces_to_the_gaussian_and_lorentzian_limits():
    # FWHM = 2 sigma sqrt(2 ln 2) and 2 gamma (common practice)
    assert float(wl.voigt_fwhm(0.8, 0.0)) == pytest.approx(0.8 * 2 * np.sqrt(2 * np.log(2)),
                                                           rel=1e-12)
    assert float(wl.voigt_fwhm(1e-7, 0.6)) == pytest.approx(1.2, rel=1e-6)


def test_tch_pseudo_voigt_mixing_goes_from_pure_gaussian_to_pure_lorentzian():
    # Thompson, Cox & Hastings, J. Appl. Cryst. 20 (1987) 79: eta(q=0) = 0, eta(q=1) = 1
    f, eta = wl.tch_parameters(0.5, 0.0)
    assert eta == pytest.approx(0.0, abs=1e-15)
    assert f == pytest.approx(0.5 * 2 * np.sqrt(2 * np.log(2)), rel=1e-12)
    f, eta = wl.tch_parameters(0.0, 0.5)
    assert eta == pytest.approx(1.0, abs=1e-5)  # the published coefficients sum to 1.00000
    assert f == pytest.approx(1.0, rel=1e-12)


def test_doppler_sigma_matches_the_standard_fwhm_formula():
    # FWHM_D ≈ 7.162e-7 * nu0 * sqrt(T / M) (standard Doppler width, common practice)
    nu0, t, mass = 2886.0, 296.0, 36.46
    fwhm = float(wl.doppler_sigma(nu0, t, mass)) * 2 * np.sqrt(2 * np.log(2))
    assert fwhm == pytest.approx(7.162e-7 * nu0 * np.sqrt(t / mass), rel=2e-4)
    # and its definition sigma = nu0 sqrt(kT / (m c^2)) with CODATA constants (scipy.constants)
    ref = nu0 * np.sqrt(constants.k * t / (mass * constants.atomic_mass * constants.c**2))
    assert float(wl.doppler_sigma(nu0, t, mass)) == pytest.approx(ref, rel=1e-14)


def test_unknown_shape_name_raises_fit_error_listing_the_choices():
    with pytest.raises(FitError, match="pseudo_voigt"):
        get_shape("sinc")
