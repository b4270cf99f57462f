"""Bounds in the solver's convergence test: a variable at its bound is held when the
Gauss–Newton step (not only the gradient) would take it outside."""

import numpy as np

import widgetkit as wk
from widgetkit.lines import solver


def test_a_variable_at_its_bound_is_held_when_the_step_crosses_it_though_the_gradient_points_in():
    # quadratic model chi(v) = 1/2 v'Hv + g'v with strongly correlated variables (constructed)
    hess = np.array([[1.0, 0.95], [0.95, 1.0]])
    g = np.array([-0.1, -1.0])     # -g0 > 0: the gradient alone would move variable 0 inward
    v = np.array([1e-10, 0.5])     # variable 0 sits a hair above its lower bound 0
    lo, hi = np.array([0.0, -np.inf]), np.array([np.inf, np.inf])
    free_step, _ = solver.gauss_newton(hess, g, np.array([True, True]))
    assert free_step[0] < 0        # unconstrained, the step would cross the bound
    step, pred, held = solver.bounded_gauss_newton(hess, g, v, lo, hi)
    assert held.tolist() == [True, False]
    assert step[0] == 0.0 and np.isclose(step[1], 1.0)   # then 1-D Newton step: -g1/h11
    assert np.isclose(pred, 1.0)                         # g1^2 / h11


def test_voigt_fit_of_lorentzian_lines_converges_with_the_gaussian_width_at_its_floor():
    # self-consistency: invented Lorentzian lines, seeded noise; a Voigt has no Gaussian part
    # to find, so sigma must end at its lower bound and the fit must still be certified.
    rng = np.random.default_rng(11)
    x = np.linspace(0.0, 100.0, 4001)
    y = 0.01 + wk.lines.lorentzian(x, 1.0, 30.0, 0.6) + wk.lines.lorentzian(x, 0.05, 70.0, 0.6)
    y = y + rng.normal(0.0, 0.001, x.size)
    fit = wk.lines.fit(x, y, [30.0, 70.0], shape="voigt")
    assert fit.converged, fit.message
    flagged = " ".join(" ".join(v) for v in fit.flags.values())
    assert "sigma ended at its bound" in flagged
    gamma = fit.table["gamma"].to_numpy()
    np.testing.assert_allclose(gamma, 0.6, atol=5 * fit.table["gamma_err"].max())
