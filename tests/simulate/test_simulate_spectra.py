"""Simulated spectra: line widths, scale, noise, baseline, meta record, bad input."""

import json
import math

import numpy as np
import pytest
from scipy.special import voigt_profile

import widgetkit as wk
from widgetkit.simulate import (
    HANDBOOK,
    SimulationError,
    doppler_fwhm,
    doppler_sigma,
    line_list,
    render_lines,
    rovibrational,
    vibrational,
    voigt_fwhm,
)

HCL = HANDBOOK["1H-35Cl"]
H35CL = wk.Diatomic("1H", "35Cl")


def _fwhm(x, y):
    """Numerical FWHM by linear interpolation at half maximum (single peak)."""
    i = int(np.argmax(y))
    half = y[i] / 2
    lo = np.flatnonzero(y[:i] < half)[-1]
    hi = i + np.flatnonzero(y[i:] < half)[0]
    xl = np.interp(half, [y[lo], y[lo + 1]], [x[lo], x[lo + 1]])
    xr = np.interp(half, [y[hi], y[hi - 1]], [x[hi], x[hi - 1]])
    return xr - xl


def test_doppler_width_of_the_hcl_fundamental_matches_the_computed_value():
    m = H35CL.main.mass
    # computed (scipy.constants, periodictable): Doppler FWHM at 296 K of the 2886 cm-1 line 5.929e-3 cm-1
    assert doppler_fwhm(2886.0, 296.0, m) == pytest.approx(5.929e-3, rel=2e-4)
    # standard Doppler width (common practice): FWHM_D ≈ 7.162e-7 nu sqrt(T/M)
    assert doppler_fwhm(2886.0, 296.0, m) == pytest.approx(7.162e-7 * 2886 * math.sqrt(296 / m), rel=2e-4)
    assert doppler_fwhm(2886.0, 296.0, m) == pytest.approx(
        2 * math.sqrt(2 * math.log(2)) * doppler_sigma(2886.0, 296.0, m), rel=1e-14)


def test_olivero_longbothum_width_is_within_2e_4_of_scipy_voigt_profile():
    x = np.linspace(-2, 2, 400001)
    for sigma, gamma in ((0.01, 0.05), (0.05, 0.01), (0.03, 0.03)):
        # Olivero & Longbothum, JQSRT 17 (1977) 233: "within 2e-4" of the numerical width of
        # scipy.special.voigt_profile;
        # the worst case here is 2.1e-4, so the bound is 3e-4
        assert voigt_fwhm(sigma, gamma) == pytest.approx(_fwhm(x, voigt_profile(x, sigma, gamma)), rel=3e-4)


def _isolated_line(**kw):
    lines = line_list(H35CL, HCL, temperature=kw.get("temperature", 296.0))
    nu = float(lines.set_index("label").loc["R(2)", "position"])  # the tallest line at 296 K
    x = np.linspace(nu - 1.0, nu + 1.0, 40001)
    s = rovibrational(H35CL, HCL, x=x, **kw)
    return nu, x, s


def test_simulated_line_width_matches_olivero_longbothum_with_doppler_and_lorentz():
    gamma = 0.02
    nu, x, s = _isolated_line(lorentz_hwhm=gamma, temperature=296.0)
    sigma = doppler_sigma(nu, 296.0, H35CL.main.mass)
    # Olivero and Longbothum, JQSRT 17 (1977) 233: accurate to about 2e-4
    assert _fwhm(x, s.y) == pytest.approx(voigt_fwhm(sigma, gamma), rel=3e-4)


def test_instrument_resolution_adds_to_the_doppler_width_in_quadrature():
    nu, x, s = _isolated_line(lorentz_hwhm=0.0, resolution=0.02, temperature=296.0)
    fd = doppler_fwhm(nu, 296.0, H35CL.main.mass)
    # Gaussians convolve to a Gaussian with FWHMs in quadrature (common practice)
    assert _fwhm(x, s.y) == pytest.approx(math.hypot(fd, 0.02), rel=1e-4)


def test_strength_is_the_peak_absorbance_of_the_tallest_line():
    _, _, s = _isolated_line(strength=0.7, lorentz_hwhm=0.05)
    assert s.y.max() == pytest.approx(0.7, rel=2e-3)  # definition; other lines' wings add < 0.2 %


def test_windowed_lines_agree_with_full_voigt_profiles():
    x = np.linspace(2800.0, 3000.0, 20001)
    pos = np.array([2850.0, 2900.5, 2950.25])
    area = np.array([1.0, 0.5, 0.25])
    sigma = np.array([0.004, 0.005, 0.006])
    full = sum(a * voigt_profile(x - p, s, 0.05) for p, a, s in zip(pos, area, sigma, strict=True))
    fast = render_lines(x, pos, area, sigma, 0.05, window=50.0)
    # reference library: scipy.special.voigt_profile evaluated everywhere
    assert np.max(np.abs(fast - full)) < 1e-5 * full.max()


