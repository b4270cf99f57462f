"""The fitting engine: stages of a band-model fit on one :class:`~.model.BandModel` (private).

A :class:`Fitter` holds the model, the parameter list and the data, and runs the
stages :func:`widgetkit.bandmodel.fit` strings together: linear parameters first,
scans of nuisance parameters whose start is a guess, the full Levenberg–Marquardt
fit, and holding the parameters the data do not determine.

Standard errors: C = s² (JᵀJ)⁻¹ f² with s² = χ²/(N − P) and f² the error scale for
correlated residuals, f² = 1 + 2 Σ_{k=1}^{K} (1 − k/K) ρ_k (ρ_k the residual
autocorrelation at lag k, Bartlett weights, K = max(5, min(50, N/50))), applied only
when it exceeds 1 by more than twice its standard error under white noise,
2 (Σ_k (1 − k/K)² / N)^{1/2} · 2; for white noise f = 1.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable

import numpy as np

from .model import BandModel
from .params import Param
from .solver import Solution, levenberg_marquardt, normal_inverse

__all__ = ["Fitter", "error_scale"]


def error_scale(residual: np.ndarray) -> float:
    """f of the module notes (≥ 1)."""
    r = np.asarray(residual, dtype=float)
    n = r.size
    K = int(max(5, min(50, n // 50)))
    if n < 4 * K:
        return 1.0
    r = r - r.mean()
    v = float(np.dot(r, r))
    if v <= 0:
        return 1.0
    w = 1.0 - np.arange(1, K + 1) / K
    rho = np.array([float(np.dot(r[:-k], r[k:])) / v for k in range(1, K + 1)])
    f2 = 1.0 + 2.0 * float(np.sum(w * rho))
    se = 4.0 * math.sqrt(float(np.sum(w * w)) / n)
    return math.sqrt(f2) if f2 - 1.0 > se else 1.0


class Fitter:
    """Runs LM stages on a model; ``params`` is the shared parameter list (mutated)."""

    def __init__(self, model: BandModel, params: list[Param], y: np.ndarray, *,
                 max_nfev: int, max_time: float, progress: Callable | None):
        self.model = model
        self.params = params
        self.y = np.asarray(y, dtype=float)
        self.theta = np.array([p.value for p in params])
        self.lower = np.array([p.lower for p in params])
        self.upper = np.array([p.upper for p in params])
        self.max_nfev = int(max_nfev)
        self.deadline = time.perf_counter() + float(max_time)
        self.max_time = float(max_time)
        self.progress = progress
        self.nfev = 0
        self.njev = 0
        self.last: Solution | None = None
        self._cache: tuple | None = None  # (θ, free indices, J, data − model) of the last run
        self._cov_memo: tuple | None = None  # (the _cache it belongs to, covariance(), (JᵀJ)⁻¹)
        self._cache_normal: np.ndarray | None = None
        self.messages: list[str] = []

    def index(self, name: str) -> int:
        return self.model.index[name]

    def free(self) -> list[int]:
        return [k for k, p in enumerate(self.params) if p.vary]

    def budget_left(self) -> tuple[int, float]:
        return self.max_nfev - self.nfev, self.deadline - time.perf_counter()

    def run(self, names: list[str] | None = None, *, stage: str = "fit", tol: float = 1e-4,
            max_nfev: int | None = None) -> Solution:
        """LM on the parameters ``names`` (default all that vary), from the current θ."""
        idx = self.free() if names is None else [self.index(n) for n in names]
        base = self.theta.copy()
        n_left, t_left = self.budget_left()
        cap = max(3, n_left if max_nfev is None else min(max_nfev, n_left))

        # one array for all Jacobians of this run, with the residual as its last row (the
        # solver forms JᵀJ and Jᵀr in one pass): the solver needs only the latest (and the
        # run's last one stays valid in the cache below)
        jbuf = np.empty((len(idx) + 1, self.y.size))

        def fun(v, jac):
            th = base.copy()
            th[idx] = v
            if not jac:
                y, _ = self.model.evaluate(th, idx, jac=False)
                return y - self.y, None
            y, J = self.model.evaluate(th, idx, jac=True, out=jbuf[:-1])
            r = jbuf[-1]
            np.subtract(y, self.y, out=r)
            stacked = jbuf if J.T.ctypes.data == jbuf.ctypes.data else None
            return r, J, stacked

        sol = levenberg_marquardt(fun, self.theta[idx], self.lower[idx], self.upper[idx],
                                  dof=max(self.y.size - len(idx), 1), max_nfev=cap,
                                  max_time=max(t_left, 0.5), tol=tol, progress=self.progress,
                                  stage=stage)
        self.theta[idx] = sol.theta
        self._cache = (self.theta.copy(), list(idx), sol.jac, -sol.residual)
        self._cache_normal = sol.normal  # JᵀJ of that J (None when not formed)
        self.nfev += sol.nfev
        self.njev += sol.njev
        self.last = sol
        return sol

    def chisqr(self, theta: np.ndarray | None = None) -> float:
        th = self.theta if theta is None else theta
        y, _ = self.model.evaluate(th, [], jac=False)
        self.nfev += 1
        r = y - self.y
        return float(r @ r)

    def scan(self, name: str, candidates, linear: list[str]) -> float:
        """Set ``name`` to the candidate with the lowest χ² after refitting ``linear``."""
        k = self.index(name)
        start = self.theta.copy()
        best = (math.inf, None, None)
        for c in candidates:
            self.theta = start.copy()
            self.theta[k] = c
            sol = self.run(linear, stage=f"scan {name}", max_nfev=8)
            if sol.chisqr < best[0]:
                best = (sol.chisqr, c, self.theta.copy())
        self.theta = best[2] if best[2] is not None else start
        return best[1]

    def jacobian(self, idx) -> np.ndarray:
        """J (N, len(idx)) at θ: the last run's when it was for these parameters at this θ
        (the solver's final Jacobian), else evaluated."""
        idx = [int(k) for k in idx]
        c = self._cache
        if c is not None and c[1] == idx and np.array_equal(c[0], self.theta):
            return c[2]
        _, J = self.model.evaluate(self.theta, idx, jac=True)
        self.nfev += 1
        self.njev += 1
        return J

    def covariance(self) -> tuple[np.ndarray, np.ndarray, float, float, np.ndarray]:
        """(cov (P, P) with zeros where fixed, residual, χ², error scale, free indices)."""
        idx = self.free()
        c = self._cache
        if c is not None and c[1] == idx and np.array_equal(c[0], self.theta):
            if self._cov_memo is not None and self._cov_memo[0] is c:
                cov, r, chi2, f, ix = self._cov_memo[1]
                return cov.copy(), r, chi2, f, ix.copy()
            J, r = c[2], c[3]
            A = self._cache_normal
        else:
            y, J = self.model.evaluate(self.theta, idx, jac=True)
            self.nfev += 1
            self.njev += 1
            r = self.y - y
            self._cache = (self.theta.copy(), list(idx), J, r)
            self._cache_normal = A = None
        chi2 = float(r @ r)
        dof = max(self.y.size - len(idx), 1)
        f = error_scale(r)
        if A is None:
            A = J.T @ J
        P = len(idx)
        inv = normal_inverse(A) if P else np.zeros((0, 0))
        cov = np.zeros((self.theta.size, self.theta.size))
        if P:
            cov[np.ix_(idx, idx)] = inv * (chi2 / dof) * f * f
        ix = np.array(idx, dtype=int)
        self._cov_memo = (self._cache, (cov, r, chi2, f, ix), inv)
        return cov.copy(), r, chi2, f, ix.copy()

    def normal_inverse(self) -> np.ndarray | None:
        """(JᵀJ)⁻¹ of the free parameters that the last :meth:`covariance` computed, while
        θ and the free parameters are still those (else None)."""
        m = self._cov_memo
        if m is None or m[0] is not self._cache or self._cache is None:
            return None
        c = self._cache
        if c[1] != self.free() or not np.array_equal(c[0], self.theta):
            return None
        return m[2]
