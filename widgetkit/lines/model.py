"""The windowed multi-line model and its sparse analytic Jacobian.

Each line is evaluated only inside a window ``position ± window · HWHM``
(HWHM = FWHM/2 of the line's current widths; for a pure Gaussian at most
12 HWHM, where the profile is below 1e-40 of its peak). All windows are
concatenated into one array so a single vectorised call of the shape
evaluates every line, and the model is summed back onto the grid with
:func:`numpy.bincount`. The Jacobian is assembled directly in compressed
sparse column form: columns ordered like θ (all areas, all positions, each
width kind, then the baseline), each line column non-zero only in its
window, the baseline columns dense. Window index ranges are fixed while the
solver runs (a smooth objective); the fit driver re-windows between passes.

Far wings: outside its window a line with Lorentzian wings still adds
``A gamma / (pi d²)``, a smooth offset of a few hundredths of the noise that
would bias the baseline. :meth:`WindowedModel.set_wings` evaluates every
line's far-wing form (:attr:`Shape.wing`) outside its window once, from the
current parameters, and the solver then treats it as a fixed offset; the fit
driver refreshes it between passes until it no longer changes (it depends on
the parameters only through the tiny wing itself, so one or two refreshes
suffice).

``window=None`` evaluates every line on the whole grid (the "full
evaluation" the fast path is tested against).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .baselines import Baseline
from .params import ThetaMap
from .shapes import Shape

__all__ = ["WindowedModel", "GAUSS_WINDOW_CAP", "STRUCTURED_MIN_VARS", "WINGS_EXACT_MAX",
           "FAR_WING_REACH", "COMPONENTS_DENSE_MAX"]

#: a Gaussian is evaluated at most this many HWHM from its centre
GAUSS_WINDOW_CAP = 12.0
#: the shapes are evaluated on this many window points at a time
CHUNK = 1 << 16
#: fits with more variables than this use the structured (banded) normal equations
STRUCTURED_MIN_VARS = 400
#: far wings are exact (every line on every point) up to this many line × point pairs
WINGS_EXACT_MAX = 20_000_000
#: beyond that, each far wing reaches this many window half-widths from its line
FAR_WING_REACH = 3.0
#: ``components`` is a dense array up to this many line × point pairs, sparse beyond
COMPONENTS_DENSE_MAX = 20_000_000


class WindowedModel:
    """Model ``baseline(x) + sum_i line_i(x)`` on windows, with its sparse Jacobian.

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        Data (x ascending, cm⁻¹).
    weights : ndarray or None
        Residual weights (``residual = (model - y) * weights``).
    shape : Shape
    baseline : Baseline
    x_ref : float
        Baseline axis centre.
    n_lines : int
    tmap : ThetaMap or None
        Variables -> θ (None to evaluate θ directly, as :mod:`.record` does).
    window : float or None
        Half-width of each window in HWHM; None for the full evaluation.
    """

    def __init__(self, x, y, weights, shape: Shape, baseline: Baseline, x_ref: float,
                 n_lines: int, tmap: ThetaMap | None, window: float | None):
        self.x, self.y, self.w = x, y, weights
        self.shape, self.baseline = shape, baseline
        self.u = x - x_ref
        self.n_lines, self.tmap, self.window = n_lines, tmap, window
        self.n_lp = len(shape.param_names)
        self.n_b = len(baseline.params)
        self._var_index = [] if tmap is None else [tmap.vindex[n] for n in tmap.var_names]
        self.wings = np.zeros(x.size)
        #: normal equations in banded-plus-arrowhead form (:mod:`.structured`), never dense
        self.structured = tmap is not None and len(tmap.var_names) > STRUCTURED_MIN_VARS

    # ------------------------------------------------------------- windows
    def window_ranges(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Index ranges ``[starts, ends)`` of each line's window for θ."""
        m, n = self.n_lines, self.x.size
        lp = theta[: m * self.n_lp].reshape(self.n_lp, m)
        if self.window is None:
            return np.zeros(m, dtype=int), np.full(m, n)
        hw = 0.5 * np.abs(self.shape.approx_fwhm(*np.abs(lp[2:])))
        k = self.window if self.shape.lorentz_wings else min(self.window, GAUSS_WINDOW_CAP)
        starts = np.searchsorted(self.x, lp[1] - k * hw, side="left")
        ends = np.searchsorted(self.x, lp[1] + k * hw, side="right")
        starts = np.minimum(starts, n - 1)
        return starts, np.maximum(ends, starts + 1)

    def set_windows(self, theta: np.ndarray) -> None:
        """Fix each line's window from the current θ."""
        self.set_ranges(*self.window_ranges(theta))

    def set_ranges(self, starts: np.ndarray, ends: np.ndarray) -> None:
        """Fix the windows to index ranges ``[starts, ends)`` and precompute the layout."""
        n = self.x.size
        self.starts, self.ends = starts, ends
        self._last_values = self._last_grad = self._last_normal = None
        self._pool = []
        lengths = ends - starts
        self.lengths = lengths
        total = int(lengths.sum())
        offs = np.repeat(np.cumsum(lengths) - lengths, lengths)
        self.rows = np.repeat(starts, lengths) + (np.arange(total) - offs)
        self.seg = np.repeat(np.arange(self.n_lines), lengths)
        self.X = self.x[self.rows]
        col_len = np.concatenate([np.tile(lengths, self.n_lp), np.full(self.n_b, n)])
        self.indptr = np.concatenate([[0], np.cumsum(col_len)])
        self._jac_index = None  # the Jacobian's row indices, built when first needed
        self.offsets = np.cumsum(lengths) - lengths
        order = np.argsort(starts, kind="stable")
        pairs = []
        for a, i in enumerate(order):  # windows that overlap another (i before j)
            for j in order[a + 1:]:
                if starts[j] >= ends[i]:
                    break
                pairs.append((int(i), int(j)))
        self.pairs = pairs

    def set_wings(self, theta: np.ndarray) -> float:
        """Fix the far-wing offset outside the windows from θ; return the root-sum-square
        of its change over the grid (the chi-square a fixed offset can move is at most
        its square over the noise variance, whatever the number of points).

        Exact (every line on the whole grid) while ``n_lines × n`` is at most
        :data:`WINGS_EXACT_MAX`; beyond, each wing is summed out to
        :data:`FAR_WING_REACH` window widths (see :meth:`_reach_wings`).
        """
        new = np.zeros(self.x.size)
        if self.window is not None and self.shape.wing is not None:
            lp, _ = self._split(theta)
            if self.n_lines * self.x.size > WINGS_EXACT_MAX:
                new = self._reach_wings(lp)
            else:
                for i in range(self.n_lines):
                    w = self.shape.wing(self.x, *lp[:, i])
                    w[self.starts[i]:self.ends[i]] = 0.0
                    new += w
        change = float(np.sqrt(np.sum((new - self.wings) ** 2))) if new.size else 0.0
        self.wings = new
        return change

    def _reach_wings(self, lp: np.ndarray) -> np.ndarray:
        """Far wings out to ``FAR_WING_REACH`` × the window on either side, vectorised.

        A 1/d² wing beyond R half widths is below 1/R² of its line's peak; the
        neglected tail of all lines, spaced s half widths apart, is at most
        about peak / (s R) on either side (3e-5 of the peak for the default
        window, R = 300 HWHM, and lines s = 100 HWHM apart): a smooth offset
        that the baseline takes up.
        """
        n = self.x.size
        hw = 0.5 * np.abs(self.shape.approx_fwhm(*np.abs(lp[2:])))
        reach = FAR_WING_REACH * self.window * hw
        fs = np.searchsorted(self.x, lp[1] - reach, side="left")
        fe = np.searchsorted(self.x, lp[1] + reach, side="right")
        out = np.zeros(n)
        segs = [(fs, np.maximum(self.starts, fs)), (np.minimum(self.ends, fe), fe)]
        for a, b in segs:
            lengths = np.maximum(b - a, 0)
            step = max(1, int(CHUNK // max(1, int(lengths.max(initial=1)))))
            for c0 in range(0, self.n_lines, step):  # chunks bound the memory
                sl = slice(c0, c0 + step)
                ln = lengths[sl]
                total = int(ln.sum())
                if total == 0:
                    continue
                offs = np.repeat(np.cumsum(ln) - ln, ln)
                idx = np.repeat(a[sl], ln) + (np.arange(total) - offs)
                seg = np.repeat(np.arange(c0, c0 + ln.size), ln)
                out += np.bincount(idx, self.shape.wing(self.x[idx], *lp[:, seg]), minlength=n)
        return out

    @property
    def nnz(self) -> int:
        """Stored entries of the Jacobian of θ."""
        return int(self.indptr[-1])

    # ------------------------------------------------------------- evaluation
    def _split(self, theta):
        m = self.n_lines
        lp = theta[: m * self.n_lp].reshape(self.n_lp, m)
        return lp, theta[m * self.n_lp:]

    def _chunks(self):
        """Slices of the concatenated windows, :data:`CHUNK` points each: the shapes'
        temporaries stay small (reused memory, no fresh pages per evaluation)."""
        total = self.X.size
        return [slice(a, min(a + CHUNK, total)) for a in range(0, total, CHUNK)]

    def _full_on_windows(self, lp: np.ndarray) -> np.ndarray:
        """Profile and its derivatives on every window, (1 + n_lp, total points), chunk by
        chunk into a buffer that no kept result uses (at most three exist)."""
        shape = (1 + self.n_lp, self.X.size)
        held = [c[2] for c in (self._last_grad, self._last_values)
                if c is not None and c[2] is not None]
        free = [b for b in self._pool if b.shape == shape and all(b is not h for h in held)]
        buf = free[0] if free else np.empty(shape)
        self._pool = [buf] + [h for h in held if h is not buf]
        for sl in self._chunks():
            buf[:, sl] = self.shape.gradient(self.X[sl], *lp[:, self.seg[sl]])
        return buf

    def _same(self, cached, lp) -> bool:
        return cached is not None and cached[0].shape == lp.shape and np.array_equal(cached[0], lp)

    def window_gradient(self, lp: np.ndarray) -> np.ndarray:
        """d line / d (area, position, widths) on every window, (n_lp, total points).

        A structured model evaluates the derivatives with every model value
        (:meth:`window_values`), so the accepted point of a step has them ready."""
        if self._same(self._last_grad, lp):
            return self._last_grad[1]
        full = self._full_on_windows(lp)
        self._last_grad = (lp.copy(), full[1:], full)
        return full[1:]

    def window_values(self, theta: np.ndarray) -> np.ndarray:
        """Every line on its window (concatenated); the last result is kept, so the
        model, its residual and the components at one θ evaluate the shapes once."""
        lp, _ = self._split(theta)
        if self._same(self._last_values, lp):
            return self._last_values[1]
        full = None
        if self.structured:  # the derivatives too: the next normal equations need them
            full = self._full_on_windows(lp)
            self._last_grad = (lp.copy(), full[1:], full)
            vals = full[0]
        else:
            vals = np.empty(self.X.size)
            for sl in self._chunks():
                vals[sl] = self.shape.profile(self.X[sl], *lp[:, self.seg[sl]])
        self._last_values = (lp.copy(), vals, full)
        return vals

    def evaluate(self, theta: np.ndarray) -> np.ndarray:
        """Model values on ``x``."""
        _, bc = self._split(theta)
        vals = self.window_values(theta)
        return (self.baseline.evaluate(self.u, bc) + self.wings
                + np.bincount(self.rows, vals, minlength=self.x.size))

    def components(self, theta: np.ndarray):
        """Each line on ``x`` (its far wing outside its window), shape (n_lines, n).

        Dense while ``n_lines × n`` is at most :data:`COMPONENTS_DENSE_MAX`;
        beyond, a sparse array (``scipy.sparse.csr_array``) holding each line
        inside its window only (far wings left out), so that memory stays
        linear in the number of lines.
        """
        if self.n_lines * self.x.size > COMPONENTS_DENSE_MAX:
            from .structured import components

            return components(self, theta)
        lp, _ = self._split(theta)
        vals = self.window_values(theta)
        out = np.zeros((self.n_lines, self.x.size))
        if self.window is not None and self.shape.wing is not None:
            for i in range(self.n_lines):
                out[i] = self.shape.wing(self.x, *lp[:, i])
        out[self.seg, self.rows] = vals  # inside its window a line is evaluated exactly
        return out

    def _jacobian_index(self):
        """Row index of every stored Jacobian entry and the weights there (built once per
        set of windows; a structured fit never needs them)."""
        if self._jac_index is None:
            n = self.x.size
            indices = np.concatenate([np.tile(self.rows, self.n_lp),
                                      np.tile(np.arange(n), self.n_b)])
            self._jac_index = (indices, None if self.w is None else self.w[indices])
        return self._jac_index

    def theta_jacobian(self, theta: np.ndarray) -> sp.csc_array:
        """d model / d θ, sparse (n, len(θ)), weighted like the residual."""
        lp, bc = self._split(theta)
        g = self.shape.gradient(self.X, *lp[:, self.seg])
        parts = [g[1:].ravel()]
        if self.n_b:
            parts.append(self.baseline.gradient(self.u, bc)[1:].ravel())
        data = np.concatenate(parts)
        indices, w_at = self._jacobian_index()
        if w_at is not None:
            data = data * w_at
        return sp.csc_array((data, indices, self.indptr),
                            shape=(self.x.size, self.n_lines * self.n_lp + self.n_b))

    def normal_blocks(self, theta: np.ndarray, r: np.ndarray):
        """The non-zero blocks of ``J_θ^T J_θ`` and ``J_θ^T r`` from the window structure.

        A line's block with itself is a sum over its window, with another line a
        sum over the overlap of two windows, with the baseline a sum over its
        window. Returns ``(diag, pairs, lb, bb, gt)``: ``diag[a][b - a]`` the
        (a, b) entries of every line's own block (a ≤ b, length n_lines each),
        ``pairs`` a list of ``(i, j, block)`` for overlapping windows,
        ``lb`` (n_lines·n_lp, n_b) the line–baseline block, ``bb`` the baseline
        block and ``gt`` the gradient (θ order).
        """
        lp, bc = self._split(theta)
        m, npar, nb = self.n_lines, self.n_lp, self.n_b
        G = self.window_gradient(lp)
        B = self.baseline.gradient(self.u, bc)[1:] if nb else np.zeros((0, self.x.size))
        if self.w is not None:
            G = G * self.w[self.rows]
            B = B * self.w
        gt = np.zeros(m * npar + nb)
        starts = self.offsets
        tmp = np.empty(G.shape[1])  # one product at a time, reduced per window

        def window_sums(a, other):
            return np.add.reduceat(np.multiply(G[a], other, out=tmp), starts)

        r_at = r[self.rows]
        gt[: m * npar] = np.concatenate([window_sums(a, r_at) for a in range(npar)])
        diag = [np.stack([window_sums(a, G[b]) for b in range(a, npar)]) for a in range(npar)]
        pairs = []
        for i, j in self.pairs:
            lo, hi = self.starts[j], min(self.ends[i], self.ends[j])
            gi = G[:, self.offsets[i] + lo - self.starts[i]: self.offsets[i] + hi - self.starts[i]]
            gj = G[:, self.offsets[j]: self.offsets[j] + hi - lo]
            pairs.append((i, j, gi @ gj.T))
        lb = np.zeros((m * npar, nb))
        for c in range(nb):
            b_at = B[c][self.rows]
            lb[:, c] = np.concatenate([window_sums(a, b_at) for a in range(npar)])
        if nb:
            gt[m * npar:] = B @ r
        return diag, pairs, lb, B @ B.T, gt

    def normal_equations(self, v: np.ndarray, r: np.ndarray):
        """``J^T J`` and ``J^T r`` of the variables without forming ``J``.

        Dense (n_vars × n_vars) for small fits; with :attr:`structured` set an
        :class:`~.banded.ArrowSystem` (banded lines plus global rows, never
        dense; :mod:`.structured`). Equal to the products of
        :meth:`jacobian_vec` (tested).
        """
        if self.structured:
            from .structured import normal_equations

            return normal_equations(self, v, r)
        theta = self.tmap.values(v)
        m, npar, nb = self.n_lines, self.n_lp, self.n_b
        diag, pairs, lb, bb, gt = self.normal_blocks(theta, r)
        nt = m * npar + nb
        H = np.zeros((nt, nt))
        idx = np.arange(m)
        for a in range(npar):
            for k, b in enumerate(range(a, npar)):
                H[a * m + idx, b * m + idx] = diag[a][k]
                H[b * m + idx, a * m + idx] = diag[a][k]
        for i, j, blk in pairs:
            H[np.ix_(i + m * np.arange(npar), j + m * np.arange(npar))] = blk
            H[np.ix_(j + m * np.arange(npar), i + m * np.arange(npar))] = blk.T
        if nb:
            H[: m * npar, m * npar:] = lb
            H[m * npar:, : m * npar] = lb.T
            H[m * npar:, m * npar:] = bb
        if self.tmap.identity:
            return H, gt
        D = self.tmap.jacobian(v).toarray()
        return D.T @ H @ D, D.T @ gt

    # ------------------------------------------------------------- lmfit hooks
    def variables(self, params) -> np.ndarray:
        """Variable values from lmfit Parameters, in ``tmap.var_names`` order."""
        return np.array([params[n].value for n in self.tmap.var_names], dtype=float)

    def residual_vec(self, v: np.ndarray) -> np.ndarray:
        """``(model - y) * weights`` for variable values ``v``."""
        r = self.evaluate(self.tmap.values(v)) - self.y
        return r if self.w is None else r * self.w

    def jacobian_vec(self, v: np.ndarray) -> sp.csc_array:
        """d residual / d variables at ``v``, sparse (n, n_vars)."""
        jt = self.theta_jacobian(self.tmap.values(v))
        if self.tmap.identity:
            return jt
        if self.tmap.simple:
            return jt[:, self.tmap._sel_rows[np.argsort(self.tmap._sel_cols)]]
        return (jt @ self.tmap.jacobian(v)).tocsc()

    def residual(self, params) -> np.ndarray:
        """``(model - y) * weights`` for lmfit Parameters."""
        return self.residual_vec(self.variables(params))

    def jacobian(self, params) -> sp.csc_array:
        """d residual / d variables for lmfit Parameters, sparse (n, n_varying).

        Columns follow the parameters varying now (``lmfit.conf_interval``
        fixes one at a time).
        """
        jac = self.jacobian_vec(self.variables(params))
        vary = [k for k, n in enumerate(self.tmap.var_names) if params[n].vary]
        return jac if len(vary) == len(self.tmap.var_names) else jac[:, vary]
