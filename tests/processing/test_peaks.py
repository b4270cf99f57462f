"""Noise estimate, peak picking, click snapping and hand-placed peaks."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import signal, stats

from widgetkit.processing import (
    PEAK_COLUMNS,
    ProcessingError,
    estimate_noise,
    find_peaks,
    nearest_maximum,
    peak_row,
    peak_table,
    refine_parabola,
)


def _lorentz(x, centre, height, hwhm):
    return height * hwhm**2 / ((x - centre) ** 2 + hwhm**2)


def _demo_lines(seed: int = 21, sigma: float = 0.01):
    """Invented demo data: six Lorentzian lines on a flat baseline plus Gaussian noise."""
    rng = np.random.default_rng(seed)
    x = np.linspace(2000.0, 2200.0, 2001)  # 0.1 cm-1 spacing
    centres = [2020.33, 2051.07, 2090.0, 2120.52, 2151.91, 2180.25]
    heights = [0.5, 1.0, 0.2, 0.8, 0.12, 0.6]
    y = sum(_lorentz(x, c, h, 0.8) for c, h in zip(centres, heights, strict=True))
    return x, y + rng.normal(0.0, sigma, x.size), np.array(centres), sigma


# --- noise ---------------------------------------------------------------------------


def test_noise_estimate_recovers_the_sigma_of_seeded_gaussian_noise():
    rng = np.random.default_rng(1)
    for sigma in (0.003, 1.0, 250.0):
        y = rng.normal(0.0, sigma, 50_000)
        # self-consistency: numpy's seeded normal noise of known sigma
        assert estimate_noise(y) == pytest.approx(sigma, rel=0.02)


def test_noise_estimate_matches_scipy_median_absolute_deviation_of_differences():
    rng = np.random.default_rng(2)
    y = np.cumsum(rng.normal(size=3000))
    # reference: scipy.stats.median_abs_deviation with the normal scale, divided by sqrt(2)
    ref = stats.median_abs_deviation(np.diff(y), scale="normal") / math.sqrt(2)
    assert estimate_noise(y) == pytest.approx(ref, rel=1e-5)  # 1.4826 vs 1/Phi^-1(3/4)


def test_noise_estimate_is_insensitive_to_a_few_sharp_peaks_and_a_sloping_baseline():
    rng = np.random.default_rng(3)
    sigma = 0.02
    y = rng.normal(0.0, sigma, 20_000)
    clean = estimate_noise(y)
    spiky = y + np.linspace(0.0, 5.0, y.size)  # a strong slope
    spiky[rng.choice(y.size, 12, replace=False)] += 100.0 * sigma  # twelve sharp spikes
    assert estimate_noise(spiky) == pytest.approx(clean, rel=0.01)
    assert np.std(spiky) > 50 * sigma  # the plain standard deviation is ruined


def test_noise_of_exactly_linear_data_is_zero():
    assert estimate_noise(np.linspace(0.0, 3.0, 10)) == pytest.approx(0.0, abs=1e-15)


# --- parabola refinement ---------------------------------------------------------------


def test_parabola_vertex_is_exact_for_a_sampled_parabola_on_an_uneven_grid():
    x = np.array([10.0, 10.7, 11.1, 12.9, 14.0])
    y = 3.0 - 2.0 * (x - 11.3) ** 2  # a parabola with vertex (11.3, 3.0): three points fix it
    pos, hgt = refine_parabola(x, y, [2])
    assert pos[0] == pytest.approx(11.3, abs=1e-12)
    assert hgt[0] == pytest.approx(3.0, abs=1e-12)


def test_parabola_refinement_keeps_the_sample_at_the_ends_and_on_flat_tops():
    x = np.arange(5.0)
    y = np.array([2.0, 1.0, 1.0, 1.0, 0.5])
    pos, hgt = refine_parabola(x, y, [0, 2])
    assert pos.tolist() == [0.0, 2.0] and hgt.tolist() == [2.0, 1.0]


# --- find_peaks ------------------------------------------------------------------------


def test_find_peaks_agrees_with_scipy_signal_find_peaks():
    x, y, _, _ = _demo_lines()
    noise = estimate_noise(y)
    table = find_peaks(x, y, min_snr=8.0)
    # reference: scipy.signal.find_peaks with the prominence threshold find_peaks documents
    idx, props = signal.find_peaks(y, prominence=8.0 * noise)
    assert table["index"].tolist() == idx.tolist()
    assert np.allclose(table["prominence"], props["prominences"])
    assert np.allclose(table["snr"], props["prominences"] / noise)


def test_find_peaks_with_a_minimum_separation_agrees_with_scipy_distance_in_samples():
    x, y, _, _ = _demo_lines()
    noise = estimate_noise(y)
    table = find_peaks(x, y, min_snr=3.0, min_separation=35.0)
    # 35 cm-1 at 0.1 cm-1 spacing is 350 samples (reference: scipy's distance=)
    idx, _ = signal.find_peaks(y, prominence=3.0 * noise, distance=350)
    assert table["index"].tolist() == idx.tolist()


def test_find_peaks_finds_the_simulated_lines_at_their_positions():
    x, y, centres, sigma = _demo_lines()
    table = find_peaks(x, y, min_snr=8.0)
    assert list(table.columns) == list(PEAK_COLUMNS)
    assert table["peak_id"].tolist() == list(range(1, 7))
    assert np.all(np.diff(table["position"]) > 0)
    # self-consistency: the centres we simulated, within 4 standard errors of a 3-point
    # vertex: slope error sigma*sqrt(2)/(2h) over the curvature 2H/gamma^2 of a Lorentzian top
    heights = np.array([0.5, 1.0, 0.2, 0.8, 0.12, 0.6])
    stderr = (sigma * np.sqrt(2) / (2 * 0.1)) / (2 * heights / 0.8**2)
    assert np.all(np.abs(table["position"] - centres) < 4 * stderr)
    assert table["height"].iloc[1] == pytest.approx(1.0, abs=3 * sigma)


def test_find_peaks_returns_an_empty_table_with_the_columns_when_nothing_stands_out():
    rng = np.random.default_rng(4)
    x = np.linspace(0.0, 10.0, 200)
    table = find_peaks(x, rng.normal(0, 1, 200), min_snr=50.0)
    assert table.empty and list(table.columns) == list(PEAK_COLUMNS)
    assert table["peak_id"].dtype == np.int64


def test_find_peaks_uses_a_given_noise_instead_of_estimating_it():
    x, y, _, _ = _demo_lines()
    loud = find_peaks(x, y, min_snr=5.0, noise=0.1)  # prominence >= 0.5
    assert loud["index"].size == 4  # heights 0.5, 1.0, 0.8, 0.6 of the simulated lines
    assert np.allclose(loud["snr"], loud["prominence"] / 0.1)


def test_find_peaks_refuses_noise_free_data_without_a_given_noise():
    x = np.linspace(0.0, 1.0, 11)
    with pytest.raises(ProcessingError, match="noise="):
        find_peaks(x, 2 * x + 1)


@pytest.mark.parametrize(
    "opts", [{"min_snr": 0}, {"min_snr": float("nan")}, {"min_separation": -1}, {"noise": 0}]
)
def test_find_peaks_refuses_bad_options(opts):
    x, y, _, _ = _demo_lines()
    with pytest.raises(ProcessingError):
        find_peaks(x, y, **opts)


def test_find_peaks_refuses_mismatched_arrays():
    with pytest.raises(ProcessingError, match="differ in length"):
        find_peaks(np.arange(5.0), np.arange(6.0))


# --- nearest_maximum -------------------------------------------------------------------


def test_nearest_maximum_climbs_from_a_flank_to_the_top():
    x = np.linspace(1990.0, 2010.0, 201)
    y = _lorentz(x, 2000.03, 1.0, 1.5)  # noise-free demo line
    for click in (1996.0, 2000.0, 2004.4):
        assert nearest_maximum(x, y, click) == pytest.approx(2000.03, abs=0.01)


def test_nearest_maximum_in_a_valley_goes_to_the_nearer_top():
    x = np.linspace(0.0, 100.0, 1001)
    y = _lorentz(x, 30.0, 1.0, 2.0) + _lorentz(x, 70.0, 2.0, 2.0)
    assert nearest_maximum(x, y, 45.0) == pytest.approx(30.0, abs=0.05)
    assert nearest_maximum(x, y, 55.0) == pytest.approx(70.0, abs=0.05)


def test_nearest_maximum_with_noise_steps_over_noise_wiggles():
    x, y, centres, sigma = _demo_lines()
    heights = np.array([0.5, 1.0, 0.2, 0.8, 0.12, 0.6])
    stderr = (sigma * np.sqrt(2) / (2 * 0.1)) / (2 * heights / 0.8**2)  # as in the test above
    strict_misses = 0
    for c, err in zip(centres, stderr, strict=True):
        for click in (c - 2.0, c + 2.0):  # clicks on both flanks, 2.5 half-widths out
            tolerant = nearest_maximum(x, y, click, noise=sigma)
            assert abs(tolerant - c) < 4 * err  # self-consistency: the simulated centre
            strict_misses += abs(nearest_maximum(x, y, click) - c) > 0.5
    assert strict_misses >= 6  # without noise= the climb stops on wiggles of the flank


def test_nearest_maximum_raises_when_no_top_is_within_the_search_window():
    x = np.linspace(0.0, 10.0, 101)
    y = _lorentz(x, 8.0, 1.0, 0.5)
    with pytest.raises(ProcessingError, match="widen search"):
        nearest_maximum(x, y, 3.0, search=1.0)
    assert nearest_maximum(x, y, 3.0, search=6.0) == pytest.approx(8.0, abs=0.01)


def test_nearest_maximum_raises_when_the_data_rise_to_the_edge():
    x = np.linspace(0.0, 10.0, 101)
    with pytest.raises(ProcessingError, match="edge of the data"):
        nearest_maximum(x, x**2, 5.0)


def test_nearest_maximum_refuses_a_position_outside_the_data():
    x = np.linspace(0.0, 10.0, 101)
    with pytest.raises(ProcessingError, match="outside the data"):
        nearest_maximum(x, np.sin(x), 12.0)


# --- hand-placed peaks ----------------------------------------------------------------


def test_peak_row_at_a_maximum_has_the_prominence_scipy_gives_there():
    x, y, _, sigma = _demo_lines()
    i = int(np.argmax(y))
    row = peak_row(x, y, float(x[i]), sigma)
    ref = signal.peak_prominences(y, [i])[0][0]  # reference: scipy.signal.peak_prominences
    assert row["prominence"] == pytest.approx(ref, rel=1e-12)
    assert row["snr"] == pytest.approx(ref / sigma, rel=1e-12)
    assert row["index"] == i and row["height"] == y[i]


def test_peak_row_keeps_the_position_and_interpolates_the_height():
    x = np.arange(10.0)
    y = np.array([0, 1, 2, 3, 4, 5, 4, 3, 2, 1], dtype=float)
    row = peak_row(x, y, 2.25, 0.1)
    assert row["position"] == 2.25
    assert row["height"] == pytest.approx(2.25)  # linear interpolation between 2 and 3
    assert row["prominence"] == 0.0 and row["snr"] == 0.0  # on a slope: not a maximum


def test_peak_table_numbers_hand_placed_peaks_in_ascending_position():
    x, y, centres, sigma = _demo_lines()
    table = peak_table(x, y, [centres[3], centres[0], centres[5]], sigma)
    assert list(table.columns) == list(PEAK_COLUMNS)
    assert table["peak_id"].tolist() == [1, 2, 3]
    assert table["position"].tolist() == sorted([centres[3], centres[0], centres[5]])
    assert isinstance(table, pd.DataFrame) and table["index"].dtype == np.int64


def test_peak_row_refuses_a_position_outside_the_data():
    with pytest.raises(ProcessingError, match="outside the data"):
        peak_row(np.arange(5.0), np.ones(5), -1.0, 0.1)
