"""The find_peaks and add_peak steps: what they record, snapping, refusals."""

from __future__ import annotations

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.errors import SessionStateError


def _three_lines(y_kind="absorbance", meta=None, seed=7):
    """Invented data (self-consistency only): three Gaussian lines, sigma 1.5 cm-1."""
    rng = np.random.default_rng(seed)
    x = np.linspace(2700.0, 3100.0, 4001)
    a = 0.02 + 1e-5 * (x - 2700.0)
    for c, h in ((2800.0, 0.5), (2900.0, 1.0), (3000.0, 0.7)):
        a = a + h * np.exp(-0.5 * ((x - c) / 1.5) ** 2)
    y = a if y_kind == "absorbance" else 10.0 ** -a
    return wk.Spectrum(x, y + rng.normal(0.0, 0.002, x.size), y_kind=y_kind, meta=meta)


def test_find_peaks_records_the_noise_how_it_was_measured_and_the_threshold():
    s = wk.Session(_three_lines())
    peaks = s.find_peaks()
    step = s.history[-1]
    assert step.params["min_snr"] is None
    assert len(peaks) == 3 and np.allclose(peaks["position"], [2800, 2900, 3000], atol=0.05)
    search = step.result["search"]
    assert search["noise"]["method"] == "line-free points"
    assert search["noise"]["sigma"] == pytest.approx(0.002, rel=0.1)  # the simulated noise
    assert search["min_snr"] > 0 and search["threshold"].startswith("automatic")
    assert "noise" in step.summary and "line-free points" in step.summary
    assert set(peaks.columns) >= {"peak_id", "position", "height", "snr", "prominence", "fwhm"}


def test_a_noise_region_is_recorded_and_used():
    s = wk.Session(_three_lines())
    s.find_peaks(noise_region=(3050.0, 3100.0))
    search = s.history[-1].result["search"]
    assert search["noise"]["method"] == "noise region"
    assert search["noise"]["region"] == [3050.0, 3100.0]
    assert s.history[-1].params["noise_region"] == [3050.0, 3100.0]
    with pytest.raises(wk.WidgetkitError, match="noise_region"):
        s.find_peaks(noise_region=(5000.0, 5001.0))


def test_a_transmittance_spectrum_gives_its_dips():
    s = wk.Session(_three_lines("transmittance"))
    peaks = s.find_peaks()
    assert s.history[-1].result["search"]["direction"] == "down"
    assert np.allclose(peaks["position"], [2800, 2900, 3000], atol=0.05)
    assert np.all(peaks["height"] < peaks["baseline"])


def test_a_new_peak_search_clears_the_line_fit_and_says_so():
    s = wk.Session(_three_lines())
    s.find_peaks()
    s.fit_lines(shape="gaussian")
    assert s.line_fit is not None
    s.find_peaks(min_snr=20.0)
    assert s.line_fit is None and s.lines.empty
    assert s.history[-1].result["cleared"]["lines"] == 3  # the record says what went
    assert "cleared" in s.history[-1].summary


def test_add_peak_snaps_to_a_top_within_one_line_width():
    s = wk.Session(_three_lines())
    s.find_peaks(min_snr=1000.0)  # nothing found; the width comes from the spectrum
    pid = s.add_peak(2901.5)  # one sigma (0.4 FWHM) down the flank of the 2900 line
    row = s.peaks.set_index("peak_id").loc[pid]
    assert row["position"] == pytest.approx(2900.0, abs=0.05)
    assert s.history[-1].result["snapped"] is True


def test_add_peak_far_from_any_top_stays_where_it_was_put():
    s = wk.Session(_three_lines())
    pid = s.add_peak(2850.0)  # 50 cm-1 from the nearest line: no top within a line width
    assert s.peaks.set_index("peak_id").loc[pid, "position"] == 2850.0
    assert s.history[-1].result["snapped"] is False
    assert "kept where it was put" in s.history[-1].summary


