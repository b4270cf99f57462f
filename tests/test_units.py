"""Unit conversion to wavenumber, checked against scipy.constants (CODATA)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import constants

from widgetkit.units import (
    C_CM_PER_S,
    X_UNITS,
    from_wavenumber,
    normalise_x_unit,
    to_wavenumber,
)


def test_the_speed_of_light_is_the_codata_value():
    assert C_CM_PER_S == constants.c * 100  # scipy.constants.c, exact by definition of the metre


def test_one_terahertz_is_about_33_356_wavenumbers():
    # 1e12 Hz / (100 c) with c from scipy.constants (= 33.35641 cm-1)
    assert to_wavenumber([1.0], "THz")[0] == pytest.approx(1e12 / (100 * constants.c), rel=1e-15)
    assert to_wavenumber([1.0], "THz")[0] == pytest.approx(33.35641, abs=5e-6)


def test_wavelengths_in_nm_and_um_invert_to_wavenumber():
    # 1e7 / lambda[nm] and 1e4 / lambda[um] (vacuum wavelength; common practice)
    assert to_wavenumber([1000.0, 2500.0], "nm").tolist() == [10000.0, 4000.0]
    assert to_wavenumber([2.5, 10.0], "um").tolist() == [4000.0, 1000.0]


def test_wavenumber_passes_through_as_a_copy():
    v = np.array([400.0, 4000.0])
    out = to_wavenumber(v, "cm-1")
    assert out.tolist() == v.tolist() and out is not v


@pytest.mark.parametrize("name, canonical", [
    ("cm-1", "cm-1"), ("1/CM", "cm-1"), ("cm^-1", "cm-1"), ("cm⁻¹", "cm-1"), ("NANOMETERS", "nm"),
    ("nm", "nm"), ("MICROMETERS", "um"), ("µm", "um"), ("microns", "um"), ("THz", "THz"),
])
def test_unit_names_normalise_to_the_canonical_four(name, canonical):
    assert normalise_x_unit(name) == canonical
    assert canonical in X_UNITS


def test_an_unknown_unit_lists_the_accepted_ones():
    with pytest.raises(ValueError, match="cm-1, nm, um, THz"):
        normalise_x_unit("HZ")


def test_a_non_positive_wavelength_has_no_wavenumber():
    with pytest.raises(ValueError, match="positive"):
        to_wavenumber([0.0, 500.0], "nm")


@pytest.mark.parametrize("unit", ["nm", "um", "THz", "cm-1"])
def test_from_wavenumber_undoes_to_wavenumber(unit):
    v = np.array([400.0, 1234.5, 4000.0])
    # self-consistency round trip
    assert to_wavenumber(from_wavenumber(v, unit), unit) == pytest.approx(v, rel=1e-15)


def test_from_wavenumber_gives_wavelength_and_frequency():
    from widgetkit.units import from_wavenumber

    assert from_wavenumber([4000.0], "um")[0] == 2.5  # 1e4 / 4000 cm-1
    # nu = wavenumber * 100 c, c from scipy.constants
    assert from_wavenumber([1.0], "THz")[0] == pytest.approx(100 * constants.c / 1e12, rel=1e-15)
