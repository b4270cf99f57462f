"""The one noise σ: measured on line-free points, never 0, never fooled by dense lines."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

import widgetkit.lines as wl
import widgetkit.processing as P
from widgetkit.processing import ProcessingError, estimate_noise, measure_noise


def _dense_band(seed: int, sigma: float = 0.3):
    """Invented band at low resolution: 24 lines three points wide on 363 points."""
    rng = np.random.default_rng(seed)
    x = np.linspace(2600.0, 3100.0, 363)
    y = np.zeros_like(x)
    for p in np.linspace(2650.0, 3050.0, 24):
        y += wl.gaussian(x, 90.0, p, 1.7)
    return x, y + rng.normal(0.0, sigma, x.size), sigma


def test_the_sigma_of_seeded_white_noise_is_recovered():
    rng = np.random.default_rng(1)
    for sigma, n in ((0.003, 50_000), (1.0, 2_000), (250.0, 300)):
        y = rng.normal(0.0, sigma, n)
        est = measure_noise(None, y)
        # self-consistency: numpy's seeded normal noise of known sigma; the tolerance is
        # five times the relative scatter of a standard deviation, 1/sqrt(2n)
        assert est.sigma == pytest.approx(sigma, rel=5 / math.sqrt(2 * n))
        assert est.method == "line-free points" and est.lag == 1 and est.floor == ""


def test_dense_undersampled_lines_do_not_inflate_the_noise():
    ratios = []
    for seed in range(6):
        x, y, sigma = _dense_band(seed)
        ratios.append(estimate_noise(y) / sigma)
        # reference: the usual robust estimate, the normal-scaled median absolute deviation
        # of first differences (scipy.stats), is fooled by lines covering most points
        naive = stats.median_abs_deviation(np.diff(y), scale="normal") / math.sqrt(2)
        assert naive > 2 * sigma
    # self-consistency with the simulated sigma; about 50 line-free points each, so the
    # single estimates scatter by about 10 %
    assert 0.8 < np.median(ratios) < 1.2
    assert all(0.6 < r < 1.5 for r in ratios)


def test_sloping_baselines_and_fringes_leave_the_noise_unchanged():
    rng = np.random.default_rng(3)
    x = np.linspace(2000.0, 2300.0, 30_000)
    noise = rng.normal(0.0, 0.001, x.size)
    flat = estimate_noise(noise)
    wavy = 0.1 + 1e-3 * (x - 2000.0) + 0.02 * np.sin(2 * np.pi * x / 3.0)
    for p in np.arange(2010.0, 2290.0, 3.8):  # invented lines every 3.8 cm-1
        wavy = wavy + wl.voigt(x, 0.05, p, 0.01, 0.02)
    assert estimate_noise(wavy + noise) == pytest.approx(flat, rel=0.03)
    assert np.std(wavy + noise) > 10 * flat  # the plain spread is ruined


def test_a_digitised_flat_stretch_gets_the_rounding_floor_not_zero():
    rng = np.random.default_rng(4)
    y = np.round(rng.normal(0.0, 0.05, 4000) / 0.01) * 0.01  # noise five steps of 0.01 wide
    quiet = np.round(rng.normal(0.0, 0.2, 4000))  # about 99 % of the values are exactly 0
    est = measure_noise(None, quiet)
    # the standard deviation of a uniform rounding error over one step q is q/sqrt(12)
    # (common practice for quantisation noise)
    assert est.sigma == pytest.approx(1.0 / math.sqrt(12.0), rel=1e-9)
    assert est.floor == "digitisation" and est.quantum == pytest.approx(1.0)
    assert "digitisation floor" in est.describe()
    # noise five steps wide: the spread of the digitised values themselves
    assert estimate_noise(y) == pytest.approx(np.std(y), rel=0.05)  # numpy reference


def test_noise_shared_by_neighbouring_points_is_followed_over_a_few_lags():
    rng = np.random.default_rng(5)
    white = rng.normal(0.0, 1.0, 40_000)
    smooth = np.convolve(white, np.ones(3) / math.sqrt(3.0), "same")  # unit variance, correlated
    est = measure_noise(None, smooth)
    assert est.lag > 1
    assert est.sigma == pytest.approx(1.0, rel=0.05)  # self-consistency: unit variance by design
    # lag-1 differences alone (scipy's MAD) would report sqrt(1 - 2/3) of it
    naive = stats.median_abs_deviation(np.diff(smooth), scale="normal") / math.sqrt(2)
    assert naive == pytest.approx(1 / math.sqrt(3), rel=0.05)


def test_a_given_flat_region_measures_the_noise_there_only():
    rng = np.random.default_rng(6)
    x = np.linspace(1000.0, 1100.0, 5001)
    y = 0.5 + 0.002 * x + rng.normal(0.0, 0.01, x.size)
    y[x > 1050] += wl.lorentzian(x[x > 1050], 3.0, 1075.0, 5.0)
    est = measure_noise(x, y, noise_region=(1040.0, 1000.0))  # either order
    keep = (x >= 1000.0) & (x <= 1040.0)
    resid = y[keep] - np.polyval(np.polyfit(x[keep], y[keep], 1), x[keep])
    # reference: numpy's standard deviation about a least-squares straight line
    assert est.sigma == pytest.approx(np.std(resid, ddof=2), rel=0.02)
    assert est.method == "noise region" and est.region == (1000.0, 1040.0)
    assert est.n_used == int(keep.sum())


@pytest.mark.parametrize("region, match", [((2000.0, 2001.0), "holds 0 points"),
                                           (("a", 1), "must be"), ((1, np.nan), "finite")])
def test_a_bad_noise_region_is_refused_with_what_was_wrong(region, match):
    x = np.linspace(1000.0, 1100.0, 101)
    with pytest.raises(ProcessingError, match=match):
        measure_noise(x, np.sin(x), noise_region=region)


def test_exact_data_get_a_stated_floor_instead_of_zero():
    est = measure_noise(None, np.linspace(0.0, 3.0, 50))
    assert est.sigma == pytest.approx(3e-9)  # 1e-9 of the range, by definition
    assert est.floor == "exact data" and "no noise found" in est.describe()


def test_the_estimate_is_recorded_as_plain_json():
    est = measure_noise(None, np.random.default_rng(7).normal(0, 2, 1000))
    doc = est.to_json()
    assert set(doc) >= {"sigma", "method", "n_used", "line_free_fraction", "lag", "floor"}
    assert doc["sigma"] == est.sigma and isinstance(doc["n_used"], int)


def test_line_free_mask_leaves_out_the_lines_and_keeps_the_gaps():
    x, y, sigma = _dense_band(8)
    free = P.line_free_mask(y, sigma)
    line_core = np.zeros(x.size, dtype=bool)
    for p in np.linspace(2650.0, 3050.0, 24):
        line_core |= np.abs(x - p) < 2 * 1.7  # within two sigma of each simulated centre
    assert not np.any(free & line_core)
    assert free.sum() > 20


def test_a_fringe_of_a_few_dozen_points_is_not_taken_for_noise_shared_by_neighbours():
    # invented demo data: unit white noise plus a fringe of amplitude 30 and period 49 points,
    # whose differences keep growing with the lag; noise shared by neighbours would level off.
    # Before lag 1 was kept for such data, sigma came out near 10 (lag 8); the rest of the
    # fringe's slope left by the 31-point trend removal still adds about half a sigma
    rng = np.random.default_rng(26)
    i = np.arange(20_000)
    y = rng.normal(0.0, 1.0, i.size) + 30.0 * np.sin(2 * np.pi * i / 49.0)
    est = measure_noise(None, y)
    assert est.lag == 1
    assert 1.0 <= est.sigma < 2.0
