"""Bounded Levenberg–Marquardt with a budget, for the band model (private).

Normal equations on the analytic Jacobian (a few to twenty parameters, many data):
the step solves (JᵀJ + λ diag(JᵀJ)) δ = −Jᵀr in the scaled variables, by an
eigen-decomposition (one per iteration, for every λ tried) so that directions the data do
not determine are left alone;
the new point is clipped to the bounds. Converged when the Gauss–Newton step would
lower χ² by less than ``tol`` reduced chi-squares (that is, the point is within
√tol standard errors of the minimum) or χ² stops falling; stopped, and said so,
when the evaluation or time budget runs out. Progress goes to an optional callback.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

__all__ = ["Solution", "levenberg_marquardt", "normal_inverse", "normal_solve"]


@dataclass(frozen=True)
class Solution:
    """Outcome of :func:`levenberg_marquardt`."""

    theta: np.ndarray
    chisqr: float
    residual: np.ndarray
    jac: np.ndarray
    converged: bool
    message: str
    nfev: int
    njev: int
    iterations: int
    #: JᵀJ of ``jac`` (at ``theta``) when the solver formed it, else None
    normal: np.ndarray | None = None


def normal_solve(A: np.ndarray, g: np.ndarray, lam: float = 0.0, rcond: float = 1e-13) -> np.ndarray:
    """Solve (A + λ diag A) δ = −g by scaled eigen-decomposition (pseudo-inverse)."""
    if not (np.all(np.isfinite(A)) and np.all(np.isfinite(g))):
        return np.zeros_like(g)
    d = np.sqrt(np.maximum(np.diag(A), 1e-300))
    As = A / np.outer(d, d) + lam * np.eye(d.size)
    w, V = np.linalg.eigh(As)
    keep = w > rcond * max(w.max(), 1e-300)
    z = V.T @ (g / d)
    z = np.where(keep, z / np.where(keep, w, 1.0), 0.0)
    return -(V @ z) / d


def normal_inverse(A: np.ndarray, rcond: float = 1e-13) -> np.ndarray:
    """The pseudo-inverse of A as :func:`normal_solve` gives it column by column (its
    columns are −normal_solve(A, e_j)), from one eigen-decomposition."""
    P = A.shape[0]
    if not np.all(np.isfinite(A)):
        return np.zeros((P, P))
    d = np.sqrt(np.maximum(np.diag(A), 1e-300))
    As = A / np.outer(d, d)
    w, V = np.linalg.eigh(As)
    keep = w > rcond * max(w.max(), 1e-300)
    Z = V.T @ (np.eye(P) / d[:, None])
    Z = np.where(keep[:, None], Z / np.where(keep, w, 1.0)[:, None], 0.0)
    return (V @ Z) / d[:, None]


def _normal_equations(J, r, chi2, stacked=None) -> tuple[np.ndarray, np.ndarray, bool]:
    """(JᵀJ, Jᵀr, whether J and r are finite); non-finite J or r make JᵀJ, Jᵀr or χ²
    non-finite, so the elementwise check runs only then. ``stacked``: the rows of Jᵀ and
    then r in one C-ordered array (J and r its views), whose Gram matrix gives both in one
    pass over the memory."""
    with np.errstate(all="ignore"):
        if stacked is not None:
            G = stacked @ stacked.T
            P = G.shape[0] - 1
            A, g = G[:P, :P], G[:P, P]
        else:
            A = J.T @ J
            g = J.T @ r
    finite = (np.isfinite(chi2) and np.isfinite(A).all() and np.isfinite(g).all()) or \
        (np.all(np.isfinite(J)) and np.all(np.isfinite(r)))
    return A, g, bool(finite)


def _held(theta, g, lower, upper) -> np.ndarray:
    """Variables at a bound whose descent direction −g points out of the box."""
    scale = np.maximum(np.abs(theta), 1e-12)
    return (((theta - lower) <= 1e-10 * scale) & (g > 0)) | (((upper - theta) <= 1e-10 * scale) & (g < 0))


class _Steps:
    """The steps of one iteration, (A + λ diag A) δ = −g on the ``free`` variables as
    :func:`normal_solve` solves it, from one eigen-decomposition of the scaled A: the
    damped matrix A_s + λ I has the eigenvectors of A_s and the eigenvalues w + λ (the
    Gauss–Newton step and every trial λ of the iteration)."""

    def __init__(self, A, g, free, rcond: float = 1e-13):
        self.g, self.free, self.rcond = g, free, rcond
        self.ok = bool(np.any(free))
        if not self.ok:
            return
        Af, gf = A[np.ix_(free, free)], g[free]
        self.finite = bool(np.all(np.isfinite(Af)) and np.all(np.isfinite(gf)))
        if not self.finite:
            return
        self.d = np.sqrt(np.maximum(np.diag(Af), 1e-300))
        self.w, self.V = np.linalg.eigh(Af / np.outer(self.d, self.d))
        self.z = self.V.T @ (gf / self.d)

    def __call__(self, lam: float = 0.0) -> np.ndarray:
        step = np.zeros_like(self.g)
        if not self.ok or not self.finite:
            return step
        w = self.w + lam
        keep = w > self.rcond * max(w.max(), 1e-300)
        z = np.where(keep, self.z / np.where(keep, w, 1.0), 0.0)
        step[self.free] = -(self.V @ z) / self.d
        return step


def levenberg_marquardt(fun: Callable, theta0: np.ndarray, lower: np.ndarray, upper: np.ndarray, *,
                        dof: int, max_nfev: int = 200, max_time: float = 60.0,
                        tol: float = 1e-4, progress: Callable | None = None,
                        stage: str = "fit") -> Solution:
    """Minimise ‖r(θ)‖² with ``fun(θ, jac) -> (r, J or None)``.

    Parameters
    ----------
    fun : callable
        Residuals (N,) and, when ``jac`` is true, their Jacobian (N, P). It may return the
        same array for every Jacobian: only the latest one is used (and returned). With the
        Jacobian it may return a third item: a C-ordered (P + 1, N) array whose rows are Jᵀ
        and then r (the two returned arrays being its views), for one pass over the memory
        in the normal equations.
    theta0, lower, upper : ndarray (P,)
    dof : int
        Degrees of freedom, for the reduced chi-square of the convergence test.
    max_nfev : int
        Budget of residual evaluations (each Jacobian counts as one more).
    max_time : float
        Budget in seconds.
    tol : float
        Converged when the predicted Gauss–Newton reduction < tol × reduced χ².
    progress : callable, optional
        ``progress(stage, iteration, chisqr, elapsed)`` after every accepted step.
    """
    t0 = time.perf_counter()
    theta = np.clip(np.asarray(theta0, dtype=float), lower, upper)
    r, J, stacked = _with_jacobian(fun, theta)
    nfev, njev = 1, 1
    chi2 = float(r @ r)
    lam = 1e-3
    it = 0
    message, converged = "", False
    stall = 0
    normal = None  # JᵀJ of the current J
    while True:
        A, g, finite = _normal_equations(J, r, chi2, stacked)
        normal = A
        if not finite:
            message = "stopped: the model or its derivatives are not finite at these parameters"
            break
        redchi = max(chi2 / max(dof, 1), 1e-300)
        free = ~_held(theta, g, lower, upper)
        steps = _Steps(A, g, free)
        gn = steps()
        pred = float(-(g @ gn))  # predicted χ² reduction of the Gauss–Newton step
        if pred < tol * redchi:
            converged, message = True, "converged: the Gauss-Newton step would lower chi-square " \
                                       f"by {pred / redchi:.2g} reduced chi-squares"
            break
        if nfev >= max_nfev:
            message = f"stopped: evaluation budget of {max_nfev} used"
            break
        if time.perf_counter() - t0 > max_time:
            message = f"stopped: time budget of {max_time:g} s used"
            break
        accepted = False
        while nfev < max_nfev:
            delta = steps(lam)
            trial = np.clip(theta + delta, lower, upper)
            rt, _ = fun(trial, False)
            nfev += 1
            ct = float(rt @ rt)
            if np.isfinite(ct) and ct < chi2:
                accepted = True
                break
            lam = min(lam * 4.0, 1e12)
            if lam >= 1e12:
                break
        if not accepted:
            converged = pred < 10 * tol * redchi or lam >= 1e12
            message = ("converged: no step lowers chi-square further" if converged else
                       f"stopped: evaluation budget of {max_nfev} used")
            break
        gain = (chi2 - ct) / max(chi2, 1e-300)
        theta = trial
        r, J, stacked = _with_jacobian(fun, theta)
        normal = None
        nfev += 1
        njev += 1
        chi2 = float(r @ r)
        lam = max(lam / 3.0, 1e-9)
        it += 1
        if progress is not None:
            progress(stage, it, chi2, time.perf_counter() - t0)
        stall = stall + 1 if gain < 1e-10 else 0
        if stall >= 3:
            converged, message = True, "converged: chi-square no longer falls"
            break
    return Solution(theta=theta, chisqr=chi2, residual=r, jac=J, converged=converged,
                    message=message, nfev=nfev, njev=njev, iterations=it,
                    normal=normal if finite else None)


def _with_jacobian(fun: Callable, theta: np.ndarray):
    """(r, J, stacked or None) from ``fun(theta, True)`` (see :func:`levenberg_marquardt`)."""
    out = fun(theta, True)
    return (out[0], out[1], out[2]) if len(out) > 2 else (out[0], out[1], None)
