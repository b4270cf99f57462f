"""The lmfit adaptation (widgetkit.lines._lmfit_sparse) against stock lmfit.

If lmfit changes the internals SparseMinimizer relies on, or stops densifying
the Jacobian, these tests fail and the adaptation must be revisited.
"""

from __future__ import annotations

import lmfit
import numpy as np
import pytest
import scipy.sparse as sp

from widgetkit.lines._lmfit_sparse import SparseMinimizer

X = np.linspace(0.0, 10.0, 300)
# invented two-peak data for a self-consistency comparison (seeded noise)
Y = (3.0 * np.exp(-(X - 4.0) ** 2 / 0.8) + 2.0 * np.exp(-(X - 6.2) ** 2 / 0.8)
     + np.random.default_rng(2).normal(0.0, 0.05, X.size))


def _params():
    p = lmfit.Parameters()
    p.add("a1", 2.5, min=0)
    p.add("c1", 3.8)
    p.add("w", 1.0, min=0.01)
    p.add("a2", 1.5, min=0)
    p.add("c2", expr="c1 + 2.2")
    return p


def _model(p):
    v = p.valuesdict()
    e1 = np.exp(-(X - v["c1"]) ** 2 / v["w"])
    e2 = np.exp(-(X - v["c2"]) ** 2 / v["w"])
    return v["a1"] * e1 + v["a2"] * e2, e1, e2, v


def _residual(p):
    return _model(p)[0] - Y


def _jac(p):
    _, e1, e2, v = _model(p)
    d1, d2 = X - v["c1"], X - v["c2"]
    w = v["w"]
    cols = [e1,
            v["a1"] * e1 * 2 * d1 / w + v["a2"] * e2 * 2 * d2 / w,  # c2 follows c1
            v["a1"] * e1 * d1**2 / w**2 + v["a2"] * e2 * d2**2 / w**2,
            e2]
    return np.column_stack(cols)


def _expr_stderr(covar, params):
    return {"c2": float(np.sqrt(covar[1, 1]))}  # d c2 / d c1 = 1


def test_stock_lmfit_still_densifies_a_sparse_jacobian():
    stock = lmfit.Minimizer(_residual, _params())
    res = stock.least_squares(jac=lambda p: sp.csr_array(_jac(p)))
    assert isinstance(res.jac, np.ndarray)  # lmfit 1.3.4 behaviour worked around here


def test_sparse_minimizer_keeps_the_jacobian_sparse_and_matches_stock_lmfit():
    stock = lmfit.Minimizer(_residual, _params()).least_squares(jac=_jac, x_scale="jac",
                                                                 ftol=1e-12, xtol=1e-12)
    ours = SparseMinimizer(_residual, _params(), jac=lambda p: sp.csr_array(_jac(p)),
                           expr_stderr=_expr_stderr).least_squares(ftol=1e-12, xtol=1e-12)
    assert sp.issparse(ours.jac)
    assert ours.method == "least_squares" and ours.success
    assert ours.chisqr == pytest.approx(stock.chisqr, rel=1e-10)
    assert ours.redchi == pytest.approx(stock.redchi, rel=1e-10)
    assert (ours.nfree, ours.ndata, ours.nvarys) == (stock.nfree, stock.ndata, stock.nvarys)
    assert ours.aic == pytest.approx(stock.aic, rel=1e-9)
    for name in ["a1", "c1", "w", "a2", "c2"]:
        # both stop within the solver tolerance of the same minimum (inexact LSMR steps here)
        assert ours.params[name].value == pytest.approx(stock.params[name].value, rel=1e-6)
        # lmfit propagates to the expression c2 numerically; ours is exact
        assert ours.params[name].stderr == pytest.approx(stock.params[name].stderr, rel=1e-5)
    for a in ["a1", "c1", "w", "a2"]:
        for b, r in stock.params[a].correl.items():
            assert ours.params[a].correl[b] == pytest.approx(r, abs=1e-6)
    assert np.allclose(ours.covar, stock.covar, rtol=1e-5)


def test_leastsq_is_routed_to_the_sparse_least_squares():
    ours = SparseMinimizer(_residual, _params(), jac=lambda p: sp.csr_array(_jac(p)))
    res = ours.leastsq()
    assert res.method == "least_squares" and sp.issparse(res.jac)


def test_lmfit_internals_used_by_the_adaptation_still_exist():
    for attr in ["prepare_fit", "_Minimizer__residual", "_calculate_uncertainties_correlations",
                 "set_max_nfev", "least_squares", "leastsq"]:
        assert hasattr(lmfit.Minimizer, attr), attr
    assert hasattr(lmfit.minimizer.MinimizerResult, "_calculate_statistics")
