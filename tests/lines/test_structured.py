"""Structured (banded plus arrowhead) normal equations against the dense numpy answer.

References: numpy.linalg (solve, inv, pinv) on the same small matrices, and the
dense path of the fit itself (``STRUCTURED_MIN_VARS`` raised). The bands are
invented (conftest), so the fit comparisons are self-consistency checks.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.sparse as sp
from conftest import simulate_band

import widgetkit.lines as wl
from widgetkit.lines import model as model_mod
from widgetkit.lines import solver, structured
from widgetkit.lines.banded import ArrowSystem, selected_inverse


def _arrow_matrix(rng, n_loc=50, g=3, n_rows=500):
    """J^T J of a random J whose local columns cover overlapping row ranges."""
    J = np.zeros((n_rows, n_loc + g))
    for j in range(n_loc):
        lo = max(0, j * 9 - 30)
        J[lo:lo + 60, j] = rng.normal(size=min(60, n_rows - lo))
    J[:, n_loc:] = rng.normal(size=(n_rows, g))
    H = J.T @ J
    perm = rng.permutation(n_loc + g)  # the variables' own order is shuffled
    Ho = np.empty_like(H)
    Ho[np.ix_(perm, perm)] = H
    return Ho, perm


def test_selected_inverse_equals_numpy_inverse_inside_the_band():
    import scipy.linalg as sla

    rng = np.random.default_rng(1)
    n, b = 40, 4
    A = np.zeros((n, n))
    for k in range(b + 1):
        v = rng.normal(size=n - k) * (0.3 if k else 0.0)
        A += np.diag(v, -k) + (np.diag(v, k) if k else 0)
    A += np.diag(np.full(n, 3.0))
    ab = np.array([np.r_[np.diag(A, -k), np.zeros(k)] for k in range(b + 1)])
    sig = selected_inverse(sla.cholesky_banded(ab, lower=True))
    ref = np.linalg.inv(A)  # numpy.linalg.inv as the reference
    for k in range(b + 1):
        assert np.allclose(sig[k, : n - k], np.diag(ref, -k), rtol=1e-12, atol=1e-14)


def test_arrow_solve_and_covariance_equal_dense_numpy():
    rng = np.random.default_rng(0)
    H, perm = _arrow_matrix(rng)
    system = ArrowSystem(sp.csr_array(H), perm, 50)
    assert system.bw < 20  # banded, not dense
    g = rng.normal(size=H.shape[0])
    free = np.ones(g.size, dtype=bool)
    free[[3, 17]] = False
    step, pred, ridge = system.solve(g, free)
    ref = np.zeros_like(g)
    ref[free] = -np.linalg.solve(H[np.ix_(free, free)], g[free])  # numpy.linalg.solve
    assert ridge == 0.0
    assert np.allclose(step, ref, rtol=1e-10, atol=1e-12 * np.abs(ref).max())
    assert pred == pytest.approx(-g @ ref, rel=1e-10)
    damped = system.solve(g, free, lam=0.1)[0]
    d = np.sqrt(np.diag(H))[free]
    hs = H[np.ix_(free, free)] / np.outer(d, d) + 0.1 * np.eye(d.size)
    assert np.allclose(damped[free], -np.linalg.solve(hs, g[free] / d) / d, rtol=1e-10)

    cov = system.covariance()
    inv = np.linalg.inv(H)  # numpy.linalg.inv
    computed = cov.to_sparse().toarray()
    mask = computed != 0
    assert mask.mean() < 0.7  # only the band and the global rows
    assert np.allclose(computed[mask], inv[mask], rtol=1e-9, atol=1e-12 * np.abs(inv).max())
    assert np.allclose(cov.diagonal(), np.diag(inv), rtol=1e-10)
    far = (perm[0], perm[49])  # two local variables at either end of the band
    assert np.isnan(cov.entries(*far))


def test_a_variable_the_data_does_not_touch_is_left_alone_like_the_pseudo_inverse():
    rng = np.random.default_rng(2)
    H, perm = _arrow_matrix(rng)
    H[5, :] = 0.0
    H[:, 5] = 0.0
    g = rng.normal(size=H.shape[0])
    g[5] = 0.0
    step, pred, ridge = ArrowSystem(sp.csr_array(H), perm, 50).solve(g, np.ones(g.size, bool))
    ref = -np.linalg.pinv(H) @ g  # numpy.linalg.pinv
    assert ridge > 0.0 and step[5] == pytest.approx(0.0, abs=1e-12)
    assert np.allclose(step, ref, rtol=1e-6, atol=1e-8 * np.abs(ref).max())
    assert pred == pytest.approx(-g @ ref, rel=1e-6)


def _spy_model(monkeypatch, band, **kw):
    seen = {}
    orig = solver.levenberg_marquardt

    def spy(model, v, *a, **k):
        seen["model"], seen["v"] = model, v
        return orig(model, v, *a, **k)

    monkeypatch.setattr(solver, "levenberg_marquardt", spy)
    res = wl.fit(band.x, band.y, band.positions + 0.01, **kw)
    return seen["model"], seen["v"], res


@pytest.mark.parametrize("kw", [
    {}, {"shared_width": True}, {"baseline": "exponential"}, {"baseline": "none"},
    {"constraints": {"l2_area": "0.5 * l1_area", "l4_gamma": 0.08}},
    {"shared_width": {"a": [1, 2, 3], "b": [5, 6]}}, {"shape": "pseudo_voigt", "window": 20},
    {"weights": "ramp"}, {"constraints": {"doppler": {"temperature": 296.0, "mass": 28.0}}},
])
def test_structured_normal_equations_give_the_dense_step_and_covariance(kw, monkeypatch):
    b = simulate_band(n_lines=8, n_points=3000)
    if kw.get("weights") == "ramp":
        kw = {"weights": np.linspace(1.0, 2.0, b.x.size)}
    model, v, _ = _spy_model(monkeypatch, b, **kw)
    r = model.residual_vec(v)
    H, g = model.normal_equations(v, r)
    model.structured = True
    S, g2 = model.normal_equations(v, r)
    assert isinstance(S, ArrowSystem) and np.allclose(g2, g, rtol=1e-12, atol=0)
    free = np.ones(v.size, dtype=bool)
    free[1] = False
    st, pred = solver.gauss_newton(S, g2, free)
    ref, pred0 = solver.gauss_newton(H, g, free)  # the dense path (numpy)
    assert np.allclose(st, ref, rtol=1e-8, atol=1e-10 * np.abs(ref).max())
    assert pred == pytest.approx(pred0, rel=1e-8)
    computed = S.covariance().to_sparse().toarray()
    inv = np.linalg.inv(H)
    mask = computed != 0
    scale = np.sqrt(np.outer(np.diag(inv), np.diag(inv)))
    assert np.max(np.abs(computed - inv)[mask] / scale[mask]) < 1e-8


@pytest.mark.parametrize("kw", [
    {}, {"shared_width": True}, {"constraints": {"l2_area": "0.5 * l1_area", "l4_gamma": 0.08}},
    {"shape": "gaussian", "baseline": "poly2"},
])
def test_a_structured_fit_equals_the_dense_fit(kw, monkeypatch):
    b = simulate_band(n_lines=8, n_points=3000)
    dense = wl.fit(b.x, b.y, b.positions + 0.01, **kw)
    monkeypatch.setattr(model_mod, "STRUCTURED_MIN_VARS", 0)
    fast = wl.fit(b.x, b.y, b.positions + 0.01, **kw)
    assert dense.converged and fast.converged
    assert sp.issparse(fast.result.covar) and not sp.issparse(dense.result.covar)
    assert fast.chisqr == pytest.approx(dense.chisqr, rel=1e-8)
    for col in dense.table.columns[1:]:
        assert np.allclose(fast.table[col], dense.table[col], rtol=1e-5, atol=0), col
    assert np.allclose(fast.baseline_params.stderr, dense.baseline_params.stderr, rtol=1e-5)
    for name, par in dense.params.items():
        if par.stderr:
            assert fast.params[name].stderr == pytest.approx(par.stderr, rel=1e-5), name
    k = next(iter(fast.params["l3_area"].correl))
    assert fast.params["l3_area"].correl[k] == pytest.approx(
        dense.params["l3_area"].correl[k], rel=1e-4, abs=1e-7)


def test_parameter_covariance_equals_the_dense_propagation(monkeypatch):
    b = simulate_band(n_lines=6, n_points=2500)
    kw = {"constraints": {"l2_area": "0.5 * l1_area", "l3_position": "l2_position + 3.8"},
          "shared_width": "gamma"}
    model, v, _ = _spy_model(monkeypatch, b, **kw)
    H, _ = model.normal_equations(v, model.residual_vec(v))
    values, jac = model.tmap.all_values_and_jacobian(v)
    jd = jac.toarray()
    ref = jd @ np.linalg.inv(H) @ jd.T  # dense delta-method propagation (numpy)
    model.structured = True
    S, _ = model.normal_equations(v, model.residual_vec(v))
    pc = structured.ParameterCovariance(jac, S.covariance())
    k = np.arange(len(values))
    assert np.allclose(pc[k, k], np.diag(ref), rtol=1e-8)
    line3 = [values[f"l3_{p}"][1] for p in ("area", "position", "sigma", "gamma")]
    blk = pc[np.ix_(line3, line3)]
    assert np.allclose(blk, ref[np.ix_(line3, line3)], rtol=1e-7, atol=1e-12 * np.abs(blk).max())


def test_blocks_are_the_connected_components_of_the_window_overlaps(monkeypatch):
    b = simulate_band(n_lines=8, n_points=3000)
    model, _, _ = _spy_model(monkeypatch, b, window=20)
    labels = structured.blocks(model)
    order = np.argsort(model.starts)
    for i, j in zip(order[:-1], order[1:]):  # neighbours along the spectrum
        overlap = model.starts[j] < np.max(model.ends[order[: list(order).index(j)]])
        assert (labels[i] == labels[j]) == overlap
    assert len(set(labels)) == 2  # two groups of four lines in this band


def test_reach_limited_wings_differ_from_the_exact_ones_only_by_the_neglected_tail(monkeypatch):
    b = simulate_band(n_lines=8, n_points=6000)
    model, v, _ = _spy_model(monkeypatch, b, window=5)
    theta = model.tmap.values(v)
    model.set_wings(theta)
    exact = model.wings.copy()
    monkeypatch.setattr(model_mod, "WINGS_EXACT_MAX", 0)
    model.set_wings(theta)
    reach = model.wings
    lp = theta[: 8 * 4].reshape(4, 8)
    peak = np.max(np.abs(lp[0]) / (np.pi * lp[3]))
    # each neglected wing lies beyond R = 3 x 5 HWHM, where it is below peak / R^2
    assert 0 < np.max(np.abs(exact - reach)) <= 8 * peak / 15.0**2
    assert np.max(np.abs(exact - reach)) < 0.2 * np.max(np.abs(exact))


def test_components_are_sparse_beyond_the_dense_limit(monkeypatch):
    b = simulate_band(n_lines=5, n_points=2000)
    res = wl.fit(b.x, b.y, b.positions, window=None)
    monkeypatch.setattr(model_mod, "COMPONENTS_DENSE_MAX", 0)
    res2 = wl.fit(b.x, b.y, b.positions, window=None)
    assert sp.issparse(res2.components) and res2.components.shape == res.components.shape
    assert np.allclose(res2.components.toarray(), res.components, rtol=1e-6,
                       atol=1e-9 * np.abs(res.components).max())


def test_pointsfar_from_lines_match_the_direct_test_including_the_edges():
    from widgetkit.lines.start import far_from_lines

    rng = np.random.default_rng(5)
    for _ in range(100):
        x = np.sort(rng.uniform(0.0, 10.0, rng.integers(5, 300)))
        p = rng.uniform(-1.0, 11.0, rng.integers(1, 20))
        reach = rng.uniform(0.0, 2.0, p.size)
        direct = np.all(np.abs(x[:, None] - p[None, :]) > reach[None, :], axis=1)
        assert np.array_equal(far_from_lines(x, p, reach), direct)
    x = np.arange(10.0)
    assert far_from_lines(x, np.array([5.0]), np.array([2.0])).tolist() == [
        True, True, True, False, False, False, False, False, True, True]  # |x - 5| > 2


def test_a_block_whose_step_fails_keeps_its_values_while_the_others_move():
    from widgetkit.lines.lmblocks import _damped_step

    class Stub:  # two blocks of ten points: a -> a - 1 (a step helps), b -> 5 b (it hurts)
        def residual_vec(self, v):
            return np.r_[np.full(10, v[0] - 1.0), np.full(10, 5.0 * v[1])]

    class Hess:
        def solve(self, g, free, lam):
            return np.array([1.0, 1.0]), 0.0, 0.0

    model, v = Stub(), np.zeros(2)
    r = model.residual_vec(v)
    lam = np.full(3, 1e-3)
    vn, rn, cn, nfev = _damped_step(model, Hess(), None, np.ones(2, bool), v, r, float(r @ r),
                                    np.full(2, -9.0), np.full(2, 9.0), lam, np.array([0, 1]),
                                    np.repeat([0, 1], 10), 10)
    assert vn.tolist() == [1.0, 0.0] and cn == 0.0 and nfev == 2
    assert lam[0] < 1e-3 < lam[1]


def test_independent_blocks_fitted_together_equal_each_block_fitted_alone(monkeypatch):
    # Gaussian lines without a baseline: nothing couples the two groups (no far wings)
    b = simulate_band(n_lines=8, n_points=3000, shape="gaussian", baseline=(0.0, 0.0))
    monkeypatch.setattr(model_mod, "STRUCTURED_MIN_VARS", 0)
    kw = {"baseline": "none", "shape": "gaussian", "noise": b.noise}
    whole = wl.fit(b.x, b.y, b.positions + 0.01, **kw)
    assert whole.converged
    order = np.argsort(b.positions)
    cut = 0.5 * (b.positions[order[3]] + b.positions[order[4]])  # between the two blocks
    for side in (b.positions < cut, b.positions > cut):
        ids = [i + 1 for i in np.nonzero(side)[0]]
        region = (b.x[0], cut) if side[order[0]] else (cut, b.x[-1])
        alone = wl.fit(b.x, b.y, b.positions[side] + 0.01, region=region, line_ids=ids, **kw)
        assert alone.converged
        part = whole.table.set_index("line_id").loc[ids]
        for col in ("position", "area", "fwhm"):
            assert np.allclose(part[col], alone.table[col], rtol=1e-6), col
        for col in ("position_err", "area_err"):  # errors scale with each fit's reduced chi2
            assert np.allclose(part[col] / np.sqrt(whole.redchi),
                               alone.table[col] / np.sqrt(alone.redchi), rtol=1e-5), col


def test_the_lmfit_stage_forms_no_dense_covariance_beyond_its_limit(monkeypatch):
    from widgetkit.lines import _lmfit_sparse

    b = simulate_band(n_lines=4, n_points=1500)
    seen = {}
    orig = _lmfit_sparse.SparseMinimizer.least_squares

    def spy(self, *a, **k):
        seen["res"] = orig(self, *a, **k)
        return seen["res"]

    monkeypatch.setattr(_lmfit_sparse.SparseMinimizer, "least_squares", spy)
    wl.fit(b.x, b.y, b.positions)
    assert seen["res"].covar.shape == (18, 18)
    monkeypatch.setattr(_lmfit_sparse, "DENSE_COVAR_MAX", 10)
    wl.fit(b.x, b.y, b.positions)
    assert seen["res"].covar is None


def test_a_broad_line_under_narrow_ones_joins_the_globals_and_the_band_stays_narrow():
    from widgetkit.lines.baselines import get_baseline
    from widgetkit.lines.params import ThetaMap, build_params, theta_names
    from widgetkit.lines.shapes import get_shape

    rng = np.random.default_rng(7)
    x = np.linspace(0.0, 200.0, 20000)
    pos = np.r_[np.linspace(5.0, 195.0, 60), 100.0]  # sixty narrow lines and one broad band
    area = np.r_[np.full(60, 0.3), 40.0]
    sig, gam = np.r_[np.full(60, 0.05), 5.0], np.r_[np.full(60, 0.05), 8.0]
    y = 0.1 + rng.normal(0.0, 0.01, x.size)
    for a, p, s_, g_ in zip(area, pos, sig, gam):
        y = y + wl.voigt(x, a, p, s_, g_)
    shp, bl = get_shape("voigt"), get_baseline("linear")
    ids = list(range(1, 62))
    theta = np.r_[area, pos, sig, gam, 0.1, 0.0]
    params = build_params(shp, bl, ids, theta, {})
    tmap = ThetaMap(params, theta_names(shp, ids, bl))
    model = model_mod.WindowedModel(x, y, None, shp, bl, 100.0, 61, tmap, 30.0)
    model.set_windows(theta)
    v = model.variables(params)
    assert structured.wide_lines(model).tolist() == [False] * 60 + [True]
    r = model.residual_vec(v)
    model.structured = False
    H, g = model.normal_equations(v, r)
    model.structured = True
    S, g2 = model.normal_equations(v, r)
    assert S.bw < 12 and S.n - S.n_loc == 2 + 4  # baseline and the broad line's variables
    free = np.ones(v.size, dtype=bool)
    st, pred = solver.gauss_newton(S, g2, free)
    ref, pred0 = solver.gauss_newton(H, g, free)  # the dense path (numpy)
    assert np.allclose(st, ref, rtol=1e-7, atol=1e-9 * np.abs(ref).max())
    computed = S.covariance().to_sparse().toarray()
    inv = np.linalg.inv(H)
    mask = computed != 0
    scale = np.sqrt(np.outer(np.diag(inv), np.diag(inv)))
    assert np.max(np.abs(computed - inv)[mask] / scale[mask]) < 1e-7


def test_a_matrix_with_nan_gives_no_step_and_no_claim_of_convergence():
    rng = np.random.default_rng(3)
    H, perm = _arrow_matrix(rng)
    H[4, 4] = np.nan
    step, pred, ridge = ArrowSystem(sp.csr_array(H), perm, 50).solve(
        rng.normal(size=H.shape[0]), np.ones(H.shape[0], bool))
    assert not np.any(step) and pred == np.inf and ridge == np.inf


def test_a_fit_of_110_lines_goes_structured_by_itself_and_recovers_the_simulated_lines():
    # invented dense band (our simulator, seeded): 110 Voigt lines, FWHM about 8 points
    rng = np.random.default_rng(11)
    x = 2000.0 + 0.01 * np.arange(22000)
    pos = np.linspace(x[0] + 1.0, x[-1] - 1.0, 110) + rng.uniform(-0.3, 0.3, 110)
    area = rng.uniform(0.3, 1.0, 110)
    y = 0.05 + 0.01 * (x - x.mean()) / (x[-1] - x[0])
    for a, p in zip(area, pos):
        y = y + wl.voigt(x, a, p, 0.025, 0.03)
    noise = 0.01 * float(wl.voigt(0.0, 1.0, 0.0, 0.025, 0.03))
    y = y + rng.normal(0.0, noise, x.size)
    res = wl.fit(x, y, pos + rng.normal(0.0, 0.005, pos.size), noise=noise)
    assert len(res.params) > model_mod.STRUCTURED_MIN_VARS and sp.issparse(res.result.covar)
    assert res.converged
    t = res.table.sort_values("position")
    pull = (t.position.to_numpy() - np.sort(pos)) / t.position_err.to_numpy()
    assert np.all(np.abs(pull) < 5.0)
    assert 0.7 < np.sqrt(np.mean(pull**2)) < 1.3  # error bars that mean what they say
    apull = (t.area.to_numpy() - area[np.argsort(pos)]) / t.area_err.to_numpy()
    assert 0.7 < np.sqrt(np.mean(apull**2)) < 1.3


def test_kept_shape_values_are_never_overwritten_by_later_evaluations(monkeypatch):
    b = simulate_band(n_lines=6, n_points=2000)
    model, v, _ = _spy_model(monkeypatch, b)
    model.structured = True
    model.set_windows(model.tmap.values(v))
    thetas = [model.tmap.values(v * f) for f in (1.0, 1.0001, 0.9999, 1.0002)]
    lps = [t[: 6 * 4].reshape(4, 6) for t in thetas]
    fresh = [model.shape.gradient(model.X, *lp[:, model.seg]) for lp in lps]
    # values at one point, derivatives at others, then values again: every answer is right
    for k_val, k_grad in ((0, 1), (0, 2), (3, 2), (0, 3)):
        assert np.array_equal(model.window_values(thetas[k_val]), fresh[k_val][0])
        assert np.allclose(model.window_gradient(lps[k_grad]), fresh[k_grad][1:], rtol=1e-14,
                           atol=0)
        assert np.array_equal(model.window_values(thetas[k_val]), fresh[k_val][0])


def test_the_widest_windows_of_a_dense_spectrum_join_the_globals_when_that_is_cheaper():
    # invented data (self-consistency against numpy's dense inverse): 120 narrow lines with
    # every fourth one 30 times wider, whose windows overlap most of the others (so many
    # that the median line overlaps dozens of windows: a rule on the degree alone kept
    # them all in the band)
    from widgetkit.lines.baselines import get_baseline
    from widgetkit.lines.params import ThetaMap, build_params, theta_names
    from widgetkit.lines.shapes import get_shape

    rng = np.random.default_rng(11)
    x = np.linspace(0.0, 240.0, 12000)
    m = 120
    pos = np.linspace(2.0, 238.0, m)
    broad = np.arange(m) % 4 == 1
    sig = np.where(broad, 0.9, 0.03)
    gam = np.where(broad, 0.9, 0.03)
    area = np.where(broad, 3.0, 0.1)
    y = 0.1 + rng.normal(0.0, 0.005, x.size)
    for a, p, s_, g_ in zip(area, pos, sig, gam):
        y = y + wl.voigt(x, a, p, s_, g_)
    shp, bl = get_shape("voigt"), get_baseline("linear")
    ids = list(range(1, m + 1))
    theta = np.r_[area, pos, sig, gam, 0.1, 0.0]
    params = build_params(shp, bl, ids, theta, {})
    tmap = ThetaMap(params, theta_names(shp, ids, bl))
    model = model_mod.WindowedModel(x, y, None, shp, bl, 120.0, m, tmap, 100.0)
    model.set_windows(theta)
    wide = structured.wide_lines(model)
    assert np.all(wide[broad]) and wide.sum() <= broad.sum() + 10  # the broad lines
    all_local = structured.band_cost(model.starts, model.ends, 0, 4)
    chosen = structured.band_cost(model.starts[~wide], model.ends[~wide], int(wide.sum()), 4)
    assert chosen < 0.5 * all_local
    v = model.variables(params)
    r = model.residual_vec(v)
    model.structured = False
    H, _ = model.normal_equations(v, r)
    model.structured = True
    S, _ = model.normal_equations(v, r)
    computed = S.covariance().to_sparse().toarray()
    inv = np.linalg.inv(H)
    mask = computed != 0
    scale = np.sqrt(np.outer(np.diag(inv), np.diag(inv)))
    assert np.max(np.abs(computed - inv)[mask] / scale[mask]) < 1e-7
    k = np.arange(v.size)
    assert np.allclose(S.covariance().entries(k, k), np.diag(inv), rtol=1e-7)