def test_add_peak_refuses_a_position_already_taken_and_names_the_peak():
    s = wk.Session(_three_lines())
    s.find_peaks()
    taken = s.peaks.iloc[1]
    n = len(s.history)
    with pytest.raises(SessionStateError, match=f"already taken by peak {int(taken['peak_id'])}"):
        s.add_peak(float(taken["position"]) + 0.3)  # climbs to the same top
    with pytest.raises(SessionStateError, match="already taken"):
        s.add_peak(float(taken["position"]) + 0.01, snap=False)
    assert len(s.history) == n  # nothing recorded, nothing changed


def test_the_resolution_in_the_metadata_sets_the_width_when_no_line_stands_out():
    s = wk.Session(_three_lines(meta={"resolution": 3.5}))
    s.find_peaks(min_snr=1e6)
    pid = s.add_peak(2902.0)  # 0.57 FWHM down the flank: within one width of 3.5 cm-1
    assert s.peaks.set_index("peak_id").loc[pid, "position"] == pytest.approx(2900.0, abs=0.05)


def _dense_band(seed=0):
    """Invented data (self-consistency only): 260 Gaussian lines of FWHM 4 cm-1 scattered
    over 720 cm-1 and sampled every 4 cm-1 (a dense band at low resolution with no gap
    between its lines), noise 0.003."""
    rng = np.random.default_rng(seed)
    x = np.linspace(1300.0, 2000.0, 176)
    pos, h = rng.uniform(1290.0, 2010.0, 260), rng.exponential(0.3, 260)
    s = 4.0 / (2.0 * np.sqrt(2.0 * np.log(2.0)))
    y = (h[:, None] * np.exp(-0.5 * ((x[None, :] - pos[:, None]) / s) ** 2)).sum(axis=0)
    return wk.Spectrum(x, y + rng.normal(0.0, 0.003, x.size), y_kind="absorbance")


def test_a_fit_with_no_peaks_in_a_dense_band_says_how_to_measure_the_noise():
    s = wk.Session(_dense_band())
    assert len(s.find_peaks()) == 0  # the lines' own scatter passed for noise
    assert "(100 %)" in s.history[-1].summary
    with pytest.raises(SessionStateError, match=r"noise_region=\(lo, hi\)") as err:
        s.fit_lines()
    assert "every point taken as line-free" in str(err.value)
    assert len(s.history) == 2  # the refused fit recorded nothing


def test_no_hint_when_the_peaks_lie_outside_the_region_asked_for():
    s = wk.Session(_three_lines())
    s.find_peaks()
    with pytest.raises(SessionStateError) as err:
        s.fit_lines(region=(2820.0, 2880.0))
    assert "inside the region" in str(err.value) and "noise_region" not in str(err.value)


def test_noise_higher_at_one_end_is_recorded_said_and_replayed():
    # invented data (self-consistency): noise sigma 4x higher at the low end, falling to
    # 1x beyond about 1500 cm-1, one line of 60 sigma (the overall one) at 3000 cm-1
    rng = np.random.default_rng(5)
    x = np.linspace(500.0, 4000.0, 20_001)
    sigma = 0.001 * (1.0 + 3.0 * np.exp(-(x - 500.0) / 300.0))
    y = 0.06 * np.exp(-0.5 * ((x - 3000.0) / 0.3) ** 2) + rng.normal(0.0, 1.0, x.size) * sigma
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    peaks = s.find_peaks()
    # judged against the overall sigma this gave 14 peaks, 13 of them noise at the low end
    assert np.allclose(peaks["position"], [3000.0], atol=0.1)
    noise = s.history[-1].result["search"]["noise"]
    assert noise["profile"]["factor"][0] > 2.0 and max(noise["profile"]["factor"][-4:]) == 1.0
    assert "higher near" in s.history[-1].summary
    assert s.verify().ok
