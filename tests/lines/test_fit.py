"""Behaviour of widgetkit.lines.fit on simulated bands (self-consistency checks).

The bands come from conftest.simulate_band: invented constants, our own shape
functions, seeded noise. "Recovered" checks compare with the values we
simulated with; the windowed fast path is compared with the full evaluation.
"""

from __future__ import annotations

import dataclasses
import json

import numpy as np
import pytest
from conftest import simulate_band

import widgetkit.lines as wl
from widgetkit.errors import FitError
from widgetkit.lines import _lmfit_sparse

COLUMNS = ["line_id", "position", "position_err", "area", "area_err", "height", "height_err",
           "fwhm", "fwhm_err", "sigma", "sigma_err", "gamma", "gamma_err"]


def test_a_voigt_band_is_recovered_within_its_uncertainties(band, starts):
    res = wl.fit(band.x, band.y, starts)
    assert res.converged, res.message
    assert list(res.table.columns) == COLUMNS
    t = res.table
    # recovered the values we simulated with (self-consistency), within 4.5 standard errors
    assert np.all(np.abs(t.position - band.positions) < 4.5 * t.position_err)
    assert np.all(np.abs(t.area - band.areas) < 4.5 * t.area_err)
    assert np.all(np.abs(t.sigma - band.sigma) < 4.5 * t.sigma_err)
    assert res.redchi / band.noise**2 == pytest.approx(1.0, abs=0.1)
    assert res.result.params["l1_area"].value == t.area[0]
    assert res.nfev >= res.result.nfev


def test_the_windowed_fast_path_equals_the_full_evaluation(band, starts):
    fast = wl.fit(band.x, band.y, starts)
    full = wl.fit(band.x, band.y, starts, window=None)
    assert fast.converged and full.converged
    assert fast.chisqr == pytest.approx(full.chisqr, rel=1e-6)
    for col in ["position", "area", "sigma", "gamma"]:
        diff = np.abs(fast.table[col] - full.table[col]) / full.table[col + "_err"]
        assert diff.max() < 0.01, col  # the criterion: within 0.01 standard errors
    bdiff = np.abs(fast.baseline_params.value - full.baseline_params.value)
    assert np.all(bdiff < 0.05 * full.baseline_params.stderr)


@pytest.mark.parametrize("shape", ["gaussian", "lorentzian", "pseudo_voigt"])
def test_each_shape_recovers_a_band_simulated_with_it(shape):
    b = simulate_band(n_lines=6, n_points=3000, shape=shape, sigma=0.08, gamma=0.08)
    res = wl.fit(b.x, b.y, b.positions + 0.02, shape=shape)
    assert res.converged, res.message
    t = res.table
    assert np.all(np.abs(t.area - b.areas) < 4.5 * t.area_err)
    assert np.all(np.abs(t.position - b.positions) < 4.5 * t.position_err)


@pytest.mark.parametrize("kind", ["poly2", "exponential", "constant", "none"])
def test_each_baseline_is_fitted_in_its_public_form(kind):
    rng = np.random.default_rng(8)
    x = np.linspace(2950.0, 3050.0, 4000)
    truth = {"poly2": (0.9, -6e-4, 1e-7), "exponential": (30.0, 1.2e-3), "constant": (0.3,),
             "none": ()}[kind]
    if kind == "exponential":
        base = truth[0] * np.exp(-truth[1] * x)
    else:
        base = sum(c * x**k for k, c in enumerate(truth)) if truth else 0.0 * x
    # invented lines on the baseline, seeded noise
    y = base + wl.gaussian(x, 1.0, 2990.0, 0.5) + wl.gaussian(x, 0.6, 3012.0, 0.4)
    y = y + rng.normal(0, 0.005, x.size)
    res = wl.fit(x, y, [2990.1, 3011.9], shape="gaussian", baseline=kind)
    assert res.converged, res.message
    bp = res.baseline_params
    assert list(bp.name) == ["b0", "b1", "b2"][: len(truth)]
    if kind == "poly2":
        # check the curve, since the monomial coefficients are strongly correlated
        assert np.max(np.abs(res.baseline_y - base)) < 5e-3
    else:
        for k, c in enumerate(truth):
            assert abs(bp.value[k] - c) < 4.5 * bp.stderr[k]
    assert np.allclose(res.model_y, res.baseline_y + res.components.sum(axis=0))
    assert np.allclose(res.residual, res.y - res.model_y)


