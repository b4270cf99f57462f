"""Peak picking, click snapping and hand-placed peaks (the noise σ: test_noise.py)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from scipy import signal, stats

import widgetkit.lines as wl
from widgetkit.processing import (
    PEAK_COLUMNS,
    ProcessingError,
    default_threshold,
    estimate_noise,
    find_peaks,
    nearest_maximum,
    peak_row,
    peak_table,
    refine_parabola,
    search_peaks,
    typical_width,
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


def test_the_automatic_threshold_follows_the_gaussian_tail_for_the_length():
    # reference: scipy.stats.norm.isf, Q(t) = 0.05 / (2 max(N, 1e5)) (module docstring)
    assert default_threshold(1_000) == pytest.approx(stats.norm.isf(0.05 / 2e5))
    assert default_threshold(1e5) == pytest.approx(5.0263, abs=1e-4)
    assert default_threshold(1e6) == pytest.approx(stats.norm.isf(0.05 / 2e6))
    assert default_threshold(1e6, channels=2) > default_threshold(1e6)
    # Rice (1945): n sqrt(2(1 - rho)) / (2 pi) exp(-t^2/2) maxima above t; rho = 0.9, n = 1e5
    t = default_threshold(1e5, rho=0.9)
    assert 1e5 * math.sqrt(0.2) / (2 * math.pi) * math.exp(-t * t / 2) == pytest.approx(0.025)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_two_hundred_thousand_points_of_pure_noise_give_at_most_one_peak(seed):
    rng = np.random.default_rng(seed)
    x = 1000.0 + 0.01 * np.arange(200_000)
    table = find_peaks(x, rng.normal(0.0, 1.0, x.size))
    # the threshold's aim: on average under 0.05 false peaks in such a spectrum
    assert len(table) <= 1


def _six_sigma_lines(seed: int, fwhm_points: float, shape: str = "gaussian"):
    """Invented spectrum: 19 isolated lines of height 6 sigma on 20000 points of unit noise."""
    rng = np.random.default_rng(seed)
    x = 1000.0 + 0.1 * np.arange(20_000)
    centres = np.arange(1050.0, 2950.0, 100.0) + rng.uniform(-5.0, 5.0, 19)
    f = 0.1 * fwhm_points
    y = rng.normal(0.0, 1.0, x.size)
    for c in centres:
        if shape == "gaussian":
            y += 6.0 * np.exp(-4.0 * math.log(2.0) * (x - c) ** 2 / f**2)
        else:
            y += _lorentz(x, c, 6.0, f / 2.0)
    return x, y, centres, f


@pytest.mark.parametrize("fwhm_points, shape", [(3, "gaussian"), (5, "gaussian"),
                                                (12, "gaussian"), (4, "lorentzian")])
def test_isolated_lines_six_sigma_high_are_found_at_least_95_percent_of_the_time(
        fwhm_points, shape):
    found = total = false = 0
    for seed in range(6):
        x, y, centres, f = _six_sigma_lines(seed, fwhm_points, shape)
        pos = find_peaks(x, y)["position"].to_numpy()
        for c in centres:
            total += 1
            found += bool(np.any(np.abs(pos - c) < f))
        false += sum(np.min(np.abs(p - centres)) > 3 * f for p in pos)
    # self-consistency with the simulated lines; the aim is >= 95 %
    assert found / total >= 0.95
    assert false <= 1


def test_find_peaks_finds_the_simulated_lines_at_their_positions():
    x, y, centres, sigma = _demo_lines()
    table = find_peaks(x, y)
    assert list(table.columns) == list(PEAK_COLUMNS)
    assert table["peak_id"].tolist() == list(range(1, 7))
    assert np.all(np.diff(table["position"]) > 0)
    heights = np.array([0.5, 1.0, 0.2, 0.8, 0.12, 0.6])
    # self-consistency: within 4 standard errors of a three-point vertex (slope error
    # sigma*sqrt(2)/(2h) over the curvature 2H/gamma^2 of a Lorentzian top), taken on
    # data smoothed over about 0.6 FWHM, which only lowers the error
    stderr = (sigma * np.sqrt(2) / (2 * 0.1)) / (2 * heights / 0.8**2)
    assert np.all(np.abs(table["position"] - centres) < 4 * stderr)
    assert table["height"].iloc[1] == pytest.approx(1.0, abs=3 * sigma)
    # snr is the height above the local baseline over the noise
    assert np.allclose(table["snr"], (table["height"] - table["baseline"]) / estimate_noise(y),
                       rtol=1e-9)
    # the FWHM of a Lorentzian of HWHM 0.8 is 1.6 cm-1 (definition), within 15 %
    assert np.allclose(table["fwhm"], 1.6, rtol=0.15)


def test_the_snr_of_a_line_does_not_depend_on_how_much_of_the_spectrum_is_kept():
    x, y, centres, _ = _demo_lines()
    whole = find_peaks(x, y)
    line = whole.iloc[1]
    for half in (8.0, 20.0, 60.0):
        keep = np.abs(x - centres[1]) <= half
        part = find_peaks(x[keep], y[keep])
        row = part.iloc[int(np.argmin(np.abs(part["position"] - line["position"])))]
        assert row["snr"] == pytest.approx(line["snr"], rel=0.15)


def test_dips_of_a_transmittance_spectrum_are_found_pointing_down():
    x, y, centres, sigma = _demo_lines()
    t = 10.0 ** -y  # invented transmittance of the demo absorbance
    table = find_peaks(x, t, direction="down")
    assert len(table) == 6 and np.all(np.abs(table["position"] - centres) < 0.1)
    assert np.all(table["height"] < table["baseline"]) and np.all(table["snr"] > 0)


def test_noise_on_a_flat_saturated_bottom_stays_one_line():
    rng = np.random.default_rng(12)
    x = np.arange(0.0, 200.0, 0.02)
    a = np.zeros_like(x)
    centres = [40.0, 80.0, 120.0, 160.0]
    for c, peak in zip(centres, [5.0, 20.0, 50.0, 1.0], strict=True):
        a += peak * wl.voigt(x, 1.0, c, 0.05, 0.05) / wl.voigt(0.0, 1.0, 0.0, 0.05, 0.05)
    t = 10.0 ** -a + rng.normal(0.0, 0.002, x.size)  # lines of absorbance up to 50: T = 0
    pos = find_peaks(x, t, direction="down")["position"].to_numpy()
    assert [int(np.sum(np.abs(pos - c) < 2.0)) for c in centres] == [1, 1, 1, 1]


def test_two_lines_with_a_real_dip_between_them_are_split():
    rng = np.random.default_rng(13)
    x = np.arange(0.0, 100.0, 0.05)
    f = 1.0
    y = wl.gaussian(x, 1.0, 50.0, f / 2.3548) + wl.gaussian(x, 0.8, 50.0 + 1.3 * f, f / 2.3548)
    y = 100.0 * y / y.max() + rng.normal(0.0, 1.0, x.size)
    table = find_peaks(x, y)
    assert len(table) == 2
    assert np.allclose(table["position"], [50.0, 51.3], atol=0.15)  # the simulated centres


def test_a_given_noise_scales_the_snr_and_a_given_threshold_applies_to_it():
    x, y, _, _ = _demo_lines()
    loud = find_peaks(x, y, min_snr=4.0, noise=0.1)
    assert len(loud) == 4  # heights 0.5, 1.0, 0.8, 0.6 reach 4 x 0.1; 0.2 and 0.12 do not
    assert np.allclose(loud["snr"], (loud["height"] - loud["baseline"]) / 0.1)


def test_the_search_says_how_it_chose_its_threshold_and_noise():
    x, y, _, sigma = _demo_lines()
    search = search_peaks(x, y)
    assert search.threshold.startswith("automatic")
    assert search.noise.method == "line-free points"
    assert search.noise.sigma == pytest.approx(sigma, rel=0.1)  # the simulated noise
    doc = search.to_json()
    assert doc["min_snr"] == search.min_snr and doc["noise"]["sigma"] == search.noise.sigma
    assert search_peaks(x, y, min_snr=12.0).threshold == "given"


def test_noise_free_data_get_their_lines():
    x = np.linspace(0.0, 100.0, 2001)
    y = _lorentz(x, 30.0, 1.0, 1.0) + _lorentz(x, 70.0, 0.5, 1.0)
    search = search_peaks(x, y)
    assert 0 < search.noise.sigma < 1e-5  # no noise: only the smooth curve's own texture
    assert np.allclose(search.table["position"], [30.0, 70.0], atol=1e-3)


def test_find_peaks_returns_an_empty_table_with_the_columns_when_nothing_stands_out():
    rng = np.random.default_rng(4)
    x = np.linspace(0.0, 10.0, 200)
    table = find_peaks(x, rng.normal(0, 1, 200), min_snr=50.0)
    assert table.empty and list(table.columns) == list(PEAK_COLUMNS)
    assert table["peak_id"].dtype == np.int64


@pytest.mark.parametrize(
    "opts", [{"min_snr": 0}, {"min_snr": float("nan")}, {"min_separation": -1}, {"noise": 0},
             {"direction": "sideways"}, {"min_prominence": -1}]
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
    assert row["snr"] == pytest.approx(y[i] / sigma, rel=1e-12)  # baseline 0 by default
    assert row["index"] == i and row["height"] == y[i]


def test_peak_row_keeps_the_position_and_measures_from_the_given_baseline():
    x = np.arange(10.0)
    y = np.array([0, 1, 2, 3, 4, 5, 4, 3, 2, 1], dtype=float)
    row = peak_row(x, y, 2.25, 0.1, baseline=np.full(10, 1.0))
    assert row["position"] == 2.25
    assert row["height"] == pytest.approx(2.25)  # linear interpolation between 2 and 3
    assert row["snr"] == pytest.approx(12.5)  # (2.25 - 1) / 0.1
    assert row["prominence"] == 0.0  # on a slope: not a maximum


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


def test_the_local_baseline_leaves_out_the_whole_top_of_a_band_hundreds_of_points_wide():
    # invented demo data: one Gaussian band of FWHM 400 points, 30 sigma high, on unit noise;
    # the points above the baseline are widened by a quarter of the 4001-point window, and
    # for runs longer than 127 points that widening once overflowed and let the top back in
    from widgetkit.processing import local_baseline
    from widgetkit.processing.envelope import baseline_window

    rng = np.random.default_rng(3)
    i = np.arange(20_000)
    y = rng.normal(0.0, 1.0, i.size) + 30.0 * np.exp(-4 * math.log(2) * ((i - 10_000) / 400) ** 2)
    base, free, _ = local_baseline(y, 1.0, window=baseline_window(400, i.size), width=400)
    assert not free[9_000:11_001].any()
    # the baseline bridges the band at the level of the noise around it (true level 0)
    assert abs(base[10_000]) < 1.0


def test_two_narrow_lines_on_a_strongly_curved_baseline_keep_their_width_and_significance():
    # invented data (self-consistency): two Gaussian lines of FWHM 0.04 cm-1 (6 samples),
    # heights 800 and 2400 noise sigmas, on a cubic baseline 2500 sigmas deep; the weaker
    # line sits on the steep flank, where its width at half prominence takes in the curve
    x = np.linspace(3543.8, 3678.8, 20_000)
    u = (x - x.mean()) / (0.5 * np.ptp(x))
    sigma = 1.6e-5
    base = -0.022 - 0.025 * u - 0.041 * u**2 - 0.001 * u**3
    fw = 0.04
    lines = [(3589.37, 800 * sigma), (3640.20, 2400 * sigma)]
    y = base + sum(h * np.exp(-4 * math.log(2) * (x - p) ** 2 / fw**2) for p, h in lines)
    y = y + np.random.default_rng(7).normal(0.0, sigma, x.size)
    width = typical_width(y, sigma) * np.median(np.diff(x))
    assert width == pytest.approx(fw, rel=0.3)
    table = find_peaks(x, y)
    assert len(table) == 2
    for (p, h), (_, row) in zip(lines, table.iterrows(), strict=True):
        assert row["position"] == pytest.approx(p, abs=fw / 4)
        assert row["snr"] == pytest.approx(h / sigma, rel=0.1)
        assert row["fwhm"] == pytest.approx(fw, rel=0.3)
