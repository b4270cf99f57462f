"""The band model's P–R check (:mod:`widgetkit.bandmodel.crosscheck`): a fitted model whose
branch maxima miss the data's by more than the noise allows is doubtful, and the standard
errors of what the contour determines are widened to cover the mismatch; a model that
describes its band passes.

Bands from our simulator or from the band model itself, with seeded noise (self-consistency:
the check values are the constants the bands were made with, handbook values recalled from
memory, Huber and Herzberg 1979, see ``bands.py``). The failure this guards against was seen
on a real digitised 1964 CO grating spectrum (public collection, not redistributable):
B_e = 2.31 ± 0.045 cm⁻¹ "ok" with T fixed at 296 K, against 1.931 (Huber and Herzberg).
"""


import numpy as np
import pytest

import widgetkit as wk
from widgetkit.bandmodel import fit, fit_spectrum
from widgetkit.bandmodel.crosscheck import separation_noise
from widgetkit.bandmodel.quick import _pr_from_uniform, smooth

from .bands import CO, HCL, simulate, transmittance_band, truth

CO_MOL = wk.Diatomic("C", "O")
HCL_MOL = wk.Diatomic("H", "Cl")


def saturated_co(seed: int = 4) -> tuple[np.ndarray, np.ndarray, float]:
    """CO 1-0 at 4 cm-1 made by the band model in the transmittance domain (the physics of a
    spectrometer: ILS ⊛ 10^-A) with strong, narrow (pressure HWHM 0.03 cm-1) lines; returns
    x, transmittance and the true B''."""
    x = np.arange(1950.0, 2350.0, 0.5)
    y = transmittance_band(x, band_area=60.0, lorentz_hwhm=0.03, resolution=4.0, seed=seed)
    return x, y, truth(CO)["B_lower"]


def test_a_model_that_misses_the_branch_maxima_is_doubtful_with_errors_that_cover_the_truth():
    # the absorbance approximation cannot describe saturated lines under a 4 cm-1 slit
    x, y, b_true = saturated_co()
    opts = dict(resolution=4.0, fix={"temperature": 296.0}, convolve="absorbance",
                y_kind="transmittance")
    res = fit(x, y, CO_MOL, **opts)
    c = res.contour
    assert c is not None and not c.passed
    assert abs(c.mismatch) > c.allowed
    assert res.status == "doubtful"
    reason = next(r for r in res.reasons if "branch maxima" in r)
    assert "the separation alone gives B" in reason and "widened" in reason
    assert c.widened["B_e"] > 2.0
    b, e = res.constant("B_lower")
    assert abs(b - b_true) < 3 * e, (b, e, b_true)
    # without the check the same fit claims an error that does not cover the truth
    plain = fit(x, y, CO_MOL, check_contour=False, **opts)
    b0, e0 = plain.constant("B_lower")
    assert plain.contour is None and b0 == pytest.approx(b, rel=1e-9)
    assert abs(b0 - b_true) > 2.5 * e0, (b0, e0, b_true)
    assert e == pytest.approx(e0 * c.widened["B_e"], rel=0.05)


def test_with_b_held_the_reason_gives_t_from_the_separation():
    x, y, b_true = saturated_co()
    res = fit(x, y, CO_MOL, resolution=4.0, convolve="absorbance", y_kind="transmittance",
              fix={"B_e": CO["B_e"], "alpha_e": CO["alpha_e"]})
    assert not res.contour.passed
    reason = next(r for r in res.reasons if "branch maxima" in r)
    assert "gives T ≈" in reason and "gives B" not in reason
    assert set(res.contour.widened) == {"temperature"}
    t, e = res.constant("T_rot")
    assert abs(t - 296.0) < 3 * e, (t, e)


@pytest.mark.parametrize("mol, constants, kw", [
    (CO_MOL, CO, dict(resolution=4.0, step=1.0, x_range=(1950.0, 2350.0))),
    (CO_MOL, CO, dict(resolution=0.5, step=0.1, temperature=600.0, x_range=(1950.0, 2350.0),
                      y_kind="transmittance")),
    (CO_MOL, CO, dict(resolution=0.1, step=0.025, temperature=600.0, noise=0.01,
                      x_range=(2000.0, 2300.0))),
    (HCL_MOL, HCL, dict(resolution=2.0, step=0.5, x_range=(2550.0, 3150.0),
                        y_kind="transmittance", noise=0.01)),
])
def test_a_model_that_describes_its_band_passes(mol, constants, kw):
    sp = simulate(mol, constants, **kw)
    T = kw.get("temperature", 296.0)
    res = fit_spectrum(sp, mol, fix={"temperature": T})
    assert res.contour is not None and res.contour.passed, res.contour
    assert not any("branch maxima" in r for r in res.reasons)
    assert res.contour.widened == {}


def test_the_noise_of_the_separation_matches_the_spread_over_noise_draws():
    # first-order propagation of white noise through the smoothing (common practice) against
    # 60 draws of numpy noise on one clean simulated contour
    sp = simulate(CO_MOL, CO, resolution=1.0, step=0.25, temperature=1000.0, noise=0.0,
                  baseline=None, x_range=(2000.0, 2300.0))
    x, a = np.asarray(sp.x), np.asarray(sp.y)
    h = x[1] - x[0]
    width = 7.0
    clean = _pr_from_uniform(x, a, h, smoothing=width)
    rng = np.random.default_rng(2)
    seps = [_pr_from_uniform(x, a + rng.normal(0, 0.01, x.size), h, smoothing=width).separation
            for _ in range(60)]
    pred = separation_noise(x, smooth(a, width / h / 2.3548), np.full(x.size, 0.01), width,
                            (clean.p_max, clean.r_max))
    assert 0.6 < np.std(seps) / pred < 1.6, (np.std(seps), pred)


def test_check_contour_must_be_a_flag():
    x, y, _ = saturated_co()
    with pytest.raises(wk.FitError, match="check_contour"):
        fit(x, y, CO_MOL, check_contour="yes")


def test_the_session_records_the_check_and_an_older_record_replays_without_it(tmp_path,
                                                                                without_key):
    x, y, _ = saturated_co()
    s = wk.Session(wk.Spectrum(x, y, y_kind="transmittance"))
    opts = dict(resolution=4.0, fix={"temperature": 296.0}, convolve="absorbance")
    s.fit_band_model("CO", check_contour=False, **opts)   # as before the option
    fit_now = s.fit_band_model("CO", **opts)
    assert s.history[1].params["check_contour"] is False
    assert s.history[2].params["check_contour"] is True
    assert fit_now.status == "doubtful" and not fit_now.contour.passed
    path = tmp_path / "band.session.json"
    s.save(path)
    assert wk.Session.load(path).verify().ok
    # a record without the key replays unchecked: the old one verifies ...
    report = wk.Session.load(without_key(path, tmp_path / "old1.json", 1, "check_contour")).verify()
    assert report.ok, report.mismatches
    # ... and the checked one no longer does (its widened errors and reason are not remade)
    report = wk.Session.load(without_key(path, tmp_path / "old2.json", 2, "check_contour")).verify()
    assert not report.ok
    assert any(m.startswith("step 2 (fit_band_model)") for m in report.mismatches), report.mismatches
