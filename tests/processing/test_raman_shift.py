"""Raman shift from absolute wavenumbers, with the laser line in air or vacuum."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.processing import excitation_wavenumber, to_raman_shift
from widgetkit.units import air_to_vacuum_nm, vacuum_to_air_nm


def test_air_and_vacuum_wavelengths_of_the_sodium_d_lines():
    # NIST Atomic Spectra Database, Na I D2 and D1 (from memory): air 588.9950 / 589.5924 nm,
    # vacuum 589.1583 / 589.7558 nm
    assert air_to_vacuum_nm(588.9950) == pytest.approx(589.1583, abs=2e-4)
    assert air_to_vacuum_nm(589.5924) == pytest.approx(589.7558, abs=2e-4)
    assert vacuum_to_air_nm(589.1583) == pytest.approx(588.9950, abs=2e-4)


def test_helium_neon_laser_line_in_air_and_vacuum():
    # He–Ne laser 632.816 nm in air = 632.991 nm in vacuum (common practice, from memory)
    assert air_to_vacuum_nm(632.816) == pytest.approx(632.991, abs=1e-3)


def _absolute(shifts, nu0, y_kind="intensity"):
    x = np.sort(nu0 - np.asarray(shifts, dtype=float))
    return wk.Spectrum(x, np.arange(len(x), dtype=float) + 1, y_kind=y_kind)


def test_stokes_shifts_are_positive_and_anti_stokes_negative():
    nu0 = excitation_wavenumber(532.0, "nm", "vacuum")
    assert nu0 == pytest.approx(1e7 / 532.0)  # ν̃ = 10^7/λ[nm] (DOMAIN units)
    shifts = np.array([-2330.0, -100.0, 0.0, 100.0, 2330.0])
    out = to_raman_shift(_absolute(shifts, nu0), 532.0, medium="vacuum")
    assert np.allclose(out.x, shifts, atol=1e-9)
    assert out.meta["x_axis"] == "raman_shift" and out.meta["technique"] == "raman"
    # y follows its points (the order reverses): the highest absolute wavenumber had y = 5
    assert out.y[0] == 5 and out.y[-1] == 1


def test_an_air_wavelength_is_converted_to_vacuum_before_the_shift():
    nu_air_quoted = 1e7 / 532.0
    nu_vac = excitation_wavenumber(532.0, "nm", "air")
    assert nu_vac == pytest.approx(1e7 / air_to_vacuum_nm(532.0))
    assert nu_air_quoted - nu_vac == pytest.approx(5.2, abs=0.1)  # n − 1 ≈ 2.78e-4 at 532 nm (Edlén)
    assert excitation_wavenumber(18796.99, "cm-1") == 18796.99


def test_the_medium_of_a_laser_wavelength_must_be_stated():
    sp = _absolute([100, 200, 300], 18797.0)
    with pytest.raises(wk.ProcessingError, match="medium='air' or medium='vacuum'"):
        to_raman_shift(sp, 532.0)
    with pytest.raises(wk.ProcessingError, match="vacuum"):
        excitation_wavenumber(18797.0, "cm-1", "air")


def test_impossible_conversions_are_refused_with_the_reason():
    sp = _absolute([100, 200, 300], 18797.0)
    with pytest.raises(wk.ProcessingError, match="cm-1 or more from the laser line"):
        to_raman_shift(sp, 532.0, unit="cm-1")  # a wavelength given as a wavenumber
    shifted = to_raman_shift(sp, 18797.0, unit="cm-1")
    with pytest.raises(wk.ProcessingError, match="already a Raman shift"):
        to_raman_shift(shifted, 18797.0, unit="cm-1")
    tr = _absolute([100, 200, 300], 18797.0, y_kind="transmittance")
    with pytest.raises(wk.ProcessingError, match="transmittance"):
        to_raman_shift(tr, 18797.0, unit="cm-1")
    with pytest.raises(wk.ProcessingError, match="positive"):
        excitation_wavenumber(-532, "nm", "air")


def test_an_axis_read_from_air_wavelengths_is_corrected_point_by_point():
    lam_air = np.array([540.0, 560.0, 600.0])
    x_as_read = np.sort(1e7 / lam_air)  # what a reader makes of air wavelengths
    sp = wk.Spectrum(x_as_read, [1.0, 2.0, 3.0], y_kind="intensity")
    out = to_raman_shift(sp, 532.0, medium="air", axis_medium="air")
    want = np.sort(1e7 / air_to_vacuum_nm(532.0) - 1e7 / air_to_vacuum_nm(lam_air))
    assert np.allclose(out.x, want, atol=1e-6)
