"""The renderer against independent references: the simulator's Voigt sum and brute-force
convolutions (scipy.signal.fftconvolve on a fine grid); the Jacobian against finite
differences."""

import math

import numpy as np
import pytest
from scipy.signal import fftconvolve

import widgetkit as wk
from widgetkit.bandmodel.build import ModelOptions, build_model
from widgetkit.bandmodel.instrument import SIGMA_PER_FWHM, profile
from widgetkit.bandmodel.render import Kernel, auxiliary_tau, make_grid, render
from widgetkit.simulate.spectra import render_lines

X = np.arange(2000.0, 2100.0, 0.05)


@pytest.fixture(scope="module")
def lines():
    """Invented line list (self-consistency): 20 lines, Doppler-like σ, γ = 0.05 cm-1."""
    rng = np.random.default_rng(1)
    pos = np.sort(rng.uniform(2010, 2090, 20))
    return pos, rng.uniform(0.01, 0.3, 20), np.full(20, 0.003), 0.05


@pytest.fixture(scope="module")
def fine(lines):
    pos, area, sig, gam = lines
    u = np.arange(1700.0, 2400.0, 0.0005)
    return u, render_lines(u, pos, area, sig, gam, window=1e6)


def _brute(fine, kind, res, transmittance=False):
    u, mono = fine
    h = u[1] - u[0]
    ker = profile(kind, res, np.arange(-150000, 150001) * h) * h
    if transmittance:
        return np.interp(X, u, fftconvolve(10.0 ** (-mono) - 1.0, ker, mode="same") + 1.0)
    return np.interp(X, u, fftconvolve(mono, ker, mode="same"))


def test_gaussian_instrument_equals_the_simulators_voigt_sum(lines):
    # scipy.special.voigt_profile with σ² = σ_D² + σ_inst² (what wk.simulate computes)
    pos, area, sig, gam = lines
    res = 0.3
    ref = render_lines(X, pos, area, np.sqrt(sig**2 + (res * SIGMA_PER_FWHM) ** 2), gam,
                       window=1e6)
    s = math.hypot(sig[0], res * SIGMA_PER_FWHM)
    a, _ = render(make_grid(X, s / 1.5, 10.0), pos, area, sig, Kernel(gam, "gaussian", res, 0.0,
                                                                      "absorbance"))
    assert np.max(np.abs(a - ref)) < 3e-5 * ref.max()


def test_a_wide_gaussian_instrument_split_into_fourier_space_gives_the_same_band(lines):
    # 4 cm-1 on a 0.05 cm-1 grid: all of the instrument in the deposits (each line 7 σ wide)
    # and all but 2 grid steps of it applied as exp(-2π²σ²t²) agree with the simulator's
    # Voigt sum (scipy.special.voigt_profile), and with each other in value and Jacobian
    from widgetkit.bandmodel.render import fourier_sigma

    pos, area, sig, gam = lines
    res = 4.0
    ref = render_lines(X, pos, area, np.sqrt(sig**2 + (res * SIGMA_PER_FWHM) ** 2), gam,
                       window=1e6)
    fs = fourier_sigma("gaussian", res, 0.0, X[1] - X[0])
    assert 0 < fs < res * SIGMA_PER_FWHM
    grid = make_grid(X, 0.05, 60.0)
    d = {"d_area": np.eye(20)[:, :3], "d_pos": np.zeros((20, 3)), "d_sigma": np.zeros((20, 3)),
         "d_resolution": 2}
    d["d_pos"][:, 1] = 1.0
    whole, j_whole = render(grid, pos, area, sig, Kernel(gam, "gaussian", res, 0.0,
                                                         "absorbance"), **d)
    split, j_split = render(grid, pos, area, sig, Kernel(gam, "gaussian", res, 0.0, "absorbance",
                                                         fourier_sigma=fs), **d)
    assert np.max(np.abs(split - ref)) < 3e-5 * ref.max()
    assert np.max(np.abs(split - whole)) < 3e-6 * ref.max()
    assert np.max(np.abs(j_split - j_whole)) < 1e-4 * np.max(np.abs(j_whole))


@pytest.mark.parametrize(("kind", "tol"), [("triangular", 5e-5), ("boxcar", 1.5e-3)])
def test_band_limited_instruments_match_a_brute_force_convolution(lines, fine, kind, tol):
    # boxcar: the reference truncates the slowly decaying sinc tails at ±75 cm-1, hence the
    # looser tolerance (relative to the peak)
    pos, area, sig, gam = lines
    tau = auxiliary_tau(kind, 0.5)
    a, _ = render(make_grid(X, math.hypot(sig[0], tau) / 1.5, 30.0), pos, area, sig,
                  Kernel(gam, kind, 0.5, tau, "absorbance"))
    ref = _brute(fine, kind, 0.5)
    assert np.max(np.abs(a - ref)) < tol * ref.max()


@pytest.mark.parametrize("kind", ["gaussian", "triangular"])
def test_transmittance_domain_matches_a_brute_force_convolution_of_the_transmittance(
        lines, fine, kind):
    pos, area, sig, gam = lines
    tau = gam / 6
    t, _ = render(make_grid(X, math.hypot(sig[0], tau) / 3, 30.0), pos, area, sig,
                  Kernel(gam, kind, 0.5, tau, "transmittance"))
    ref = _brute(fine, kind, 0.5, transmittance=True)
    assert fine[1].max() > 1.0  # strong lines: the two domains differ here
    assert np.max(np.abs(t - ref)) < 3e-5
    a_approx = _brute(fine, kind, 0.5)
    assert np.max(np.abs(10 ** (-a_approx) - ref)) > 0.01  # ... and the approximation fails


@pytest.mark.parametrize(("joint", "instrument", "domain", "y_kind"), [
    (True, "gaussian", "absorbance", "absorbance"),
    (False, "triangular", "absorbance", "transmittance"),
    (True, "boxcar", "transmittance", "transmittance"),
    (False, "gaussian", "transmittance", "absorbance"),
])
def test_jacobian_matches_central_differences(joint, instrument, domain, y_kind):
    mol = wk.Diatomic("H", "Cl")
    x = np.arange(2700.0, 3050.0, 0.25)
    opts = ModelOptions(bands=((1, 0),), joint=joint, centrifugal="shared",
                        isotopologues=("1H-35Cl", "1H-37Cl"), abundance_ratios=(1.0, 0.32),
                        free_abundances=True, shape="doppler", instrument=instrument,
                        domain=domain, baseline_degree=1, y_kind=y_kind)
    st = dict(band_origin=2885.98, B_upper=10.136, B_lower=10.44, D=5.3e-4, temperature=296.0,
              band_area=2.0, lorentz_hwhm=0.2, resolution=1.0, baseline=[0.01, 0.002])
    model, params = build_model(x, mol, opts, st, structure_temperature=450.0)
    th = np.array([p.value for p in params])
    free = [k for k, p in enumerate(params) if p.vary]
    _, J = model.evaluate(th, free)
    for j, k in enumerate(free):
        h = max(abs(th[k]) * 1e-6, 1e-9)
        if params[k].name.startswith("D"):
            h = abs(th[k]) * 1e-4
        up, dn = th.copy(), th.copy()
        up[k] += h
        dn[k] -= h
        num = (model.evaluate(up, [], jac=False)[0] - model.evaluate(dn, [], jac=False)[0]) / (2 * h)
        scale = max(np.max(np.abs(num)), 1e-30)
        assert np.max(np.abs(num - J[:, j])) < 2e-3 * scale, params[k].name
