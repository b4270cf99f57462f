"""The solver stages of a line fit, on the sparse analytic Jacobian.

* :func:`levenberg_marquardt`: bounded Levenberg–Marquardt on the exact
  normal equations. The trust-region solver's LSMR subproblem needs about one
  sparse product per variable per iteration on these ill-conditioned line
  blocks; the normal matrix ``J^T J`` (variables × variables) is cheap to form
  from the sparse ``J`` and to factor, and gives quadratic convergence.
* :func:`certify`: our convergence test, the predicted chi-square reduction of
  the exact Gauss–Newton step in units of the reduced chi-square (the squared
  distance to the minimum in standard errors).
* :func:`rewindow`: refresh the evaluation windows when widths or positions
  moved.
"""

from __future__ import annotations

import numpy as np

from .banded import ArrowSystem
from .model import WindowedModel

__all__ = ["levenberg_marquardt", "certify", "gauss_newton", "rewindow", "CONVERGENCE_TOL"]

#: converged when the remaining Gauss–Newton reduction is below this many reduced chi-squares
CONVERGENCE_TOL = 1e-4
#: iterations and evaluations of one Levenberg–Marquardt pass (the fit may run several)
LM_MAX_ITER = 60
LM_MAX_NFEV = 150


def rewindow(model: WindowedModel, theta: np.ndarray) -> bool:
    """Re-window when the fitted widths or positions moved; True if windows were kept."""
    starts, ends = model.window_ranges(theta)
    old_len = model.ends - model.starts
    tol = np.maximum(0.2 * old_len, 2)
    if (np.all(np.abs(starts - model.starts) <= tol)
            and np.all(np.abs(ends - model.ends) <= tol)):
        return True
    model.set_ranges(starts, ends)
    return False


def _held(v, g, lo, hi):
    scale = np.maximum(np.abs(v), 1e-12)
    return (((v - lo) <= 1e-9 * scale) & (g > 0)) | (((hi - v) <= 1e-9 * scale) & (g < 0))


def _solve(hess, g, free, lam=0.0):
    """Step minimising the (damped) quadratic model over the free variables."""
    if isinstance(hess, ArrowSystem):
        return hess.solve(g, free, lam)[0]
    step = np.zeros_like(g)
    if np.any(free):
        hf = hess[np.ix_(free, free)]
        d = np.sqrt(np.maximum(np.diag(hf), 1e-300))
        a = hf / np.outer(d, d) + lam * np.eye(d.size)
        try:
            sol = np.linalg.solve(a, g[free] / d)
        except np.linalg.LinAlgError:
            sol = np.linalg.lstsq(a, g[free] / d, rcond=1e-13)[0]
        step[free] = -sol / d
    return step


def gauss_newton(hess, g, free, fast=False):
    """Exact Gauss–Newton step over the free variables and its predicted
    chi-square reduction.

    Pseudo-inverse of the scaled normal matrix (undetermined directions are
    left alone); with ``fast=True`` a Cholesky factorisation is tried first
    (well-conditioned case) and the eigen-decomposition used only if it fails.
    A structured ``hess`` (:class:`~.banded.ArrowSystem`) is solved in its own
    form, a small ridge standing in for the pseudo-inverse.
    """
    if isinstance(hess, ArrowSystem):
        step, pred, _ = hess.solve(g, np.asarray(free, dtype=bool))
        return step, pred
    step = np.zeros_like(g)
    if not np.any(free):
        return step, 0.0
    hf = hess[np.ix_(free, free)]
    d = np.sqrt(np.maximum(np.diag(hf), 1e-300))
    if fast:
        try:
            c = np.linalg.cholesky(hf / np.outer(d, d))
            z = np.linalg.solve(c, g[free] / d)
            if np.all(np.isfinite(z)) and np.min(np.abs(np.diag(c))) > 1e-6:
                step[free] = -np.linalg.solve(c.T, z) / d
                return step, float(z @ z)
        except np.linalg.LinAlgError:
            pass
    w, u = np.linalg.eigh(hf / np.outer(d, d))
    keep = w > 1e-13 * max(w.max(), 1e-300)
    proj = u[:, keep].T @ (g[free] / d)
    step[free] = -(u[:, keep] @ (proj / w[keep])) / d
    return step, float(np.sum(proj**2 / w[keep]))


