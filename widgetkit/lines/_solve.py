"""The solve of a line fit (:func:`solve`): the two solver stages under one budget.

1. bounded Levenberg–Marquardt on the exact normal equations (:mod:`.solver`),
   windows and far wings refreshed between passes;
2. lmfit's ``least_squares`` (scipy's trust-region solver on the sparse Jacobian,
   :class:`~._lmfit_sparse.SparseMinimizer`) from that solution, which gives the
   lmfit result there and takes over if stage 1 stalled. After a stage 1 that
   converged it has :data:`REFINE_NFEV` evaluations, and where it ends at a point our
   certificate does not call converged, stage 1's point is kept.

Every model evaluation is paid from a :class:`~.budget.Budget`. When it is spent,
the fit is kept where it stood (the best point of the stage then running) and its
uncertainties are computed there from the Jacobian, as at a converged solution;
the verdict is ours (:func:`verdict`), never the solver's message.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
import scipy.sparse as sp

from . import solver, structured
from ._lmfit_sparse import SparseMinimizer, inverse_normal
from ._setup import Problem
from .budget import Budget, BudgetSpent, Counted
from .derived import parameter_covariance

__all__ = ["Solution", "solve", "verdict"]

CONVERGENCE_TOL = solver.CONVERGENCE_TOL
#: trust-region stage on a dense Jacobian (exact subproblem, an SVD of points ×
#: variables² work) up to this much work: measured on a 15-line band of 300 points,
#: 20 ms an iteration with the iterative sparse subproblem (hundreds of sparse
#: products), a few ms exact; on 52 lines and 6000 points exact was slower (0.3 s)
DENSE_TR_WORK = 20_000_000
#: evaluations the trust-region stage may spend after a stage one that did not converge
RESCUE_NFEV = 50
#: the trust-region stage starts only with this share of the solve's time left: between
#: two evaluations its subproblem (LSMR on the sparse Jacobian) ran 1.5 s past a budget
#: of 1.4 s on 46 pressure-broadened lines of 55,001 points; with less time left the fit
#: is kept where stage one left it, as if the time had run out at the stage's first
#: evaluation (and recorded so: a replay stops there too)
TR_MIN_SHARE = 0.25
#: ... and after one that converged (it then only gives lmfit's result there; on real
#: spectra with many widths on their bounds it was measured wandering along them for
#: 900 evaluations): where it ends at a point our certificate does not call converged,
#: the converged point of stage one is kept
REFINE_NFEV = 50


@dataclass
class Solution:
    """What the solve ended with: the lmfit result at the final point, our
    certificate ``crit`` (remaining Gauss–Newton reduction in reduced chi-squares),
    the variables held at a bound, how it stopped (:data:`~.budget.STOP_REASONS`),
    a failure text if any, the minimizer (for confidence intervals) and the counts."""

    result: Any
    crit: float
    at_bound: list
    stopped: str
    error: str | None
    minimizer: SparseMinimizer
    nfev: int
    njev: int
    seconds: float
    cut: bool = False  # the budget ran out (also when the certificate then says converged)

    @property
    def converged(self) -> bool:
        return self.stopped == "converged"


def _set_values(params, names, v) -> None:
    for n, val in zip(names, v):
        params[n].value = float(val)
    params.update_constraints()


def _result_at(mini: SparseMinimizer, prob: Problem, v: np.ndarray):
    """An lmfit result at ``v`` with statistics and, where the normal matrix is regular,
    uncertainties (as lmfit gives them at a solution), without moving ``v``."""
    model = prob.model
    current = prob.params
    if model.structured:  # many variables: sparse covariance (lines.structured)
        return structured.lmfit_result(mini, model, current, v)
    _set_values(current, prob.tmap.var_names, v)
    res = mini.prepare_fit(current)
    res.method = "least_squares"
    res.residual = model.residual_vec(v)
    res._calculate_statistics()
    res.success = False
    res.covar = None
    jac = model.jacobian_vec(v)
    try:
        hess = jac.T @ jac
        hess = hess.toarray() if sp.issparse(hess) else np.asarray(hess)
        res.covar = inverse_normal(hess)
        mini._calculate_uncertainties_correlations()
    except (np.linalg.LinAlgError, ValueError):
        res.covar = None
    res.jac = jac
    return res


def _certified(res, prob: Problem) -> tuple[float, list]:
    """Our certificate at ``res``: remaining reduction and the names held at a bound."""
    v = prob.model.variables(res.params)
    crit, held = solver.certify(getattr(res, "jac", None), res.residual, v, prob.lo,
                                prob.hi, res.redchi, model=prob.model)
    return crit, [prob.tmap.var_names[k] for k in held]


def _stage_one(prob: Problem, counted: Counted, budget: Budget, max_passes: int):
    """Levenberg–Marquardt passes; returns variables, certificate, held names, Jacobian
    evaluations (the budget may stop it: BudgetSpent propagates with the best kept).

    Another pass follows one that converged on windows or wings that then moved, and one
    that used all its iterations or evaluations (:data:`.solver.LM_MAX_ITER`,
    :data:`~.solver.LM_MAX_NFEV`) without converging: it was still on its way (fits of
    150 lines on a curved baseline were measured stopping 0.7 reduced chi-squares short
    after 60 steady iterations, with most of their time left). A pass that stalled or
    found no step ends stage one: the trust-region stage takes over."""
    model = prob.model
    v = model.variables(prob.params)
    crit, at_bound, njev = np.inf, [], 0
    wing_tol = 1e-3 * (prob.noise if prob.noise > 0
                       else max(float(np.max(np.abs(prob.ys))), 1e-300))
    model.set_wings(prob.tmap.values(v))
    for k in range(max(1, int(max_passes))):
        budget.mark(f"fitting (pass {k + 1})")
        with np.errstate(all="ignore"):
            v, crit, at_bound, n_fev, n_jev = solver.levenberg_marquardt(
                counted, v, prob.lo, prob.hi, prob.nfree)
        njev += n_jev
        theta = prob.tmap.values(v)
        stable = solver.rewindow(model, theta)
        wings_moved = model.set_wings(theta) > wing_tol
        if crit < CONVERGENCE_TOL:
            if stable and not wings_moved:
                break  # converged on the windows it was solved with
        elif n_jev < solver.LM_MAX_ITER and n_fev < solver.LM_MAX_NFEV:
            break  # stuck: the trust-region stage takes over
    return v, crit, at_bound, njev


def solve(prob: Problem, budget: Budget, max_passes: int = 4) -> Solution:
    """Run both stages under ``budget`` and return the :class:`Solution`."""
    model, tmap = prob.model, prob.tmap
    counted = Counted(model, budget)

    def expr_stderr(covar, fitted):
        values, cov_all = parameter_covariance(tmap, model.variables(fitted), covar)
        return {n: np.sqrt(max(cov_all[k, k], 0.0)) for n, (_, k) in values.items()
                if fitted[n].expr is not None}

    dense = prob.xs.size * len(tmap.var_names) ** 2 <= DENSE_TR_WORK
    if dense:  # small: the trust-region subproblem solved exactly on the dense Jacobian
        def jac(params):
            return model.jacobian(params).toarray()
        extra_opts = {"tr_solver": "exact"}
    else:
        jac, extra_opts = model.jacobian, {}
    mini = SparseMinimizer(counted.residual, prob.params, jac=jac, scale_covar=True,
                           expr_stderr=expr_stderr, **extra_opts)
    crit, at_bound, error, njev, res = np.inf, [], None, 0, None
    v = model.variables(prob.params)
    settled = None  # the variables of a stage one that converged
    try:
        v, crit, at_bound, njev = _stage_one(prob, counted, budget, max_passes)
        _set_values(prob.params, tmap.var_names, v)
        # from a converged point one cheap trust-region iteration is all lmfit needs
        extra = {"tr_options": {"maxiter": 25}} if crit < CONVERGENCE_TOL else {}
        settled = v.copy() if crit < CONVERGENCE_TOL else None
        # a stage one that did not converge gets a short rescue: the trust-region solver
        # was measured crawling for thousands of evaluations on fits it cannot rescue
        budget.mark("refining", REFINE_NFEV if settled is not None else RESCUE_NFEV)
        if not dense and not model.structured and budget.short_of(TR_MIN_SHARE):
            budget.run_out()
        if model.structured:  # many variables: no dense step anywhere (lines.structured)
            res = structured.lmfit_result(mini, model, prob.params, v)
        else:
            res = mini.least_squares(params=prob.params, **extra)
        njev += int(getattr(res, "njev", 0) or 0)
        if res.aborted or not np.isfinite(res.chisqr):
            error = "the solver stopped: the model could not be evaluated"
    except BudgetSpent:  # the fit's budget, or the refining stage's share of it
        v = budget.best if budget.best is not None else v
        res = None
    except (ValueError, FloatingPointError, np.linalg.LinAlgError) as exc:
        error = f"the solver failed: {exc}"
        v = budget.best if budget.best is not None else v
        res = None
    nfev_solve, seconds = budget.nfev, budget.seconds
    spent = budget.disarm()
    if res is None or error is not None:
        res = _result_at(mini, prob, v)
    if error is None and np.isfinite(res.chisqr):
        crit, at_bound = _certified(res, prob)
        if settled is not None and not crit < CONVERGENCE_TOL:
            # the refinement left the converged point of stage one for one it cannot
            # certify (it wandered along bounds, or was cut short there): back to it
            res = _result_at(mini, prob, settled)
            crit, at_bound = _certified(res, prob)
    if error is not None:
        stopped = "failed"
        res.message = error
    elif 0.0 <= crit < CONVERGENCE_TOL:
        stopped = "converged"  # our certificate decides, also where the budget ran out
    else:
        stopped = spent or "tolerance"
    res.success = stopped == "converged"
    return Solution(result=res, crit=float(crit), at_bound=at_bound, stopped=stopped,
                    error=error, minimizer=mini, nfev=nfev_solve, njev=njev,
                    seconds=seconds, cut=spent is not None)


def _plural(n: int, word: str) -> str:
    return f"{n} {word}" + ("" if n == 1 else "s")


def verdict(sol: Solution, max_nfev: int | None, time_limit: float | None) -> str:
    """How the fit ended, in our words; the evaluations and seconds used close it, in
    parentheses (the only part that differs when the fit is replayed)."""
    used = f" ({_plural(sol.nfev, 'evaluation')}, {sol.seconds:.1f} s)"
    remain = (f"a further Gauss-Newton step would still lower chi-square by {sol.crit:.3g} "
              "reduced chi-squares")
    if sol.stopped == "converged":
        return (f"converged: remaining Gauss-Newton reduction {sol.crit:.2g} reduced "
                f"chi-squares{used}")
    if sol.stopped == "failed":
        return f"not converged: {sol.error}{used}"
    if sol.stopped == "evaluations":
        return f"not converged: the budget of {max_nfev} evaluations was spent; {remain}{used}"
    if sol.stopped == "time":
        limit = "" if time_limit is None else f" of {time_limit:g} s"
        return f"not converged: the time limit{limit} was reached; {remain}{used}"
    return f"not converged: the solvers stopped short of the minimum; {remain}{used}"
