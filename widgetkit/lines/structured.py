"""Large line fits without a dense matrix: normal equations, covariance, derived errors.

A fit of many lines has one block of variables per line (area, position, its
widths) and a few variables shared by many lines (baseline coefficients,
shared widths, a variable other parameters are tied to). Here:

* :func:`normal_equations` assembles ``J^T J`` sparse from the window
  products of :meth:`~.model.WindowedModel.normal_blocks` and returns it as
  an :class:`~.banded.ArrowSystem`: the variables that touch one line only
  ("local"), ordered by line along the spectrum, form a banded block; the
  others ("global") the arrowhead;
* :func:`covariance` gives the selected inverse (:class:`~.banded.ArrowCovariance`);
* :class:`ParameterCovariance` carries it through the constraint expressions
  to every parameter (variables, fixed and tied), entry by entry, for
  :mod:`.derived`;
* :func:`components` returns each line alone as a sparse array.

Time and memory grow linearly with the number of lines (times the square of
the number of neighbours a window overlaps). Lines whose windows overlap no
other line's and that share no variable form independent blocks of the band:
the factorisation treats them separately at no extra cost.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .banded import ArrowCovariance, ArrowSystem

__all__ = ["normal_equations", "layout", "covariance", "ParameterCovariance", "components",
           "blocks", "wide_lines", "band_cost", "WIDE_MAX"]

#: most lines whose variables are moved to the globals for being wide (:func:`wide_lines`)
WIDE_MAX = 200
#: a multiply-add of the banded solve for the globals' columns against one of the banded
#: factorisation (:func:`band_cost`)
SOLVE_WEIGHT = 16.0


def theta_normal(model, theta: np.ndarray, r: np.ndarray) -> tuple[sp.csr_array, np.ndarray]:
    """``J_θ^T J_θ`` (sparse, θ order) and ``J_θ^T r``."""
    m, npar, nb = model.n_lines, model.n_lp, model.n_b
    diag, pairs, lb, bb, gt = model.normal_blocks(theta, r)
    rows, cols, vals = [], [], []
    idx = np.arange(m)
    for a in range(npar):
        for k, b in enumerate(range(a, npar)):
            rows.append(a * m + idx)
            cols.append(b * m + idx)
            vals.append(diag[a][k])
            if b != a:
                rows.append(b * m + idx)
                cols.append(a * m + idx)
                vals.append(diag[a][k])
    if pairs:
        ii = np.array([p[0] for p in pairs])
        jj = np.array([p[1] for p in pairs])
        blk = np.stack([p[2] for p in pairs])  # (n_pairs, npar, npar)
        ar = np.arange(npar)
        ri = (ar[None, :, None] * m + ii[:, None, None]) + 0 * ar[None, None, :]
        cj = (ar[None, None, :] * m + jj[:, None, None]) + 0 * ar[None, :, None]
        rows += [ri.ravel(), cj.ravel()]
        cols += [cj.ravel(), ri.ravel()]
        vals += [blk.ravel(), blk.ravel()]
    if nb:
        lr = np.repeat(np.arange(m * npar), nb)
        lc = np.tile(m * npar + np.arange(nb), m * npar)
        rows += [lr, lc]
        cols += [lc, lr]
        vals += [lb.ravel(), lb.ravel()]
        br, bcl = np.meshgrid(np.arange(nb), np.arange(nb), indexing="ij")
        rows.append(m * npar + br.ravel())
        cols.append(m * npar + bcl.ravel())
        vals.append(bb.ravel())
    nt = m * npar + nb
    H = sp.csr_array((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
                     shape=(nt, nt))
    return H, gt


def layout(model, D: sp.csc_array) -> tuple[np.ndarray, int, int, np.ndarray]:
    """Variable order for the band: ``(order, n_local, min_band, line_of_variable)``.

    A variable is local when every model parameter it moves belongs to one
    line that is not wide (:func:`wide_lines`); locals are ordered by their
    line's window start, then globals. ``D`` is ``dθ/dv`` (sparse, θ ×
    variables); ``line_of_variable`` is -1 for a global.
    """
    m, npar = model.n_lines, model.n_lp
    D = sp.csc_array(D)
    nt, nv = D.shape
    line_of_theta = np.where(np.arange(nt) < m * npar, np.arange(nt) % m, -1)
    lines = line_of_theta[D.indices]
    counts = np.diff(D.indptr)
    col = np.repeat(np.arange(nv), counts)
    lo = np.full(nv, np.iinfo(np.int64).max)
    hi = np.full(nv, -2)
    np.minimum.at(lo, col, lines)
    np.maximum.at(hi, col, lines)
    local = (counts > 0) & (lo == hi) & (lo >= 0)
    local &= ~wide_lines(model)[np.clip(lo, 0, max(m - 1, 0))]
    rank = np.empty(m, dtype=int)
    rank[np.argsort(model.starts, kind="stable")] = np.arange(m)
    loc = np.nonzero(local)[0]
    key = rank[lo[loc]]
    loc = loc[np.lexsort((loc, key))]
    order = np.concatenate([loc, np.nonzero(~local)[0]]).astype(int)
    per_line = np.bincount(lo[local], minlength=m) if np.any(local) else np.zeros(1, int)
    return (order, int(loc.size), int(max(per_line.max() - 1, 0)),
            np.where(local, lo, -1))


def wide_lines(model, most: int = WIDE_MAX) -> np.ndarray:
    """Lines whose variables join the globals so that the band stays narrow: the widest
    windows (by the number of other windows they overlap), as many as make the
    factorisation cheapest (:func:`band_cost`), at most ``most``.

    A broad band under narrow lines, or the long windows of strong lines in a dense
    spectrum, overlap hundreds of neighbours and set the bandwidth b of every line's
    variables: the work grows as b². Moving k of them to the arrowhead costs g² per row
    instead (g their variables). Measured on a public gas-phase survey spectrum of 1,171
    peaks: b was 1,611 variables of 4,680 and the covariance alone took 11 s."""
    m = model.n_lines
    wide = np.zeros(m, dtype=bool)
    if m < 2:
        return wide
    s_sorted, e_sorted = np.sort(model.starts), np.sort(model.ends)
    degree = (np.searchsorted(s_sorted, model.ends, side="left")
              - np.searchsorted(e_sorted, model.starts, side="right") - 1)
    by_degree = np.argsort(-degree, kind="stable")
    ks = {0, *np.unique(np.geomspace(1, max(1, min(most, m // 2)), 24).astype(int))}
    best_k, best = 0, np.inf
    for k in sorted(ks):
        keep = np.ones(m, dtype=bool)
        keep[by_degree[:k]] = False
        cost = band_cost(model.starts[keep], model.ends[keep], k, model.n_lp)
        if cost < 0.8 * best:  # a clear gain only: the fewer globals, the better otherwise
            best_k, best = k, cost
    wide[by_degree[:best_k]] = True
    return wide


def band_cost(starts: np.ndarray, ends: np.ndarray, n_wide: int, n_lp: int) -> float:
    """Work of one solve with the arrowhead (:mod:`.banded`) for these local windows and
    ``n_wide`` lines among the globals, in units of a banded factorisation's multiply-add:
    n·(b² + SOLVE_WEIGHT·b·g + g²) for n local variables, bandwidth b and g global ones.
    The banded solve for the g columns of the globals runs one column at a time:
    measured here 16 times slower a multiply-add than the factorisation (97 ms for
    n·b·g = 3.6·10⁸ against 20 ms for n·b² = 1.2·10⁹)."""
    order = np.argsort(starts, kind="stable")
    s, e = starts[order], ends[order]
    # the last local line starting inside each window sets the reach of the band
    last = np.searchsorted(s, e, side="left") - 1
    b = (int(np.max(last - np.arange(s.size))) + 1) * n_lp if s.size else 0
    g = n_wide * n_lp
    n = s.size * n_lp
    return float(n) * (b * b + SOLVE_WEIGHT * b * g + g * g) + float(g) ** 3


def normal_equations(model, v: np.ndarray, r: np.ndarray) -> tuple[ArrowSystem, np.ndarray]:
    """``J^T J`` of the variables as an :class:`ArrowSystem`, and ``J^T r``.

    The last result is kept on the model (``_last_normal``): the convergence
    test and the covariance at the solution share one assembly.
    """
    last = getattr(model, "_last_normal", None)
    if (last is not None and last[0].shape == v.shape and np.array_equal(last[0], v)
            and last[1] is model.wings and np.array_equal(last[2], r)):
        return last[3], last[4]
    theta = model.tmap.values(v)
    H, gt = theta_normal(model, theta, r)
    D = model.tmap.jacobian(v)
    if not model.tmap.identity:
        H = (D.T @ H @ D).tocsr()
        gt = D.T @ gt
    order, n_loc, min_band, line_of = layout(model, D)
    system = ArrowSystem(H, order, n_loc, min_band)
    system.line_of = line_of
    model._last_normal = (v.copy(), model.wings, r.copy(), system, np.asarray(gt))
    return system, np.asarray(gt)


def covariance(model, v: np.ndarray, r: np.ndarray | None = None
               ) -> tuple[ArrowCovariance | None, np.ndarray]:
    """Selected inverse of ``J^T J`` at ``v`` (unscaled: multiply by the reduced
    chi-square) and the line of each variable (-1 for a global). ``r``, the
    residual at ``v``, only lets a later convergence test reuse the assembly."""
    system, _ = normal_equations(model, v, np.zeros(model.x.size) if r is None else r)
    return system.covariance(), system.line_of


def blocks(model) -> np.ndarray:
    """Connected components of the window overlap graph: a block label per line.

    Lines in different blocks share no data point inside their windows (they
    may still share global variables such as the baseline)."""
    order = np.argsort(model.starts, kind="stable")
    s, e = model.starts[order], model.ends[order]
    reach = np.maximum.accumulate(e)
    new = np.r_[True, s[1:] >= reach[:-1]]
    labels = np.empty(model.n_lines, dtype=int)
    labels[order] = np.cumsum(new) - 1
    return labels


class ParameterCovariance:
    """Covariance of every parameter (variables, fixed, tied) from an :class:`ArrowCovariance`.

    ``cov[i, j]`` with integer index arrays (broadcast, as numpy's advanced
    indexing, including ``np.ix_``) gives ``Σ_ab dθ_i/dv_a C_ab dθ_j/dv_b``;
    only the entries a fit needs are computed (a parameter with itself, the
    parameters of one line with each other and with shared parameters). A
    pair of local variables outside the band gives NaN.
    """

    def __init__(self, jac: sp.csr_array, cov, scale: float = 1.0):
        self.jac = sp.csr_array(jac)
        self.cov = cov if hasattr(cov, "entries") else SparseEntries(cov)
        self.scale = float(scale)
        self.shape = (self.jac.shape[0], self.jac.shape[0])

    def __getitem__(self, key):
        i, j = np.broadcast_arrays(*(np.asarray(k, dtype=int) for k in key))
        shape = i.shape
        i, j = i.ravel(), j.ravel()
        ptr, ind, dat = self.jac.indptr, self.jac.indices, self.jac.data
        ni, nj = np.diff(ptr)[i], np.diff(ptr)[j]
        pair = np.repeat(np.arange(i.size), ni * nj)
        # for every requested pair, every (a, b) of the two rows' non-zeros
        ka = np.repeat(ptr[i], ni * nj) + _inner(ni, nj, outer=True)
        kb = np.repeat(ptr[j], ni * nj) + _inner(ni, nj, outer=False)
        vals = dat[ka] * dat[kb] * self.cov.entries(ind[ka], ind[kb])
        out = np.bincount(pair, vals, minlength=i.size) * self.scale
        out = out.reshape(shape)
        return out if out.shape else float(out)


class SparseEntries:
    """``entries(a, b)`` of a sparse covariance (absent entries read as 0)."""

    def __init__(self, covar):
        self.covar = sp.csr_array(covar)

    def entries(self, a, b) -> np.ndarray:
        a, b = np.broadcast_arrays(np.asarray(a, dtype=int), np.asarray(b, dtype=int))
        if a.size == 0:
            return np.zeros(a.shape)
        return np.asarray(self.covar[a.ravel(), b.ravel()]).reshape(a.shape)


def _inner(ni: np.ndarray, nj: np.ndarray, outer: bool) -> np.ndarray:
    """Offsets within row i (outer=True) or row j for all ni·nj combinations of each pair."""
    total = ni * nj
    start = np.repeat(np.cumsum(total) - total, total)
    k = np.arange(int(total.sum())) - start
    njr = np.repeat(np.maximum(nj, 1), total)
    return k // njr if outer else k % njr


def components(model, theta: np.ndarray) -> sp.csr_array:
    """Each line alone inside its window, sparse (n_lines, n) (far wings left out)."""
    vals = model.window_values(theta)
    return sp.csr_array((vals, (model.seg, model.rows)), shape=(model.n_lines, model.x.size))


def lmfit_result(mini, model, params, v: np.ndarray):
    """lmfit's ``MinimizerResult`` at ``v`` without an lmfit solver run (large fits).

    ``result.covar`` is a sparse array holding only the computed entries of the
    covariance (every pair of variables inside the band, every row and column
    of a global variable), scaled by the reduced chi-square; an absent entry
    means *not computed*, not zero correlation. ``stderr`` is set for every
    parameter (tied ones through their expressions); ``correl`` lists the
    parameters of the same line and the global ones.
    """
    tmap = model.tmap
    for n, val in zip(tmap.var_names, v):
        params[n].value = float(val)
    params.update_constraints()
    res = mini.prepare_fit(params)
    res.method = "structured Levenberg-Marquardt"
    res.residual = model.residual_vec(v)
    res._calculate_statistics()
    res.success, res.message, res.covar = True, "solved on the structured normal equations", None
    cov, line_of = covariance(model, v, res.residual)
    if cov is None:
        res.errorbars = False
        return res
    scale = float(res.redchi) if mini.scale_covar else 1.0
    res.covar = cov.to_sparse() * scale
    var = np.clip(cov.diagonal() * scale, 0.0, None)
    stderr = np.sqrt(var)
    names = tmap.var_names
    for k, name in enumerate(names):
        res.params[name].stderr = float(stderr[k])
        res.params[name].correl = {}
    glob = np.nonzero(line_of < 0)[0]
    by_line = np.argsort(line_of, kind="stable")
    a_idx, b_idx = _correlation_pairs(line_of, by_line, glob)
    with np.errstate(divide="ignore", invalid="ignore"):
        corr = cov.entries(a_idx, b_idx) * scale / (stderr[a_idx] * stderr[b_idx])
    for a, b, c in zip(a_idx.tolist(), b_idx.tolist(), corr.tolist()):
        res.params[names[a]].correl[names[b]] = c
    res.errorbars = bool(np.all(stderr > 0))
    res.uvars = None
    values, jac = tmap.all_values_and_jacobian(v)
    pc = ParameterCovariance(jac, cov, scale)
    tied = [(n, k) for n, (_, k) in values.items() if res.params[n].expr is not None]
    if tied:
        k = np.array([t[1] for t in tied])
        errs = np.sqrt(np.clip(pc[k, k], 0.0, None))
        for (n, _), e in zip(tied, errs):
            res.params[n].stderr = float(e)
    return res


def _correlation_pairs(line_of, by_line, glob):
    """(a, b) pairs, a != b: variables of one line with each other, every variable
    with every global."""
    loc = by_line[line_of[by_line] >= 0]
    lines = line_of[loc]
    a_list, b_list = [], []
    starts = np.r_[0, np.nonzero(np.diff(lines))[0] + 1]
    sizes = np.diff(np.r_[starts, loc.size])
    for size in np.unique(sizes):
        grp = starts[sizes == size]
        members = grp[:, None] + np.arange(size)[None, :]  # (n_groups, size)
        a = np.repeat(members, size, axis=1)
        b = np.tile(members, (1, size))
        keep = a != b
        a_list.append(loc[a[keep]])
        b_list.append(loc[b[keep]])
    n = line_of.size
    for gk in glob:
        others = np.delete(np.arange(n), gk)
        a_list += [np.full(others.size, gk), others]
        b_list += [others, np.full(others.size, gk)]
    if not a_list:
        return np.zeros(0, int), np.zeros(0, int)
    return np.concatenate(a_list).astype(int), np.concatenate(b_list).astype(int)
