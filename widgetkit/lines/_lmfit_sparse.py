"""The one place where widgetkit adapts lmfit: a sparse analytic Jacobian.

Why this exists (lmfit 1.3.4, scipy 1.17):

* ``Minimizer._jacobian`` passes every Jacobian through ``coerce_float64``,
  which turns a sparse matrix dense (3–8 s per 40-line fit instead of
  milliseconds);
* ``Minimizer.least_squares`` then forms the curvature matrix as
  ``ret.jac.T * ret.jac``; scipy now returns the Jacobian as a ``csr_array``,
  for which ``*`` is the element-wise product, so a sparse Jacobian that does
  reach scipy crashes the covariance step with a shape error.

:class:`SparseMinimizer` is a thin subclass of :class:`lmfit.Minimizer` that
overrides only :meth:`least_squares` (keeping lmfit's set-up, residual
wrapper, statistics, uncertainties and correlations, and its result object)
so the Jacobian stays sparse end to end, and routes :meth:`leastsq` to it so
that :func:`lmfit.conf_interval` refits on the same fast path. The tests in
``tests/lines/test_lmfit_sparse.py`` compare it with stock lmfit on a dense
problem and fail if lmfit changes the internals relied on here
(``prepare_fit``, the name-mangled ``_Minimizer__residual``,
``result._calculate_statistics``, ``_calculate_uncertainties_correlations``).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from lmfit import Minimizer
from lmfit.minimizer import AbortFitException
from numpy.linalg import LinAlgError
from scipy.optimize import least_squares as _scipy_least_squares

__all__ = ["SparseMinimizer", "DEFAULT_LSQ_OPTIONS", "DENSE_COVAR_MAX", "inverse_normal"]

#: above this many variables no dense covariance is formed here (``covar`` None; the
#: refits of :func:`lmfit.conf_interval` need only chi-square, and a fit's own
#: uncertainties then come from :mod:`.structured`)
DENSE_COVAR_MAX = 2000

#: solver options of the fast path (``x_scale='jac'``: with lmfit's default
#: ``x_scale=1.0`` windowed fits stopped early with chi-square too high)
DEFAULT_LSQ_OPTIONS = dict(method="trf", tr_solver="lsmr", x_scale="jac",
                           ftol=1e-8, xtol=1e-8, gtol=1e-8)


#: eigenvalues of the scaled normal matrix below this fraction of the largest are null
NULL_EIGEN = 1e-13
#: a variable loading a null direction by more than this (squared component) is undetermined
NULL_LOAD = 1e-2


def inverse_normal(hess) -> np.ndarray:
    """The inverse of the normal matrix ``J.T @ J``, also where it is singular.

    A fit stopped early can hold a line whose Jacobian columns are zero or collinear (a
    width on its bound, an area of 0): the whole inverse then fails or is meaningless, and
    every standard error would be lost. Here the matrix is scaled to unit diagonal and
    split into eigenvectors; directions with eigenvalue below :data:`NULL_EIGEN` of the
    largest are not determined by the data, and every variable that loads one of them by
    more than :data:`NULL_LOAD` gets the variance of the weakest direction the data could
    still resolve, ``1 / (NULL_EIGEN · (J.T J)_ii)`` (an enormous error that says "not
    determined", and that the pruning rules read as such) and no covariance with the
    others; the other variables get the inverse of their own block, so their errors stay
    as they are.
    """
    h = np.asarray(hess.toarray() if sp.issparse(hess) else hess, dtype=np.float64)
    n = h.shape[0]
    d = np.sqrt(np.clip(np.diag(h), 0.0, None))
    ok = np.isfinite(d) & (d > 0)
    if ok.all():
        try:
            with np.errstate(all="ignore"):
                scaled = h / np.outer(d, d)
                w, v = np.linalg.eigh(scaled)
        except (LinAlgError, ValueError):
            w = None
        if w is not None and np.all(np.isfinite(w)) and w[0] > NULL_EIGEN * w[-1]:
            return (v / w) @ v.T / np.outer(d, d)
        if w is not None and np.all(np.isfinite(w)):
            null = w <= NULL_EIGEN * max(w[-1], 0.0)
            ok &= np.sum(v[:, null] ** 2, axis=1) <= NULL_LOAD
    out = np.zeros((n, n))
    with np.errstate(divide="ignore"):
        floor = 1.0 / (NULL_EIGEN * np.where(d > 0, d, np.min(d[d > 0], initial=1.0)) ** 2)
    out[~ok, ~ok] = floor[~ok]
    k = np.flatnonzero(ok)
    if k.size:
        sub = h[np.ix_(k, k)] / np.outer(d[k], d[k])
        out[np.ix_(k, k)] = np.linalg.pinv(sub, hermitian=True) / np.outer(d[k], d[k])
    return out


class SparseMinimizer(Minimizer):
    """:class:`lmfit.Minimizer` whose ``least_squares`` keeps a sparse Jacobian.

    Construct it as a Minimizer, passing the analytic Jacobian as
    ``jac=callable(params) -> sparse (n_data, n_varys)`` among the keyword
    arguments (they are kept in ``self.kws`` and reused by refits). The
    callable receives the Parameters after lmfit has set the variables and
    evaluated the constraint expressions, exactly as the residual does; it
    must return derivatives with respect to the *variable* parameters in
    ``result.var_names`` order.

    Uncertainties: stderr and correlations of the variables come from the
    covariance as in lmfit, vectorised; lmfit's propagation to constraint
    expressions (numerical derivatives of every expression with respect to
    every variable, through the ``uncertainties`` package) is replaced by the
    optional ``expr_stderr(covar, params) -> {name: stderr}`` given to the
    constructor (exact, from the expressions' own derivatives). Without it
    tied parameters get ``stderr=None``. ``result.uvars`` is None.
    """

    def __init__(self, userfcn, params, *args, expr_stderr=None, **kws):
        super().__init__(userfcn, params, *args, **kws)
        self.expr_stderr = expr_stderr

    def _calculate_uncertainties_correlations(self):
        """Stderr and correlations from ``result.covar`` (scaled by redchi if asked)."""
        result = self.result
        if self.scale_covar:
            result.covar *= result.redchi
        stderr = np.sqrt(np.clip(np.diag(result.covar), 0.0, None))
        for par in result.params.values():
            par.stderr, par.correl = (None if par.expr is not None else 0), None
        with np.errstate(divide="ignore", invalid="ignore"):
            corr = result.covar / np.outer(stderr, stderr)
        names = result.var_names
        for i, name in enumerate(names):
            par = result.params[name]
            par.stderr = float(stderr[i])
            row = corr[i].tolist()
            par.correl = {n: row[j] for j, n in enumerate(names) if j != i}
        result.errorbars = bool(np.all(stderr > 0))
        result.uvars = None
        if self.expr_stderr is not None:
            for name, err in self.expr_stderr(result.covar, result.params).items():
                result.params[name].stderr = float(err)

    def _sparse_jacobian(self, fvars, *args, **kwargs):
        pars = self.result.params
        for name, val in zip(self.result.var_names, fvars):
            pars[name].value = float(val)
        pars.update_constraints()
        jac = self.jacfcn(pars, *self.userargs, **self.userkws)
        if not sp.issparse(jac):
            jac = np.asarray(jac, dtype=np.float64)
        return jac

    def least_squares(self, params=None, max_nfev=None, **kws):
        """Fit with :func:`scipy.optimize.least_squares`, Jacobian kept sparse.

        Same contract and result as :meth:`lmfit.Minimizer.least_squares`;
        the covariance is ``inv(J.T @ J)`` (scaled by reduced chi-square when
        ``scale_covar``), formed from the sparse ``J`` at the solution, for at
        most :data:`DENSE_COVAR_MAX` variables (None beyond).
        """
        result = self.prepare_fit(params)
        result.method = "least_squares"
        self.set_max_nfev(max_nfev, 2000 * (result.nvarys + 1))

        lower, upper, start = [], [], []
        for name in result.var_names:
            par = self.params[name]
            start.append(par.value)
            lower.append(-np.inf if par.min is None else par.min)
            upper.append(np.inf if par.max is None else par.max)

        opts = dict(jac="2-point", loss="linear", max_nfev=2 * self.max_nfev, verbose=0)
        opts.update(DEFAULT_LSQ_OPTIONS)
        opts.update(self.kws)
        opts.update(kws)
        if opts.get("Dfun") is not None:
            opts["jac"] = opts.pop("Dfun")
        opts.pop("Dfun", None)
        if callable(opts["jac"]):
            self.jacfcn = opts["jac"]
            opts["jac"] = self._sparse_jacobian
        result.call_kws = opts
        residual = self._Minimizer__residual

        try:
            ret = _scipy_least_squares(residual, np.asarray(start, float),
                                       bounds=(lower, upper),
                                       kwargs={"apply_bounds_transformation": False}, **opts)
        except AbortFitException:
            ret = None
            result.aborted = True

        if not result.aborted:
            result.nfev -= 1
            result.residual = residual(ret.x, False)
        elif result.nfev > self.max_nfev - 5:
            result.nfev -= 2
            result.residual = residual(result.last_internal_values, False)
        result._calculate_statistics()

        if not result.aborted:
            for attr in ret:
                setattr(result, "least_squares_nfev" if attr == "nfev" else attr, ret[attr])
            result.x = np.atleast_1d(result.x)
            jac = ret.jac
            result.covar = None
            if result.nvarys <= DENSE_COVAR_MAX:  # beyond, lines.structured gives them
                hess = (jac.T @ jac).toarray() if sp.issparse(jac) else jac.T @ jac
                try:
                    result.covar = inverse_normal(hess)
                    self._calculate_uncertainties_correlations()
                except (LinAlgError, ValueError):
                    result.covar = None
        return result

    def leastsq(self, params=None, max_nfev=None, **kws):
        """Routed to :meth:`least_squares` with tight LSMR and stopping tolerances.

        ``lmfit.conf_interval`` refits through ``leastsq`` and needs each refit
        at its minimum (a refit stopped early narrows the interval).
        """
        opts = dict(ftol=1e-12, xtol=1e-12, gtol=1e-12, tr_options={"atol": 1e-12, "btol": 1e-12})
        opts.update(kws)
        return self.least_squares(params=params, max_nfev=max_nfev, **opts)
