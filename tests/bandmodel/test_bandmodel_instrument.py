"""Instrument line shapes: unit area, FWHM per the stated convention, transforms."""

import math

import numpy as np
import pytest
from scipy.integrate import trapezoid
from scipy.optimize import brentq

from widgetkit.bandmodel import instrument as ins
from widgetkit.errors import FitError

#: a fine grid far into the slowly decaying sinc (1/δ) and sinc² (1/δ²) tails
D = np.linspace(-3000.0, 3000.0, 1_200_001)


@pytest.mark.parametrize("kind", ins.INSTRUMENTS)
def test_every_instrument_line_shape_has_unit_area(kind):
    # trapezoidal integral (scipy.integrate.trapezoid); the tails beyond ±3000 cm-1 hold at
    # most ~1/(π² L 3000) of the area for sinc², and cancel in pairs for sinc
    area = trapezoid(ins.profile(kind, 1.0, D), D)
    assert area == pytest.approx(1.0, abs={"gaussian": 1e-9, "triangular": 1e-4,
                                           "boxcar": 2e-4}[kind])


@pytest.mark.parametrize("kind", ins.INSTRUMENTS)
def test_fwhm_follows_the_stated_convention(kind):
    # half maximum found numerically (scipy brentq) against the module's table: Gaussian FWHM = Δ,
    # triangular 0.8859 Δ, boxcar 0.6034 Δ (sinc(1.8955) = sinc²(1.3916) = 1/2, computed)
    res = 2.0
    peak = ins.profile(kind, res, 0.0)
    half = brentq(lambda d: ins.profile(kind, res, d) - 0.5 * peak, 1e-6, res)
    assert 2 * half == pytest.approx(ins.fwhm_factor(kind) * res, rel=1e-4)


@pytest.mark.parametrize("kind", ins.INSTRUMENTS)
def test_transfer_is_the_fourier_transform_of_the_line_shape(kind):
    # A(t) = ∫ ILS(δ) cos(2π t δ) dδ (the ILS is even), by the trapezoidal rule on a fine grid
    prof = ins.profile(kind, 1.0, D)
    for t in (0.1, 0.3, 0.55, 1.3):
        num = trapezoid(prof * np.cos(2 * math.pi * t * D), D)
        assert num == pytest.approx(float(ins.transfer(kind, 1.0, np.array([t]))[0]), abs=5e-4)


def test_transfer_derivative_matches_finite_differences():
    t = np.linspace(0.013, 1.49, 29)  # away from the kink of the triangle at t = L
    for kind in ("gaussian", "triangular"):
        h = 1e-6
        num = (ins.transfer(kind, 1.0 + h, t) - ins.transfer(kind, 1.0 - h, t)) / (2 * h)
        np.testing.assert_allclose(ins.transfer_derivative(kind, 1.0, t), num, atol=1e-6)


def test_aliases_and_unknown_instruments():
    assert ins.check_instrument("sinc") == "boxcar"
    assert ins.check_instrument("sinc2") == "triangular"
    with pytest.raises(FitError, match="instrument must be one of gaussian, triangular, boxcar"):
        ins.check_instrument("lorentzian")