def test_transmittance_is_ten_to_the_minus_absorbance():
    kw = dict(x_range=(2850, 2950), step=0.01, baseline=(0.05, 0.01))
    a = rovibrational(H35CL, HCL, **kw)
    t = rovibrational(H35CL, HCL, y_kind="transmittance", **kw)
    # A = -log10 T (decadic absorbance, IUPAC Gold Book)
    np.testing.assert_allclose(t.y, 10.0 ** (-a.y), rtol=1e-14)
    assert t.y_kind == "transmittance"


def test_baseline_polynomial_is_added_in_absorbance():
    kw = dict(x_range=(2000, 2100), step=0.05)  # no HCl line here
    s = rovibrational(H35CL, HCL, baseline=(0.1, 0.02, 0.01), **kw)
    t = (s.x - 2050.0) / 50.0
    np.testing.assert_allclose(s.y, 0.1 + 0.02 * t + 0.01 * t * t, atol=1e-6)  # definition


def test_seeded_noise_is_reproducible_and_has_the_requested_spread():
    kw = dict(x_range=(2600, 3100), step=0.01, noise=0.003)
    a = rovibrational(H35CL, HCL, seed=7, **kw)
    b = rovibrational(H35CL, HCL, seed=7, **kw)
    c = rovibrational(H35CL, HCL, seed=8, **kw)
    clean = rovibrational(H35CL, HCL, x_range=(2600, 3100), step=0.01)
    assert np.array_equal(a.y, b.y) and not np.array_equal(a.y, c.y)
    assert np.std(a.y - clean.y) == pytest.approx(0.003, rel=0.02)  # 50001 draws: ~0.3 % spread


def test_unseeded_noise_records_the_seed_it_drew():
    kw = dict(x_range=(2850, 2950), step=0.02, noise=0.01)
    s = rovibrational(H35CL, HCL, **kw)
    seed = s.meta["simulated"]["params"]["seed"]
    assert isinstance(seed, int)
    again = rovibrational(H35CL, HCL, seed=seed, **kw)
    assert np.array_equal(s.y, again.y)


def test_meta_records_exactly_how_the_spectrum_was_made():
    s = rovibrational(wk.Diatomic("H", "Cl"), HCL, x_range=(2700, 3050), step=0.02, noise=0.001,
                      seed=3, herman_wallis=0.01, title="demo cell A")
    meta = s.meta
    assert meta["title"] == "demo cell A"
    rec = meta["simulated"]
    assert rec["function"] == "widgetkit.simulate.rovibrational"
    assert rec["widgetkit_version"] == wk.__version__
    p = json.loads(json.dumps(rec["params"]))  # JSON-able
    assert p["molecule"] == {"atoms": ["H", "Cl"], "min_abundance": 0.01}
    assert p["constants"] == HCL and p["temperature"] == 296.0 and p["seed"] == 3
    # replaying the recorded parameters gives the same spectrum (self-consistency)
    p["molecule"] = wk.Diatomic.from_dict(p["molecule"])
    p["bands"] = [tuple(b) for b in p["bands"]]
    again = rovibrational(**p, title="demo cell A")
    assert again == s


def test_vibrational_overview_shows_fundamental_and_overtones_of_co():
    co = wk.Diatomic("C", "O")
    s = vibrational(co, HANDBOOK["12C-16O"], step=0.1)
    assert s.meta["simulated"]["function"] == "widgetkit.simulate.vibrational"
    y = s.y
    fund = y[(s.x > 2050) & (s.x < 2250)].max()
    first = y[(s.x > 4150) & (s.x < 4300)].max()
    second = y[(s.x > 6200) & (s.x < 6400)].max()
    assert fund == pytest.approx(1.0, rel=1e-2)
    assert 1e-4 < first / fund < 1e-1 and 1e-7 < second / first < 1e-1  # common practice: weaker per step
    bands = wk.simulate.vibrational(co, HANDBOOK["12C-16O"], rotational=False, step=0.5)
    assert bands.meta["simulated"]["n_lines"] == 6  # 3 bands x 2 isotopologues (12C, 13C; abundance >= 1 %)


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"temperature": -1.0}, "temperature"),
        ({"x_range": (3100, 2600)}, "low < high"),
        ({"step": -0.1, "x_range": (2600, 3100)}, "step"),
        ({"y_kind": "percent"}, "y_kind"),
        ({"noise": -1.0}, "noise"),
        ({"x_range": (2600, 3100), "step": 1e-5}, "points"),
    ],
)
def test_bad_simulation_input_raises_a_simulation_error(kwargs, words):
    with pytest.raises(SimulationError, match=words):
        rovibrational(H35CL, HCL, **kwargs)


def test_unknown_constant_name_is_refused_by_the_spectrum_simulator():
    with pytest.raises(wk.WidgetkitError, match="unknown constant"):
        rovibrational(H35CL, {**HCL, "Be": 10.0})


def test_vibrational_meta_replays_to_the_same_spectrum():
    co = wk.Diatomic("C", "O")
    s = vibrational(co, HANDBOOK["12C-16O"], bands=((1, 0), (2, 0)), step=0.5, noise=1e-4, seed=5,
                    rotational=False)
    p = json.loads(json.dumps(s.meta["simulated"]["params"]))
    p["molecule"] = wk.Diatomic.from_dict(p["molecule"])
    assert vibrational(**p) == s  # self-consistency: the record is complete
