"""Standard errors when the residual is structured rather than noise (private).

A band model that misses something (a digitiser's extra smoothing, a wrong instrument
shape or width, a Lorentzian width held wrong) leaves a residual whose neighbouring points
move together. The points are then not independent, and s²(JᵀJ)⁻¹ understates the
uncertainty. Two corrections are applied, both only when the engine's autocorrelation test
(:func:`.engine.error_scale`) finds the residual correlated, so that white-noise residuals
keep their plain standard errors:

* the scalar factor f of the engine: the residual's long-run variance over its variance
  (an effective number of independent points N/f²), the same for every parameter;
* a per-parameter factor g_j from the heteroskedasticity-and-autocorrelation-consistent
  ("sandwich") covariance of Newey and West (1987), Econometrica 55, 703–708,
  C = (JᵀJ)⁻¹ S (JᵀJ)⁻¹ · N/(N − P) with S = Σ_{|k|<L} (1 − |k|/L) Σ_i s_i s_{i+k}ᵀ the
  Bartlett-weighted autocovariance of the scores s_i = J_i r_i. The Bartlett sum equals
  the overlapping block sums of the scores, S = (1/L) Σ_t m_t m_tᵀ with m_t the sum of
  s over the window t … t+L−1 (zero outside the data), which is how it is computed here
  (the window sums are differences of the running sum of the scores, projected once on
  (JᵀJ)⁻¹: O(N P²) once, then O(N P) for each L; see :func:`block_variances`). The block
  length L is not guessed: as in the blocking analysis of correlated data of Flyvbjerg and
  Petersen (1989), J. Chem. Phys. 91, 461–466, the variance is computed for L = 1, 2, 4, …
  up to N/8 (at least eight blocks) and the largest value is taken: it grows with L until
  the blocks outlast the correlation and then levels off or falls (the scores of a
  least-squares fit sum to zero over the whole data, so at L ≈ N every estimate goes to
  zero).

Each free parameter's standard error is multiplied by h_j = max(f, g_j) (never below the
plain error); the correlation matrix is kept. The result says so (``BandFit.error_factors``,
``structured_residual`` and a message). What the widening cannot see: the part of a model
mismatch that the fit absorbed into the parameters themselves (the scores sum to zero);
a strongly structured residual still makes the result doubtful.
"""

from __future__ import annotations

import math

import numpy as np

from .solver import normal_inverse

__all__ = ["block_variances", "widen"]


def _edge_sums(w: np.ndarray, L_max: int) -> tuple[np.ndarray, ...]:
    """Running sums over the first and last ``L_max`` columns of ``w`` (P, N + 1), entry
    L − 1 for block length L: Σ_{i<L} w_i², Σ_{i>N−L} w_i², Σ_{0<t<L} (w_t − w_0)² and
    Σ_{N−L<t<N} (w_N − w_t)² (the windows that begin before the data and that end after it)."""
    head, tail = w[:, :L_max], w[:, ::-1][:, :L_max]  # tail: w_N, w_{N−1}, …
    return (np.cumsum(head * head, axis=1), np.cumsum(tail * tail, axis=1),
            np.cumsum(np.square(head - head[:, :1]), axis=1),
            np.cumsum(np.square(tail - tail[:, :1]), axis=1))


def _projected_running_sum(J: np.ndarray, r: np.ndarray, bread: np.ndarray) -> np.ndarray:
    """w (P, N + 1): w_0 = 0, w_t = Σ_{i<t} (JᵀJ)⁻¹ J_i r_i, centred on its mean (one array
    written in place)."""
    N, P = J.shape
    w = np.empty((P, N + 1))
    body = w[:, 1:]
    np.matmul(bread.T, J.T, out=body)
    body *= r
    w[:, 0] = 0.0
    np.cumsum(body, axis=1, out=body)
    w -= w.mean(axis=1, keepdims=True)
    return w


def block_variances(J: np.ndarray, r: np.ndarray, bread: np.ndarray | None = None) -> np.ndarray:
    """The largest Newey–West variance of each parameter over block lengths 1, 2, 4, …, N/8
    (the module notes). ``J`` (N, P) the Jacobian of the free parameters, ``r`` (N,) the
    residual at the solution; ``bread`` (JᵀJ)⁻¹ when the caller has it.

    With c the running sum of the scores (c_0 = 0, c_N their total) and w = c (JᵀJ)⁻¹, the
    window sums projected on (JᵀJ)⁻¹ are differences of w: w_{t+L} − w_t inside the data,
    w_t − w_0 for the L − 1 windows that begin before it and w_N − w_t for those that end
    after it. Their sum of squares inside is Σ w_{t+L}² + Σ w_t² − 2 Σ w_{t+L} w_t (the
    first two are Σ w² less the first or last L terms, from running sums over the ends):
    dot products only, O(N P) for each L, no array written; the lag products of one
    parameter are taken together, while its row of w is in the processor's cache. w is
    first centred (the differences do not change); the cancellation in that sum then costs
    about five of the sixteen digits (1e-11 relative to the direct sums in tests with 5·10⁴
    points; ample for a factor on an error)."""
    J = np.asarray(J, dtype=float)
    r = np.asarray(r, dtype=float)
    N, P = J.shape
    if P == 0 or N < 16:
        return np.zeros(P)
    bread = normal_inverse(J.T @ J) if bread is None else bread
    w = _projected_running_sum(J, r, bread)
    lengths = [1 << k for k in range(max(N // 8, 1).bit_length()) if 1 << k <= N // 8]
    best = np.zeros(P)
    if not lengths:
        return best
    total = np.empty(P)
    lag = np.empty((P, len(lengths)))
    for j in range(P):
        row = w[j]
        total[j] = np.dot(row, row)
        for i, L in enumerate(lengths):
            lag[j, i] = np.dot(row[L:], row[:N + 1 - L])
    first, last, before, after = _edge_sums(w, lengths[-1])
    dof = N / max(N - P, 1)
    for i, L in enumerate(lengths):
        k = L - 1
        inside = (2.0 * total - first[:, k] - last[:, k] - 2.0 * lag[:, i] + before[:, k]
                  + after[:, k])
        best = np.maximum(best, inside * (dof / L))
    return best


def widen(cov: np.ndarray, idx: np.ndarray, f: float, J: np.ndarray | None, r: np.ndarray,
          names: list[str], bread: np.ndarray | None = None) -> tuple[np.ndarray, dict[str, float]]:
    """Widen the covariance ``cov`` (P_all, P_all; already scaled by f²) of the free
    parameters ``idx``: returns (covariance, {name: factor}) with factor h_j of the module
    notes for every free parameter, or ``cov`` unchanged and {} when f = 1 (residual not
    found correlated) or there is no Jacobian. ``bread``: (JᵀJ)⁻¹ of the free parameters
    when the caller has it (else computed)."""
    if not f > 1.0 or J is None or len(idx) == 0:
        return cov, {}
    idx = np.asarray(idx, dtype=int)
    plain = np.diag(cov)[idx] / (f * f)  # s² (JᵀJ)⁻¹, the white-noise variances
    var = block_variances(J, r, bread)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.sqrt(np.where(plain > 0, var / plain, 0.0))
    g = np.where(np.isfinite(g), g, 0.0)
    h = np.maximum(g, f)
    # rescale rows and columns: each error × h_j / f (cov already holds f), correlations kept
    d = np.ones(cov.shape[0])
    d[idx] = h / f
    out = cov * np.outer(d, d)
    return out, {names[k]: float(v) for k, v in zip(idx, h, strict=True) if math.isfinite(v)}
