"""Polynomial and asymmetric-least-squares baselines."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp

from widgetkit import FitError, Spectrum, WidgetkitError
from widgetkit.processing import (
    ProcessingError,
    baseline_als,
    baseline_poly,
    second_difference_penalty,
    subtract_baseline,
)


def _gaussians(x: np.ndarray, centres, heights, sigma: float) -> np.ndarray:
    out = np.zeros_like(x)
    for c, h in zip(centres, heights, strict=True):
        out += h * np.exp(-((x - c) ** 2) / (2 * sigma**2))
    return out


def _demo_band(seed: int = 3):
    """Invented demo data: a curved baseline under five Gaussian bands plus noise."""
    rng = np.random.default_rng(seed)
    x = np.linspace(2600.0, 3200.0, 1201)
    t = (x - 2900.0) / 300.0
    base = 0.05 + 0.02 * t - 0.03 * t**2 + 0.015 * t**3
    peaks = _gaussians(x, [2700, 2820, 2885, 2990, 3100], [0.4, 0.8, 0.3, 0.6, 0.5], 4.0)
    sigma = 0.002
    return x, base, peaks, sigma, base + peaks + rng.normal(0.0, sigma, x.size)


def _als_published(y: np.ndarray, lam: float, p: float, n_iter: int) -> np.ndarray:
    """The procedure as published by Eilers and Boelens (2005), transcribed densely:
    D = diff(I, 2); w = 1; repeat: z = (W + lam D'D) \\ (w y); w = p (y > z) + (1 - p) (y < z)."""
    m = y.size
    D = np.diff(np.eye(m), 2, axis=0)
    DtD = D.T @ D
    w = np.ones(m)
    z = y
    for _ in range(n_iter):
        z = np.linalg.solve(np.diag(w) + lam * DtD, w * y)
        w = p * (y > z) + (1 - p) * (y < z)
    return z


# --- second-difference penalty ---------------------------------------------------------


@pytest.mark.parametrize("n", [3, 4, 5, 9])
def test_second_difference_penalty_matches_the_dense_product_of_difference_matrices(n):
    D = np.diff(np.eye(n), 2, axis=0)  # reference: numpy's second difference of the identity
    dense = D.T @ D
    ab = second_difference_penalty(n)
    assert np.array_equal(ab[2], np.diag(dense))
    assert np.array_equal(ab[1, 1:], np.diag(dense, 1))
    assert np.array_equal(ab[0, 2:], np.diag(dense, 2))


# --- ALS -----------------------------------------------------------------------------


def test_als_reproduces_the_published_procedure_on_data_with_peaks():
    x, _, _, _, y = _demo_band()
    y = y[::4]  # 301 points keep the dense reference fast
    for lam, p in [(1e4, 0.01), (1e6, 0.05)]:
        ref = _als_published(y, lam, p, 10)
        got = baseline_als(y, lam=lam, p=p, max_iter=10)
        assert np.allclose(got, ref, rtol=0, atol=1e-10)


def test_als_with_one_iteration_is_the_whittaker_smoother():
    rng = np.random.default_rng(11)
    y = np.cumsum(rng.normal(size=200))  # self-consistency input: a random walk
    lam = 50.0
    D = np.diff(np.eye(y.size), 2, axis=0)
    # Whittaker smoother (Eilers 2003): (I + lam D'D) z = y, solved densely with numpy
    ref = np.linalg.solve(np.eye(y.size) + lam * D.T @ D, y)
    assert np.allclose(baseline_als(y, lam=lam, p=0.5, max_iter=1), ref, atol=1e-10)


def test_als_with_p_one_half_converges_to_the_whittaker_smoother_of_twice_lambda():
    # with all weights 1/2 the system is (I/2 + lam D'D) z = y/2, i.e. (I + 2 lam D'D) z = y
    rng = np.random.default_rng(12)
    y = np.cumsum(rng.normal(size=200))
    lam = 50.0
    D = np.diff(np.eye(y.size), 2, axis=0)
    ref = np.linalg.solve(np.eye(y.size) + 2 * lam * D.T @ D, y)
    assert np.allclose(baseline_als(y, lam=lam, p=0.5, max_iter=10), ref, atol=1e-10)


def test_als_banded_solve_agrees_with_a_scipy_sparse_solve():
    rng = np.random.default_rng(5)
    y = rng.normal(size=500)
    lam = 1e3
    n = y.size
    D = sp.diags([1.0, -2.0, 1.0], [0, 1, 2], shape=(n - 2, n), format="csc")
    ref = sp.linalg.spsolve(sp.csc_matrix(sp.eye(n) + lam * (D.T @ D)), y)  # scipy reference
    assert np.allclose(baseline_als(y, lam=lam, p=0.5, max_iter=1), ref, atol=1e-9)


def test_als_recovers_a_smooth_baseline_under_peaks_within_the_noise():
    x, base, _, sigma, y = _demo_band()
    z = baseline_als(y, lam=1e7, p=0.01, max_iter=20)
    # self-consistency: recovers the baseline we simulated, within a few noise sigma
    assert np.max(np.abs(z - base)) < 3 * sigma
    assert abs(np.mean(z - base)) < 2 * sigma


def test_als_baseline_lies_under_the_peaks():
    x, base, peaks, sigma, y = _demo_band()
    z = baseline_als(y, lam=1e6, p=0.01)
    tops = peaks > 0.1
    assert np.all(z[tops] < y[tops] - 0.05)


@pytest.mark.parametrize(
    "opts, word",
    [({"lam": 0}, "lam"), ({"p": 1.0}, "p"), ({"p": 0.0}, "p"), ({"max_iter": 0}, "max_iter")],
)
def test_als_refuses_options_out_of_range(opts, word):
    with pytest.raises(ProcessingError, match=word):
        baseline_als(np.arange(10.0), **opts)


# --- polynomial ------------------------------------------------------------------------


def test_poly_baseline_recovers_a_known_cubic_under_peaks():
    x, base, _, sigma, y = _demo_band()
    b = baseline_poly(x, y, degree=3)
    # self-consistency: the cubic we simulated with, recovered within the noise
    assert np.max(np.abs(b - base)) < 2 * sigma


def test_poly_baseline_is_exact_for_a_noise_free_polynomial_under_peaks():
    x, base, peaks, _, _ = _demo_band()
    b = baseline_poly(x, base + peaks, degree=3, noise=1e-10)
    # noise-free self-consistency: only Gaussian tails below k * noise = 3e-10 stay in the fit
    assert np.max(np.abs(b - base)) < 1e-8


def test_poly_baseline_is_well_conditioned_at_high_degree_on_wavenumber_axes():
    rng = np.random.default_rng(8)
    x = np.linspace(400.0, 4000.0, 3601)
    t = (x - 2200.0) / 1800.0
    true = np.polynomial.chebyshev.chebval(t, rng.normal(0, 0.1, 13))  # random degree-12 curve
    b = baseline_poly(x, true, degree=12)
    assert np.max(np.abs(b - true)) < 1e-9  # self-consistency: exact for its own degree


def test_poly_baseline_raises_fit_error_when_too_few_points_remain():
    x = np.linspace(0.0, 1.0, 6)
    y = np.array([0.0, 5.0, 0.0, 5.0, 0.0, 5.0])
    with pytest.raises(FitError, match="lower degree"):
        baseline_poly(x, y, degree=4, noise=0.01)


@pytest.mark.parametrize(
    "opts, word",
    [({"degree": -1}, "degree"), ({"degree": 2.5}, "degree"), ({"degree": 1000}, "degree"),
     ({"k": -1}, "k"), ({"noise": 0}, "noise"), ({"max_iter": 0}, "max_iter"), ({"tol": 0}, "tol")],
)
def test_poly_baseline_refuses_options_out_of_range(opts, word):
    x = np.linspace(0.0, 1.0, 50)
    with pytest.raises(ProcessingError, match=word):
        baseline_poly(x, np.sin(x), **opts)


# --- subtract_baseline ---------------------------------------------------------------------


def test_subtract_baseline_returns_corrected_spectrum_and_baseline_without_touching_input():
    x, base, _, _, y = _demo_band()
    s = Spectrum(x, y, y_kind="absorbance", meta={"title": "demo"})
    out, b = subtract_baseline(s, "poly", degree=3)
    assert np.array_equal(out.y, y - b)
    assert np.array_equal(b, baseline_poly(x, y, degree=3))
    assert out.y_kind == "absorbance" and out.meta == {"title": "demo"}
    assert np.array_equal(s.y, y)


def test_subtract_baseline_with_als_passes_its_options_on():
    x, _, _, _, y = _demo_band()
    out, b = subtract_baseline(Spectrum(x, y), method="als", lam=1e6, p=0.02)
    assert np.array_equal(b, baseline_als(y, lam=1e6, p=0.02))


def test_subtract_baseline_names_the_accepted_methods_for_an_unknown_one():
    x, _, _, _, y = _demo_band()
    s = Spectrum(x, y)
    with pytest.raises(ProcessingError) as info:
        subtract_baseline(s, "spline")
    assert isinstance(info.value, WidgetkitError) and isinstance(info.value, ValueError)
    assert "'spline'" in str(info.value) and "'poly'" in str(info.value)
    assert "'als'" in str(info.value)


def test_subtract_baseline_names_the_accepted_options_for_an_unknown_one():
    x, _, _, _, y = _demo_band()
    with pytest.raises(ProcessingError) as info:
        subtract_baseline(Spectrum(x, y), "als", lam=1e5, degree=3)
    msg = str(info.value)
    assert "degree" in msg and "lam, p, max_iter" in msg


def test_subtract_baseline_refuses_transmittance_and_says_to_convert():
    s = Spectrum([1.0, 2.0, 3.0, 4.0], [0.9, 0.5, 0.9, 0.9], y_kind="transmittance")
    with pytest.raises(ProcessingError, match="to_absorbance"):
        subtract_baseline(s)


def test_poly_baseline_raises_fit_error_when_the_mask_has_not_settled_in_max_iter():
    x, _, _, _, y = _demo_band()
    with pytest.raises(FitError, match="raise max_iter"):
        baseline_poly(x, y, degree=3, max_iter=1)
