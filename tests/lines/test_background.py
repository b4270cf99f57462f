"""The smooth background of ``baseline="auto"`` (widgetkit.lines.background) and standard
errors beside an undetermined line (widgetkit.lines._lmfit_sparse.inverse_normal).

Invented data from our simulator (self-consistency only): the truth is what was simulated.
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import widgetkit as wk
import widgetkit.lines as wl
from widgetkit.lines._lmfit_sparse import inverse_normal
from widgetkit.lines.background import smooth_background

HCL = wk.Diatomic("H", "Cl")


def _band(curved: bool, seed: int = 4):
    """HCl 1-0 R branch at 0.02 cm-1 steps, on a cubic baseline plus a fringe of period 12
    cm-1 (curved) or on a straight one; noise 0.002 absorbance."""
    x = np.arange(2900.0, 2990.0, 0.02)
    sp = wk.simulate.rovibrational(HCL, wk.simulate.HANDBOOK["1H-35Cl"], x=x, temperature=296,
                                   resolution=0.06, lorentz_hwhm=0.02, strength=0.5,
                                   noise=0.002, seed=seed, y_kind="absorbance")
    u = (x - x.mean()) / np.ptp(x)
    base = 0.05 + 0.02 * u
    if curved:
        base = base + 0.3 * u**2 - 0.4 * u**3 + 0.01 * np.sin(2 * np.pi * x / 12.0)
    truth = sp.meta["simulated"]
    return x, sp.y + base, base, truth


def _positions(x, y):
    peaks = wk.processing.find_peaks(x, y)
    return peaks["position"].to_numpy()


def test_a_curved_baseline_with_a_fringe_is_subtracted_and_the_lines_come_out_right():
    x, y, base, _ = _band(curved=True)
    pos = _positions(x, y)
    auto = wl.fit(x, y, pos)
    assert auto.background is not None
    assert any("smooth background" in f for f in auto.flags["fit"])
    # the background plus the fitted straight line follows the simulated baseline to a few σ
    # wherever there is no line (points further than 1 cm-1 from every fitted line)
    free = np.min(np.abs(x[:, None] - auto.table["position"].to_numpy()[None, :]), axis=1) > 1.0
    assert free.sum() > 200
    assert np.sqrt(np.mean((auto.baseline_y - base)[free] ** 2)) < 3 * 0.002
    # reduced chi-square near the noise variance: nothing left that the model misses
    assert auto.redchi / auto.noise**2 < 1.5
    # against a straight line alone, which cannot follow this baseline
    straight = wl.fit(x, y, pos, baseline="linear")
    assert straight.background is None
    assert straight.redchi > 5 * auto.redchi


def test_line_positions_with_the_background_agree_with_the_clean_band_within_errors():
    x, y, base, _ = _band(curved=True)
    clean = wl.fit(x, y - base, _positions(x, y - base), baseline="linear")
    auto = wl.fit(x, y, _positions(x, y))
    strong = clean.table[clean.table["height"] > 20 * clean.noise]
    assert len(strong) >= 10
    for _, row in strong.iterrows():
        k = np.argmin(np.abs(auto.table["position"].to_numpy() - row["position"]))
        got = auto.table.iloc[k]
        err = np.hypot(got["position_err"], row["position_err"])
        assert abs(got["position"] - row["position"]) <= 4 * err, row["position"]


def test_a_straight_baseline_gets_no_background_and_the_same_fit_as_linear():
    x, y, _, _ = _band(curved=False)
    pos = _positions(x, y)
    auto, linear = wl.fit(x, y, pos), wl.fit(x, y, pos, baseline="linear")
    assert auto.background is None
    np.testing.assert_array_equal(auto.table["position"], linear.table["position"])
    assert auto.spec["baseline"] == "auto" and linear.spec["baseline"] == "linear"


def test_too_few_line_free_points_give_no_background():
    # lines everywhere: nothing to estimate a background from
    x = np.linspace(0.0, 10.0, 1001)
    pos = np.arange(0.25, 10.0, 0.5)
    y = sum(np.exp(-0.5 * ((x - p) / 0.15) ** 2) for p in pos) + 0.1 * x**2 / 100
    assert smooth_background(x, y, pos, np.full(pos.size, 0.35), np.ones(pos.size), 0.001) is None


def test_the_background_is_recorded_and_restored_with_the_session(tmp_path):
    x, y, _, _ = _band(curved=True)
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks()
    s.fit_lines()
    assert s.line_fit.background is not None
    path = tmp_path / "s.json"
    s.save(path)
    rec = json.loads(path.read_text())
    assert "background" in json.dumps(rec)
    again = wk.Session.load(path)
    np.testing.assert_allclose(again.line_fit.background.values, s.line_fit.background.values,
                               rtol=0, atol=1e-12)
    np.testing.assert_allclose(again.line_fit.model_y, s.line_fit.model_y, rtol=0,
                               atol=0.01 * s.line_fit.noise)
    assert again.verify().ok


def test_the_errors_of_determined_variables_survive_a_singular_normal_matrix():
    # reference: numpy's inverse of the determined block (the zero column is left out)
    rng = np.random.default_rng(1)
    jac = rng.normal(size=(60, 5))
    jac[:, 2] = 0.0
    hess = jac.T @ jac
    keep = [0, 1, 3, 4]
    cov = inverse_normal(hess)
    np.testing.assert_allclose(cov[np.ix_(keep, keep)], np.linalg.inv(hess[np.ix_(keep, keep)]),
                               rtol=1e-10)
    assert cov[2, 2] > 1e10 and np.all(cov[2, keep] == 0)
    # collinear columns: both undetermined, the rest as their own block
    jac[:, 2] = 2.0 * jac[:, 0]
    cov = inverse_normal(jac.T @ jac)
    assert cov[0, 0] > 1e10 and cov[2, 2] > 1e10
    rest = [1, 3, 4]
    np.testing.assert_allclose(cov[np.ix_(rest, rest)],
                               np.linalg.inv((jac.T @ jac)[np.ix_(rest, rest)]), rtol=1e-10)


@pytest.mark.parametrize("seed", [1, 2])
def test_a_regular_normal_matrix_gives_the_plain_inverse(seed):
    jac = np.random.default_rng(seed).normal(size=(40, 6))  # reference: numpy.linalg.inv
    np.testing.assert_allclose(inverse_normal(jac.T @ jac), np.linalg.inv(jac.T @ jac),
                               rtol=1e-10)


def test_a_background_that_rises_above_the_lines_of_a_dense_band_is_not_used():
    # stress-corpus case (benchmarks/corpus.py, our simulator, invented scene): CO 1-0 with its
    # hot band at 0.24 cm-1 steps and SNR 24, lines everywhere; the spline through the few
    # line-free points rose above lines, which then started (and stayed) negative
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "benchmarks"))
    from corpus import make_case, render

    r = render(make_case(72, seed=2026))
    res = wl.fit(r.spectrum.x, r.spectrum.y, _positions(r.spectrum.x, r.spectrum.y))
    assert res.background is None
    assert any("not used" in f for f in res.flags["fit"])
    assert np.all(res.table["area"] > 0)


def test_a_line_that_starts_with_the_wrong_sign_takes_the_sign_of_the_others():
    from widgetkit.lines._setup import _one_sign
    from widgetkit.lines.start import Starts

    st = Starts(baseline=np.zeros(2), heights=np.array([1.0, 0.8, 1.2, 0.9, -0.05]),
                fwhm=np.ones(5))
    flags: dict = {}
    out = _one_sign(st, [1, 2, 3, 4, 5], 0.02, None, flags)
    assert out.heights[4] > 0 and list(flags) == [5]
    np.testing.assert_array_equal(out.heights[:4], st.heights[:4])
    # a height the caller gave is the caller's
    assert _one_sign(st, [1, 2, 3, 4, 5], 0.02, [np.nan] * 4 + [-0.05], {}).heights[4] < 0
    # mixed signs (emission and absorption): nothing changes
    mixed = Starts(baseline=np.zeros(2), heights=np.array([1.0, -1.0, 1.0, -1.0]),
                   fwhm=np.ones(4))
    np.testing.assert_array_equal(_one_sign(mixed, [1, 2, 3, 4], 0.02, None, {}).heights,
                                  mixed.heights)


def test_a_background_that_turns_wrongly_signed_starts_right_is_used():
    # stress-corpus case (benchmarks/corpus.py, our simulator, invented scene): HCl in
    # transmittance on a cubic baseline; against a straight baseline the lines at both ends of
    # the band start negative, on the background they start positive, as the others: that is
    # the background doing its work, not rising above the lines
    import sys
    from pathlib import Path

    sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "benchmarks"))
    from corpus import make_case, render

    r = render(make_case(35, seed=2026))
    s = wk.Session(r.spectrum)
    s.to_absorbance()
    s.find_peaks()
    s.fit_lines(add_missed=False, weighting="none")
    assert s.line_fit.background is not None
    truth = r.positions[r.counted]
    ok = 0
    for t in truth:
        row = s.lines.iloc[np.argmin(np.abs(s.lines["position"] - t))]
        ok += abs(row["position"] - t) <= 4 * row["position_err"]
    assert ok >= 0.95 * truth.size, (ok, truth.size)