def test_shared_width_ties_every_line_to_one_parameter(band, starts):
    res = wl.fit(band.x, band.y, starts, shared_width=True)
    assert res.converged, res.message
    assert "shared_sigma" in res.params and "shared_gamma" in res.params
    assert res.params["l3_sigma"].expr == "shared_sigma"
    assert np.ptp(res.table.sigma) == 0.0 and np.ptp(res.table.gamma) == 0.0
    assert res.table.sigma_err[0] == pytest.approx(res.params["shared_sigma"].stderr, rel=1e-12)
    assert res.params["l3_sigma"].stderr == pytest.approx(res.params["shared_sigma"].stderr)
    assert abs(res.params["shared_sigma"].value - band.sigma) < 4.5 * res.table.sigma_err[0]


def test_shared_width_groups_and_a_single_shared_gamma(band, starts):
    groups = {"low": [1, 2, 3], "high": [10, 11, 12]}
    res = wl.fit(band.x, band.y, starts, shared_width=groups)
    assert res.converged
    assert np.ptp(res.table.gamma[:3]) == 0.0 and np.ptp(res.table.gamma[9:]) == 0.0
    assert res.table.gamma[3] != res.table.gamma[4]
    res = wl.fit(band.x, band.y, starts, shared_width="gamma")
    assert np.ptp(res.table.gamma) == 0.0 and np.ptp(res.table.sigma) > 0.0


def test_a_doppler_constraint_fixes_each_gaussian_width_to_its_position():
    b = simulate_band(n_lines=4, n_points=3000, sigma=0.004, gamma=0.05)
    res = wl.fit(b.x, b.y, b.positions, constraints={"doppler": {"temperature": 296.0,
                                                                  "mass": 28.0}})
    assert res.converged, res.message
    expected = wl.doppler_sigma(res.table.position, 296.0, 28.0)
    assert np.allclose(res.table.sigma, expected, rtol=1e-12)


def test_area_ratio_and_position_offset_constraints_hold_exactly(band, starts):
    cons = {"l2_area": "0.5 * l1_area", "l2_position": "l1_position + 3.9",
            "l4_gamma": 0.08, "l5_sigma": {"min": 0.01, "max": 0.2}}
    res = wl.fit(band.x, band.y, starts, constraints=cons)
    t = res.table
    assert t.area[1] == pytest.approx(0.5 * t.area[0], rel=1e-12)
    assert t.position[1] == pytest.approx(t.position[0] + 3.9, rel=1e-13)
    assert t.gamma[3] == 0.08 and not res.params["l4_gamma"].vary
    assert res.params["l5_sigma"].min == 0.01
    assert t.area_err[1] == pytest.approx(0.5 * t.area_err[0], rel=1e-9)
    assert json.loads(json.dumps(res.spec))["constraints"] == cons


@pytest.mark.parametrize("cons, match", [
    ({"l1_area": "exp(l2_area)"}, "l1_area"),
    ({"l1_area": "2 * l99_area"}, "l99_area"),
    ({"l1_area": "l2_area", "l2_area": "l1_area"}, "cycle"),
    ({"nope": 1.0}, "unknown parameter 'nope'"),
    ({"l1_area": {"expr": "l2_area", "min": 0}}, "bounds"),
    ({"doppler": {"temperature": -5, "mass": 28}}, "temperature"),
])
def test_bad_constraints_raise_fit_error_naming_the_parameter(band, cons, match):
    with pytest.raises(FitError, match=match):
        wl.fit(band.x, band.y, band.positions, constraints=cons)


def test_set_up_errors_name_the_problem(band):
    with pytest.raises(FitError, match="outside the data"):
        wl.fit(band.x, band.y, [band.x[0] - 1.0])
    with pytest.raises(FitError, match="no lines"):
        wl.fit(band.x, band.y, [])
    with pytest.raises(FitError, match="unknown baseline"):
        wl.fit(band.x, band.y, band.positions, baseline="cubic")
    with pytest.raises(FitError, match="unknown line shape"):
        wl.fit(band.x, band.y, band.positions, shape="sinc")
    with pytest.raises(FitError, match="line_ids"):
        wl.fit(band.x, band.y, band.positions, line_ids=[1] * band.positions.size)
    with pytest.raises(FitError, match="NaN"):
        wl.fit(band.x, np.where(band.x > band.x[10], band.y, np.nan), band.positions)


def test_a_line_below_the_noise_is_flagged(band, starts):
    empty = 0.5 * (band.positions[0] + band.positions[1])
    res = wl.fit(band.x, band.y, np.r_[starts, empty], line_ids=list(range(1, 14)),
                 prune=False)
    assert any("below" in f for f in res.flags[13])
    assert not any(13 == k for k in res.flags if k != 13) and 12 not in res.flags


def test_a_solver_failure_comes_back_as_not_converged(band, starts, monkeypatch):
    def broken(self, *a, **k):
        raise ValueError("NaN values detected in your input data")

    monkeypatch.setattr(_lmfit_sparse.SparseMinimizer, "least_squares", broken)
    res = wl.fit(band.x, band.y, starts)
    assert not res.converged
    assert "NaN values detected" in res.message


