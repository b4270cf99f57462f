"""The windowed model: structured normal equations equal the sparse products."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import simulate_band

import widgetkit.lines as wl
from widgetkit.lines import solver


@pytest.mark.parametrize("kw", [
    {}, {"shared_width": True}, {"baseline": "exponential"}, {"baseline": "none"},
    {"constraints": {"l2_area": "0.5 * l1_area", "l4_gamma": 0.08}},
    {"weights": "ramp"}, {"shape": "pseudo_voigt"},
])
def test_normal_equations_equal_the_products_of_the_sparse_jacobian(kw, monkeypatch):
    b = simulate_band(n_lines=8, n_points=3000)
    if kw.get("weights") == "ramp":
        kw = {"weights": np.linspace(1.0, 2.0, b.x.size)}
    seen = {}
    orig = solver.levenberg_marquardt

    def spy(model, v, *a, **k):
        seen["model"], seen["v"] = model, v
        return orig(model, v, *a, **k)

    monkeypatch.setattr(solver, "levenberg_marquardt", spy)
    wl.fit(b.x, b.y, b.positions + 0.01, **kw)
    model, v = seen["model"], seen["v"]
    r = model.residual_vec(v)
    jac = model.jacobian_vec(v).tocsr()
    hess, g = model.normal_equations(v, r)
    # J^T J and J^T r from the sparse Jacobian (scipy.sparse) as the reference
    assert np.allclose(hess, (jac.T @ jac).toarray(), rtol=1e-12, atol=1e-12 * np.abs(hess).max())
    assert np.allclose(g, jac.T @ r, rtol=1e-10, atol=1e-12 * np.abs(g).max())


def test_the_sparse_jacobian_matches_finite_differences_of_the_residual():
    b = simulate_band(n_lines=3, n_points=800)
    res = wl.fit(b.x, b.y, b.positions, shared_width="gamma", baseline="poly2")
    seen = {}
    orig = solver.levenberg_marquardt

    def spy(model, v, *a, **k):
        seen["model"], seen["v"] = model, v
        return orig(model, v, *a, **k)

    solver.levenberg_marquardt = spy
    try:
        wl.fit(b.x, b.y, res.table.position.to_numpy(), shared_width="gamma", baseline="poly2")
    finally:
        solver.levenberg_marquardt = orig
    model, v = seen["model"], seen["v"]
    jac = model.jacobian_vec(v).toarray()
    for k in range(v.size):
        h = 1e-7 * max(abs(v[k]), 1e-2)  # small next to the line widths (0.05-0.08)
        up, dn = v.copy(), v.copy()
        up[k] += h
        dn[k] -= h
        fd = (model.residual_vec(up) - model.residual_vec(dn)) / (2 * h)  # central differences
        assert np.allclose(jac[:, k], fd, rtol=1e-5, atol=1e-6 * np.abs(fd).max() + 1e-12), k
