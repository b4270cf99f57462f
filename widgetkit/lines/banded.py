"""Normal equations with a banded block and a few dense rows: solve and covariance in O(n b²).

A line fit's ``J^T J`` has a structure that a dense matrix throws away. Ordered
line by line along the spectrum, a line's variables (area, position, its own
widths) meet only the variables of lines whose windows overlap its own, so
that part of the matrix is *banded*. A few *global* variables (baseline
coefficients, shared widths, a variable that ties several lines) meet
everything: they form the dense last rows and columns of an "arrowhead"

    H = [[A, B],      A: banded, bandwidth b (n_loc × n_loc)
         [Bᵀ, C]]     B: n_loc × g, C: g × g, g small.

:class:`ArrowSystem` factors ``A`` by banded Cholesky
(:func:`scipy.linalg.cholesky_banded`) and the globals through the Schur
complement ``S = C - Bᵀ A⁻¹ B``; time O(n b² + n b g + n g²), memory
O(n (b + g)). No n × n matrix is ever formed.

:class:`ArrowCovariance` is the inverse restricted to what uncertainties need:
the entries of ``A⁻¹`` inside the band (the selected inverse, from the
Cholesky factor by the backward recurrence of Takahashi, Fagan and Chin,
Proc. 8th PICA Conference, 1973; also Rue & Martino, J. Stat. Plan. Inference
137 (2007) 3177, eq. 2.9), corrected by the low-rank global part
``A⁻¹ B S⁻¹ Bᵀ A⁻¹``, and every row and column of a global variable. Entries
between two local variables further apart than the band are *not computed*
(:meth:`ArrowCovariance.entries` returns NaN for them); a line fit never needs
them, because every parameter depends only on its own line's variables and the
globals.

Singular or nearly singular matrices (a variable the data does not determine)
are handled like a pseudo-inverse: a small ridge, on the matrix scaled to unit
diagonal, is added until the factorisation succeeds, which leaves such
directions (whose gradient is zero too) alone.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp

__all__ = ["ArrowSystem", "ArrowCovariance", "RIDGES"]

#: ridges tried (on the unit-diagonal matrix) when the plain factorisation fails
RIDGES = (0.0, 1e-12, 1e-10, 1e-8, 1e-6, 1e-4)
#: a plain Cholesky factor with a smaller diagonal counts as singular (as the dense solver)
_MIN_PIVOT = 1e-6


@dataclass
class _Factor:
    cb: np.ndarray        # banded Cholesky factor of A (lower form)
    W: np.ndarray         # A⁻¹ B
    cs: np.ndarray        # Cholesky factor of the Schur complement (lower)
    ridge: float


class ArrowSystem:
    """A symmetric positive semi-definite matrix in banded-plus-arrowhead form.

    Parameters
    ----------
    H : sparse array, shape (n, n)
        The symmetric matrix, variables in their own order.
    order : ndarray of int, shape (n,)
        Permutation (new -> old): the ``n_loc`` local variables first, along the
        band, then the globals.
    n_loc : int
        Number of local variables.
    min_band : int
        Smallest bandwidth to keep (a line's own variables must stay inside it).
    """

    def __init__(self, H, order: np.ndarray, n_loc: int, min_band: int = 0):
        n = H.shape[0]
        self.n, self.n_loc, self.order = n, int(n_loc), np.asarray(order, dtype=int)
        self.inv = np.empty(n, dtype=int)
        self.inv[self.order] = np.arange(n)
        coo = sp.coo_array(H)
        coo.sum_duplicates()
        r, c, val = self.inv[coo.row], self.inv[coo.col], coo.data
        nl = self.n_loc
        self.diag = np.zeros(n)
        on = coo.row == coo.col
        np.add.at(self.diag, coo.row[on], val[on])
        low = (r < nl) & (c < nl) & (r >= c)
        self.bw = max(int(np.max(r[low] - c[low])) if np.any(low) else 0, int(min_band))
        self.band = np.zeros((self.bw + 1, nl))
        np.add.at(self.band, (r[low] - c[low], c[low]), val[low])
        g = n - nl
        self.B = np.zeros((nl, g))
        lg = (r < nl) & (c >= nl)
        np.add.at(self.B, (r[lg], c[lg] - nl), val[lg])
        self.C = np.zeros((g, g))
        gg = (r >= nl) & (c >= nl)
        np.add.at(self.C, (r[gg] - nl, c[gg] - nl), val[gg])
        #: line of each variable (-1 global), set by whoever knows the lines
        self.line_of = None

    @property
    def shape(self):
        return (self.n, self.n)

    # ------------------------------------------------------------ factorisation
    def _scaled(self, free: np.ndarray, lam):
        """Unit-diagonal parts (held variables -> identity rows), damped by ``lam``
        (a number, or one per variable)."""
        d = np.sqrt(np.maximum(self.diag, 1e-300))[self.order]
        fp = free[self.order]
        lam = np.broadcast_to(np.asarray(lam, dtype=float), (self.n,))[self.order]
        nl, bw = self.n_loc, self.bw
        ds, fl = d[:nl], fp[:nl]
        ab = self.band.copy()
        for k in range(bw + 1):
            ok = fl[: nl - k] & fl[k:]
            ab[k, : nl - k] = np.where(ok, ab[k, : nl - k] / (ds[: nl - k] * ds[k:]), 0.0)
            ab[k, nl - k:] = 0.0
        ab[0] = np.where(fl, ab[0] + lam[:nl], 1.0)
        dg, fg = d[nl:], fp[nl:]
        B = self.B / np.outer(ds, dg) * np.outer(fl, fg)
        C = self.C / np.outer(dg, dg) * np.outer(fg, fg)
        C[np.diag_indices_from(C)] = np.where(fg, np.diag(C) + lam[nl:], 1.0)
        return d, fp, ab, B, C

    def _factor(self, ab, B, C, strict: bool) -> _Factor | None:
        for ridge in RIDGES:
            try:
                a = ab.copy()
                a[0] += ridge
                cb = sla.cholesky_banded(a, lower=True, check_finite=False)
                W = sla.cho_solve_banded((cb, True), B, check_finite=False) if B.size else B
                S = C - B.T @ W
                S[np.diag_indices_from(S)] += ridge
                cs = np.linalg.cholesky(S) if S.size else S
            except (np.linalg.LinAlgError, ValueError):
                continue
            if not (np.all(np.isfinite(cb)) and np.all(np.isfinite(W))
                    and np.all(np.isfinite(cs))):
                return None  # NaN or infinity in the matrix: no ridge helps
            if ridge == 0.0 and strict:
                piv = np.concatenate([cb[0], np.diag(cs)]) if cs.size else cb[0]
                if piv.size and np.min(np.abs(piv)) <= _MIN_PIVOT:
                    continue
            return _Factor(cb, W, cs, ridge)
        return None

    @staticmethod
    def _apply(f: _Factor, rhs: np.ndarray, nl: int) -> np.ndarray:
        """Solve with the factored (scaled, permuted) matrix."""
        rl, rg = rhs[:nl], rhs[nl:]
        al = sla.cho_solve_banded((f.cb, True), rl, check_finite=False)
        if rg.size == 0:
            return al
        xg = sla.cho_solve((f.cs, True), rg - f.W.T @ rl, check_finite=False)
        return np.concatenate([al - f.W @ xg, xg])

    def solve(self, g: np.ndarray, free: np.ndarray, lam=0.0):
        """Step ``-H⁻¹ g`` over the free variables (held ones stay put) and ``gᵀ H⁻¹ g``.

        ``lam`` damps the unit-diagonal matrix (Levenberg–Marquardt), one number
        or one per variable. Returns
        ``(step, predicted reduction, ridge used)``; if no ridge makes the matrix
        factorable (it holds NaN or infinity), step zero and reduction and ridge
        infinite, so that nobody takes it for a converged point.
        """
        step = np.zeros(self.n)
        if not np.any(free):
            return step, 0.0, 0.0
        d, fp, ab, B, C = self._scaled(np.asarray(free, dtype=bool), lam)
        f = self._factor(ab, B, C, strict=bool(np.all(np.asarray(lam) == 0.0)))
        if f is None:
            return step, np.inf, np.inf
        rhs = np.where(fp, g[self.order] / d, 0.0)
        x = self._apply(f, rhs, self.n_loc)
        step[self.order] = -x / d
        return step, float(rhs @ x), f.ridge

    # ------------------------------------------------------------- covariance
    def covariance(self) -> ArrowCovariance | None:
        """The inverse, as far as uncertainties need it (None if not factorable)."""
        d, _, ab, B, C = self._scaled(np.ones(self.n, dtype=bool), 0.0)
        f = self._factor(ab, B, C, strict=False)
        if f is None:
            return None
        sig = selected_inverse(f.cb)
        if C.size:
            sinv = sla.cho_solve((f.cs, True), np.eye(C.shape[0]), check_finite=False)
        else:
            sinv = np.zeros((0, 0))
        return ArrowCovariance(self.order, self.inv, d, self.n_loc, sig, f.W, sinv, f.ridge)


def selected_inverse(cb: np.ndarray) -> np.ndarray:
    """Entries of ``A⁻¹`` inside the band, from the lower banded Cholesky factor of ``A``.

    Returns ``sig`` with ``sig[r, j] = (A⁻¹)[j + r, j]`` (lower banded form).
    Backward recurrence over ``A = L̃ D L̃ᵀ`` (``L̃`` unit lower):
    ``Σ_ij = δ_ij / D_i - Σ_{k>i} L̃_ki Σ_kj``; every ``Σ_kj`` needed lies in
    the band. O(n b²) time, O(n b) memory.
    """
    b, n = cb.shape[0] - 1, cb.shape[1]
    piv = cb[0]
    lt = cb[1:] / piv
    for r in range(1, b + 1):
        lt[r - 1, n - r:] = 0.0
    dinv = 1.0 / piv**2
    sig = np.zeros((b + 1, n))
    M = np.zeros((b + 1, b + 1))  # Σ on [i+1, i+b+1], zero beyond n
    for i in range(n - 1, -1, -1):
        lv = lt[:, i]
        s = -(M[:b, :b] @ lv)
        new = np.empty_like(M)
        new[1:, 1:] = M[:b, :b]
        new[0, 0] = dinv[i] - lv @ s
        new[0, 1:] = s
        new[1:, 0] = s
        M = new
        sig[0, i] = new[0, 0]
        sig[1:, i] = s
    return sig


class ArrowCovariance:
    """Selected entries of the inverse of an :class:`ArrowSystem` (see module docstring)."""

    def __init__(self, order, inv, d, n_loc, sig, W, sinv, ridge):
        self.order, self.inv, self.d, self.n_loc = order, inv, d, n_loc
        self.sig, self.W, self.sinv, self.ridge = sig, W, sinv, ridge
        self.WS = W @ sinv
        self.n = order.size
        self.bw = sig.shape[0] - 1

    def entries(self, a, b) -> np.ndarray:
        """``cov[a, b]`` for index arrays (broadcast), variables in their own order.

        NaN for two local variables further apart than the band (not computed).
        """
        a, b = np.broadcast_arrays(np.asarray(a, dtype=int), np.asarray(b, dtype=int))
        pa, pb = self.inv[a], self.inv[b]
        nl = self.n_loc
        out = np.full(pa.shape, np.nan)
        la, lb = pa < nl, pb < nl
        both = la & lb
        if np.any(both):
            lo, hi = np.minimum(pa[both], pb[both]), np.maximum(pa[both], pb[both])
            diff = hi - lo
            inside = diff <= self.bw
            val = np.full(lo.shape, np.nan)
            val[inside] = self.sig[diff[inside], lo[inside]]
            val += np.einsum("ij,ij->i", self.WS[pa[both]], self.W[pb[both]])
            out[both] = val
        one = la ^ lb
        if np.any(one):
            pl = np.where(la, pa, pb)[one]
            pg = np.where(la, pb, pa)[one] - nl
            out[one] = -self.WS[pl, pg]
        gl = ~la & ~lb
        if np.any(gl):
            out[gl] = self.sinv[pa[gl] - nl, pb[gl] - nl]
        out = _unscaled(out, self.d[pa], self.d[pb], np.asarray(pa) == np.asarray(pb))
        return out[()] if out.ndim == 0 else out

    def band_diagonal(self, r: int) -> np.ndarray:
        """``cov`` between local variables ``j + r`` and ``j`` along the band (permuted
        order), j = 0 … n_loc − r − 1: diagonal ``r`` of the band, from slices (no
        gathered copies of the global rows: with hundreds of globals those were gigabytes)."""
        nl = self.n_loc
        val = self.sig[r, : nl - r].copy()
        if self.W.shape[1]:
            val += np.einsum("ij,ij->i", self.WS[r:nl], self.W[: nl - r])
        d = self.d[:nl]
        return _unscaled(val, d[r:], d[: nl - r], np.full(val.shape, r == 0))

    def diagonal(self) -> np.ndarray:
        """Variances, variables in their own order."""
        k = np.arange(self.n)
        return self.entries(k, k)

    def to_sparse(self) -> sp.csr_array:
        """The computed entries as a sparse (n, n) array, variables in their own order:
        every pair of local variables within the band, every row and column of a global."""
        nl, bw, n = self.n_loc, self.bw, self.n
        rows, cols, vals = [], [], []
        for r in range(bw + 1):
            j = np.arange(nl - r)
            v = self.band_diagonal(r)
            rows += [j + r, j] if r else [j]
            cols += [j, j + r] if r else [j]
            vals += [v, v] if r else [v]
        gidx = np.arange(nl, n)
        if gidx.size:
            allk = np.arange(n)
            gr = [np.repeat(gidx, n), np.tile(allk[:nl], gidx.size)]
            gc = [np.tile(allk, gidx.size), np.repeat(gidx, nl)]
            rows += gr
            cols += gc
            vals.append(self.entries(self.order[np.concatenate(gr)],
                                     self.order[np.concatenate(gc)]))
        a = self.order[np.concatenate(rows)]
        b = self.order[np.concatenate(cols)]
        return sp.csr_array((np.concatenate(vals), (a, b)), shape=(n, n))


def _unscaled(out: np.ndarray, da: np.ndarray, db: np.ndarray, same: np.ndarray) -> np.ndarray:
    """Covariances of the unit-diagonal matrix back in the variables' units. A variable the
    data hardly touch (a zero Jacobian column at a stopped fit) has a scale near 0: its
    variance overflows; it is kept enormous and its covariances 0, as in
    lines._lmfit_sparse.inverse_normal. NaN stays ("not computed")."""
    with np.errstate(over="ignore", divide="ignore", invalid="ignore"):
        out = np.asarray(out / (da * db))
    bad = np.isinf(out)
    if np.any(bad):
        out = np.where(bad, np.where(same, 1e300, 0.0), out)
    return out