def bounded_gauss_newton(hess, g, v, lo, hi, *, fast=False):
    """Gauss–Newton step with bounds: a variable at a bound is held when the step would
    take it outside, not only when the gradient points outside (through correlations the
    two can differ). "At a bound" is judged against the step: a variable closer to the
    bound than 1e-3 of a step that would cross it is at the bound (solvers stop a hair
    inside). An active-set loop that holds at least one more variable per pass.

    Returns the step, its predicted chi-square reduction and the held mask.
    """
    held = _held(v, g, lo, hi)
    while True:
        step, pred = gauss_newton(hess, g, ~held, fast=fast)
        reach = 1e-3 * np.abs(step)
        out = ~held & ((((v + step) < lo) & ((v - lo) <= reach))
                       | (((v + step) > hi) & ((hi - v) <= reach)))
        if not out.any():
            return step, pred, held
        held = held | out


def certify(jac, r, v, lo, hi, redchi, model: WindowedModel | None = None):
    """Predicted chi-square reduction of the exact Gauss–Newton step, in reduced
    chi-squares, and the indices of variables held at a bound.

    With a structured ``model`` (:attr:`WindowedModel.structured`) the normal
    equations come from the model's window structure (``jac`` is not used).
    """
    if model is not None and model.structured:
        hess, g = model.normal_equations(v, r)
        _, pred, held = bounded_gauss_newton(hess, g, v, lo, hi)
        return pred / max(redchi, 1e-300), np.nonzero(held)[0]
    g = jac.T @ r
    hess = jac.T @ jac
    hess = hess.toarray() if hasattr(hess, "toarray") else np.asarray(hess)
    _, pred, held = bounded_gauss_newton(hess, g, v, lo, hi)
    return pred / max(redchi, 1e-300), np.nonzero(held)[0]


def levenberg_marquardt(model: WindowedModel, v, lo, hi, nfree: int, max_iter: int = LM_MAX_ITER,
                         max_nfev: int = LM_MAX_NFEV):
    """Bounded Levenberg–Marquardt on the exact sparse normal equations.

    The trust-region solver's LSMR subproblem needs about one sparse product
    per variable per iteration on these ill-conditioned line blocks; the
    normal matrix ``J^T J`` (variables × variables) is cheap to form from the
    sparse ``J`` and to factor, and gives quadratic convergence at the end.
    Steps are clipped to the bounds; a variable at a bound whose gradient
    points outward is held.

    Returns variables, certificate (as :func:`certify`), names held, and
    the numbers of model and Jacobian evaluations.

    A structured model (:attr:`WindowedModel.structured`) is solved with one
    damping per independent block of lines (:mod:`.lmblocks`).
    """
    if getattr(model, "structured", False):
        from .lmblocks import levenberg_marquardt_blocks

        return levenberg_marquardt_blocks(model, v, lo, hi, nfree, max_iter, max_nfev)
    r = model.residual_vec(v)
    chi = float(r @ r)
    lam, nfev, crit, held, slow = 1e-3, 1, np.inf, np.zeros(v.size, dtype=bool), 0
    njev = 0
    for _ in range(max_iter):
        if nfev >= max_nfev:
            break
        hess, g = model.normal_equations(v, r)
        njev += 1
        gn, pred, held = bounded_gauss_newton(hess, g, v, lo, hi, fast=True)
        free = ~held
        crit = pred / max(chi / max(nfree, 1), 1e-300)
        if crit < 1e-3 * CONVERGENCE_TOL:
            # converged: one last full Gauss–Newton step (quadratic convergence
            # takes the remaining distance to rounding level for one evaluation)
            vn = np.clip(v + gn, lo, hi)
            rn = model.residual_vec(vn)
            nfev += 1
            if float(rn @ rn) <= chi:
                v, r, chi = vn, rn, float(rn @ rn)
            break
        while lam < 1e12:
            step = gn if lam < 1e-9 else _solve(hess, g, free, lam)
            vn = np.clip(v + step, lo, hi)
            rn = model.residual_vec(vn)
            nfev += 1
            cn = float(rn @ rn)
            if np.isfinite(cn) and cn < chi:
                lam = max(lam * 0.2, 1e-10)
                break
            lam = max(lam, 1e-6) * 10.0
        else:
            break
        slow = slow + 1 if chi - cn <= 1e-10 * chi else 0
        v, r, chi = vn, rn, cn
        if slow >= 3:  # stalled: leave the verdict to the certificate
            break
    names = [model.tmap.var_names[k] for k in np.nonzero(held)[0]]
    return v, crit, names, nfev, njev