def test_region_ids_and_given_starting_values_are_used(band):
    lo, hi = band.positions[2] - 1.0, band.positions[5] + 1.0
    inside = band.positions[2:6]
    res = wl.fit(band.x, band.y, inside, region=(lo, hi), line_ids=[31, 32, 33, 34],
                 heights=[np.nan] * 4, widths=[0.25, np.nan, 0.25, 0.25])
    assert res.converged
    assert res.x.min() >= lo and res.x.max() <= hi
    assert list(res.table.line_id) == [31, 32, 33, 34]
    assert "l31_area" in res.params
    assert res.spec["region"] == [lo, hi] and res.spec["window"] == wl.DEFAULT_WINDOW
    assert res.spec["widths"] == [0.25, None, 0.25, 0.25]
    json.dumps(res.spec, allow_nan=False)  # strict JSON


def test_inputs_are_not_modified_and_the_result_is_frozen(band, starts):
    x, y = band.x.copy(), band.y.copy()
    res = wl.fit(band.x[::-1], band.y[::-1], starts)  # descending input is sorted inside
    assert np.array_equal(band.x, x) and np.array_equal(band.y, y)
    assert np.all(np.diff(res.x) > 0)
    with pytest.raises(dataclasses.FrozenInstanceError):
        res.chisqr = 0.0


def test_weights_give_a_reduced_chi_square_near_one(band, starts):
    res = wl.fit(band.x, band.y, starts, weights=np.full(band.x.size, 1.0 / band.noise))
    assert res.redchi == pytest.approx(1.0, abs=0.1)  # simulated noise is known (self-consistency)


def test_noise_is_estimated_from_first_differences():
    y = np.random.default_rng(4).normal(0.0, 0.3, 20000) + np.linspace(0, 50, 20000)
    assert wl.estimate_noise(y) == pytest.approx(0.3, rel=0.03)  # seeded, simulated sigma


def test_conf_interval_is_available_for_a_chosen_parameter():
    b = simulate_band(n_lines=2, n_points=600)
    res = wl.fit(b.x, b.y, b.positions, conf_interval="l1_position")
    ci = res.conf_intervals["l1_position"]
    lo1, hi1 = ci[1][1], ci[3][1]  # 1-sigma bounds from lmfit.conf_interval (2-sigma outside)
    err = res.table.position_err[0]
    assert (hi1 - lo1) / 2 == pytest.approx(err, rel=0.1)  # nearly linear problem: CI ~ stderr


def test_importing_the_line_engine_loads_no_widget_library():
    import subprocess
    import sys

    code = ("import sys, widgetkit.lines; "
            "sys.exit(int('ipywidgets' in sys.modules or 'bqplot' in sys.modules))")
    assert subprocess.run([sys.executable, "-c", code]).returncode == 0  # layering rule (DEVELOPERS.md)


def test_a_forty_line_band_converges_with_every_line_found():
    b = simulate_band(n_lines=40, n_points=20000, seed=5)
    res = wl.fit(b.x, b.y, b.positions + 0.02)
    assert res.converged, res.message
    assert not res.flags
    t = res.table
    assert np.all(np.abs(t.position - b.positions) < 4.5 * t.position_err)  # simulated values


def test_numpy_ids_and_settings_are_recorded_as_plain_json(band, starts):
    ids = np.arange(101, 101 + starts.size)  # as a session's peak table would hand them over
    res = wl.fit(band.x, band.y, starts, line_ids=ids,
                 shared_width={"hot": [np.int64(101), np.int64(102)]},
                 constraints={"l103_gamma": np.float64(0.08)})
    assert list(res.table.line_id) == ids.tolist()
    assert all(type(i) is int for i in res.table.line_id)
    assert json.loads(json.dumps(res.spec))["line_ids"] == ids.tolist()


def test_the_default_window_keeps_lorentzian_lines_within_005_sigma_of_the_full_fit():
    # pure Lorentzian lines have the heaviest wings of all shapes
    b = simulate_band(n_lines=8, n_points=4000, shape="lorentzian", gamma=0.1, noise_frac=0.003)
    fast = wl.fit(b.x, b.y, b.positions, shape="lorentzian")
    full = wl.fit(b.x, b.y, b.positions, shape="lorentzian", window=None)
    assert fast.converged and full.converged
    for col in ["position", "area", "gamma"]:
        diff = np.abs(fast.table[col] - full.table[col]) / full.table[col + "_err"]
        assert diff.max() < 0.05, col  # the criterion for the default window
    slope = np.abs(fast.baseline_params.value - full.baseline_params.value)
    assert np.all(slope < 0.05 * full.baseline_params.stderr)
