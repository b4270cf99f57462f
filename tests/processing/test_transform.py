"""Cropping and the absorbance/transmittance conversion."""

from __future__ import annotations

import numpy as np
import pytest

from widgetkit import Spectrum, SpectrumFormatError, WidgetkitError
from widgetkit.processing import (
    ProcessingError,
    crop,
    to_absorbance,
    to_transmittance,
)


def _spectrum(y_kind: str = "absorbance", n: int = 11) -> Spectrum:
    x = np.linspace(1000.0, 1010.0, n)  # 1 cm-1 spacing for n = 11 (demo grid)
    y = np.linspace(0.1, 0.9, n)
    return Spectrum(x, y, y_kind=y_kind, meta={"title": "cell 3, demo"})


# --- crop ---------------------------------------------------------------------------


def test_crop_keeps_points_between_the_bounds_with_both_ends_included():
    s = _spectrum()
    out = crop(s, 1002.0, 1005.0)
    # contract (Session.crop docstring): lo <= x <= hi, ends included
    assert out.x.tolist() == [1002.0, 1003.0, 1004.0, 1005.0]
    assert np.array_equal(out.y, s.y[2:6])


def test_crop_accepts_the_bounds_in_either_order():
    s = _spectrum()
    # documented choice: a range read high-to-low (infrared habit, common practice) is the same
    assert crop(s, 1005.0, 1002.0) == crop(s, 1002.0, 1005.0)


def test_crop_keeps_kind_metadata_and_source_and_leaves_the_input_alone():
    s = _spectrum("intensity")
    before = s.y.copy()
    out = crop(s, 1001.0, 1009.0)
    assert out.y_kind == "intensity"
    assert out.meta == {"title": "cell 3, demo"}
    assert np.array_equal(s.y, before) and len(s) == 11


def test_crop_to_fewer_than_three_points_says_so_and_gives_the_available_range():
    s = _spectrum()
    with pytest.raises(SpectrumFormatError) as info:
        crop(s, 1002.5, 1003.5)  # holds only x = 1003
    msg = str(info.value)
    assert "1 point" in msg and "fewer than the 3" in msg
    assert "1000-1010 cm-1" in msg and "11 points" in msg


def test_crop_outside_the_data_is_refused():
    with pytest.raises(SpectrumFormatError, match="0 point"):
        crop(_spectrum(), 2000.0, 3000.0)


@pytest.mark.parametrize("lo, hi", [(float("nan"), 1005.0), (1000.0, float("inf")), ("a", 1)])
def test_crop_with_a_bound_that_is_not_a_finite_number_is_refused(lo, hi):
    with pytest.raises(ProcessingError):
        crop(_spectrum(), lo, hi)


# --- absorbance / transmittance -------------------------------------------------------


def test_to_absorbance_takes_minus_log10_of_transmittance():
    x = [1000.0, 1001.0, 1002.0, 1003.0]
    t = [1.0, 0.1, 0.01, 0.5]
    out = to_absorbance(Spectrum(x, t, y_kind="transmittance"))
    # A = -log10 T (decadic absorbance, IUPAC definition, from memory):
    # T = 1 -> 0, T = 0.1 -> 1, T = 0.01 -> 2, T = 0.5 -> log10 2 = 0.30103 (log table, from memory)
    assert out.y == pytest.approx([0.0, 1.0, 2.0, 0.30103], abs=1e-5)
    assert out.y_kind == "absorbance"
    assert np.array_equal(out.x, x)


def test_to_absorbance_reports_how_many_and_where_transmittance_is_not_positive():
    x = np.arange(1000.0, 1020.0)  # demo grid
    t = np.full(x.size, 0.5)
    t[3:6] = 0.0  # a saturated stretch
    t[12] = -0.002  # a zero-offset dip
    s = Spectrum(x, t, y_kind="transmittance")
    with pytest.raises(SpectrumFormatError) as info:
        to_absorbance(s)
    err = info.value
    assert isinstance(err, WidgetkitError) and isinstance(err, ValueError)
    msg = str(err)
    assert "4 of 20 points have T <= 0" in msg
    assert "indices 3-5 (1003-1005 cm-1)" in msg
    assert "index 12 (1012 cm-1)" in msg
    assert "crop" in msg  # says how to fix it


def test_to_absorbance_refuses_values_that_look_like_percent():
    s = Spectrum([1.0, 2.0, 3.0], [95.0, 40.0, 88.0], y_kind="transmittance")
    with pytest.raises(SpectrumFormatError, match="divide them by 100"):
        to_absorbance(s)


def test_to_absorbance_of_absorbance_is_refused_clearly():
    with pytest.raises(SpectrumFormatError, match="already absorbance"):
        to_absorbance(_spectrum("absorbance"))


def test_to_absorbance_of_intensity_is_refused_clearly():
    with pytest.raises(SpectrumFormatError, match="'intensity'"):
        to_absorbance(_spectrum("intensity"))


def test_to_transmittance_takes_ten_to_the_minus_absorbance():
    s = Spectrum([1.0, 2.0, 3.0], [0.0, 1.0, 3.0], y_kind="absorbance")
    # T = 10**(-A), the inverse of the definition above: 1, 0.1, 0.001
    out = to_transmittance(s)
    assert out.y == pytest.approx([1.0, 0.1, 0.001], rel=1e-12)
    assert out.y_kind == "transmittance"


def test_absorbance_and_transmittance_round_trip():
    rng = np.random.default_rng(7)
    t = rng.uniform(0.02, 1.0, 50)  # self-consistency check on random fractions
    s = Spectrum(np.arange(50.0), t, y_kind="transmittance")
    back = to_transmittance(to_absorbance(s))
    assert np.allclose(back.y, t, rtol=1e-12)


def test_to_transmittance_refuses_transmittance_and_intensity():
    with pytest.raises(SpectrumFormatError, match="already transmittance"):
        to_transmittance(_spectrum("transmittance"))
    with pytest.raises(SpectrumFormatError, match="'intensity'"):
        to_transmittance(_spectrum("intensity"))


def test_to_transmittance_refuses_absorbance_that_would_overflow():
    s = Spectrum([1.0, 2.0, 3.0], [0.0, -400.0, 0.0], y_kind="absorbance")
    with pytest.raises(SpectrumFormatError, match="index 1"):
        to_transmittance(s)
