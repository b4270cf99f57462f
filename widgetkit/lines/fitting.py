"""Multi-line fits: :func:`fit` and its result :class:`LineFit`.

The work is split in three modules: :mod:`._setup` (checked data, starting
values, parameters and the windowed model), :mod:`._solve` (the two solver
stages under a :class:`~.budget.Budget`) and :mod:`._assemble` (the line table,
curves and flags).

The fast path is the only path. Every line is evaluated on a window of
``window`` half widths with its far Lorentzian wing added outside
(:mod:`.model`); the Jacobian is analytic and sparse. The solve has two
stages, both on that sparse Jacobian:

1. a bounded Levenberg–Marquardt iteration on the exact normal equations
   (``J^T J`` is small, variables × variables, and cheap to form from the
   sparse ``J``), which converges quadratically; windows and far wings are
   refreshed between passes;
2. lmfit's ``least_squares`` method (scipy's trust-region reflective solver,
   LSMR subproblems, ``x_scale='jac'``) run from that solution through
   :class:`~._lmfit_sparse.SparseMinimizer`, which yields the ordinary lmfit
   ``MinimizerResult`` (values, stderr, correlations, statistics) and takes
   over if stage 1 stalled.

Convergence is checked here, not taken from the solver's ``success`` flag
(solvers stop on the step-size test well above the minimum and still report
success). At the solution the Gauss–Newton step over the parameters not held
by a bound is computed exactly; its predicted chi-square reduction, in units
of the reduced chi-square, is the squared distance to the minimum measured
in standard errors. The fit counts as converged when that is below
:data:`CONVERGENCE_TOL` (1e-4: every parameter within 0.01 of its standard
error of the optimum).

A fit always ends: every model evaluation of either stage is paid from a budget
of ``max_nfev`` evaluations and ``time_limit`` seconds (defaults
:data:`~.budget.DEFAULT_MAX_NFEV`, :data:`~.budget.DEFAULT_TIME_LIMIT`). A fit
stopped by the budget, or by a solver's own tolerance short of the minimum, is
kept where it stood, with uncertainties from the Jacobian there,
``converged=False``, ``stopped`` saying why and a message in our words (the
evaluations and seconds used, the remaining reduction). Lines are flagged
(``LineFit.flags``) when their starting
height is below the noise, their fitted FWHM is below the sampling step,
their area is not significant, or a parameter ends at its bound.
"""

from __future__ import annotations

import dataclasses
import functools
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import lmfit
import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from ..errors import FitError
from . import solver
from ._assemble import assemble
from ._setup import set_up
from ._solve import solve, verdict
from ._stages import Run, missed_stage, prune_stage, weighted_stage
from .background import as_fringe
from .budget import (
    DEFAULT_MAX_NFEV,
    DEFAULT_TIME_LIMIT,
    Budget,
    auto_time_limit,
    budget_number,
    replay_counts,
)
from .missed import added_table
from .prune import not_judged, removed_table
from .reweight import FROM_TRANSMITTANCE

__all__ = ["fit", "LineFit", "DEFAULT_WINDOW", "CONVERGENCE_TOL", "DEFAULT_MAX_NFEV",
           "DEFAULT_TIME_LIMIT"]

#: default window half-width, in half widths at half maximum of each line
DEFAULT_WINDOW = 100.0
#: converged when the remaining Gauss–Newton reduction is below this many reduced chi-squares
CONVERGENCE_TOL = solver.CONVERGENCE_TOL


@dataclass(frozen=True)
class LineFit:
    """Result of :func:`fit` (immutable; the specification is in ``spec``).

    Attributes
    ----------
    table : pandas.DataFrame
        line_id, position, position_err, area, area_err, height, height_err,
        fwhm, fwhm_err and the shape widths (sigma, sigma_err, gamma,
        gamma_err as the shape has them); cm⁻¹ and y-units·cm⁻¹ for areas.
    result : lmfit.minimizer.MinimizerResult
        The lmfit result (values, stderr, correlations, chisqr, redchi, nfev,
        success, message, covar). Above ``STRUCTURED_MIN_VARS`` (400) variables
        ``covar`` is a sparse array of the computed entries only
        (:func:`widgetkit.lines.structured.lmfit_result`).
    params : lmfit.Parameters
        Fitted parameters (``result.params``).
    chisqr, redchi : float
        Sum of squared (weighted) residuals and chisqr / (n - n_varys).
    nfev, njev : int
        Model and Jacobian evaluations over all stages (njev = iterations).
    converged : bool
        Our own convergence test (module docstring), not the solver's flag.
    message : str
        The verdict in our words: how the fit ended, the evaluations and seconds
        used, the remaining reduction.
    flags : dict
        line_id -> tuple of warnings (below noise, at a bound, ...), only for
        flagged lines; key ``"fit"`` for warnings about the whole fit.
    x, y : ndarray
        The data used (after ``region``).
    model_y, baseline_y, residual : ndarray
        Model (windowed evaluation, as fitted), its baseline part, and
        ``y - model_y``.
    components : ndarray, shape (n_lines, n)
        Each line alone, zero outside its window (a ``scipy.sparse`` array,
        far wings left out, above 2·10⁷ lines × points).
    spec : dict
        JSON-able record of what was asked.
    baseline_params : pandas.DataFrame
        name (b0, b1, b2 in the public form of :mod:`.baselines`), value, stderr.
    noise : float
        The noise sigma used (given or estimated).
    conf_intervals : dict or None
        ``lmfit.conf_interval`` output for the parameters asked for.
    stopped : str
        How the fit ended (:data:`~.budget.STOP_REASONS`): ``"converged"``,
        ``"tolerance"`` (a solver stopped short of the minimum), ``"evaluations"``
        or ``"time"`` (the budget), ``"failed"`` (the model could not be evaluated).
    seconds : float
        Wall time of the solves.
    removed : pandas.DataFrame
        Lines removed as not supported by the data (:mod:`.prune`), one row each:
        line_id, rule, reason, merged_into, start, position, area, area_err, fwhm
        (the last four from the first fit). Empty when none was removed.
    solve_nfev, solve_stopped : tuple
        Evaluations used and how it stopped, for each solve (two when lines were
        removed and the fit repeated).
    solve_cut : tuple of bool
        For each solve, whether its budget ran out, also where the point it reached then
        counts as converged (a replay stops such a solve at the same evaluation).
    added : pandas.DataFrame
        Lines added from the residual (``add_missed``; :mod:`.missed`), one row each:
        line_id, position, height, snr, reason. Empty when none was added.
    background : Background or None
        The smooth background subtracted before the fit (``baseline="auto"`` on a
        spectrum whose baseline a straight line cannot follow; :mod:`.background`);
        it is part of ``model_y`` and ``baseline_y``.
    """

    table: pd.DataFrame
    result: Any
    params: lmfit.Parameters
    chisqr: float
    redchi: float
    nfev: int
    converged: bool
    message: str
    flags: dict
    x: np.ndarray
    y: np.ndarray
    model_y: np.ndarray
    baseline_y: np.ndarray
    components: np.ndarray
    residual: np.ndarray
    spec: dict
    baseline_params: pd.DataFrame
    noise: float
    conf_intervals: dict | None = field(default=None)
    njev: int = 0
    stopped: str = "converged"
    seconds: float = 0.0
    removed: pd.DataFrame = field(default_factory=lambda: removed_table([]))
    solve_nfev: tuple = ()
    solve_stopped: tuple = ()
    background: Any = None
    solve_cut: tuple = ()
    added: pd.DataFrame = field(default_factory=lambda: added_table([]))


def _one_blas_thread(func):
    """Run ``func`` with one BLAS thread. The solver's dense algebra is on small
    (variables × variables) matrices, where more BLAS threads only contend: measured
    here, a 34-line fit took 2.1 s with two threads on a busy two-core machine and
    0.4 s with one."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with threadpool_limits(limits=1, user_api="blas"):
            return func(*args, **kwargs)

    return wrapper


@_one_blas_thread
def fit(x, y, positions, *, shape: str = "voigt", shared_width=False,
        baseline: str | None = "auto", region: Sequence[float] | None = None,
        window: float | None = DEFAULT_WINDOW, line_ids: Sequence | None = None,
        heights=None, widths=None, noise: float | None = None,
        constraints: Mapping | None = None, weights=None,
        conf_interval: str | Sequence[str] | None = None, max_passes: int = 4,
        max_nfev: int | None = DEFAULT_MAX_NFEV,
        time_limit: float | str | None = DEFAULT_TIME_LIMIT,
        progress: Callable[[float, str], Any] | None = None, prune: bool = True,
        keep: Sequence | None = None, replay_nfev=None, add_missed: bool = False,
        added_ids_from: int | None = None, added_min_snr: float | None = None,
        fringe=None) -> LineFit:
    """Fit lines of one shape plus a baseline to ``y(x)``.

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Data; x in cm⁻¹ (sorted here if needed; the inputs are not changed).
    positions : array_like, shape (m,)
        Starting line centres, cm⁻¹; each must lie inside the data (FitError).
    shape : {"voigt", "gaussian", "lorentzian", "pseudo_voigt"}
        Registered line shape (:data:`~widgetkit.lines.SHAPES`).
    shared_width : bool, str or mapping
        False: every line its own widths; True: one set of widths for all;
        ``"sigma"``/``"gamma"``: share only that width; mapping group name ->
        list of line ids: one width set per group.
    baseline : {"auto", "linear", None, "none", "constant", "poly2", "exponential"}
        Baseline fitted with the lines (:mod:`.baselines`). ``"auto"`` (default) is
        ``"linear"`` on top of a smooth background estimated from the line-free points
        and subtracted first, when they show that a straight line cannot follow the
        baseline (:mod:`.background`; ``LineFit.background``).
    region : (lo, hi), optional
        Only data with lo ≤ x ≤ hi is used.
    window : float or None
        Half-width of each line's evaluation window in its HWHM (default
        :data:`DEFAULT_WINDOW`); None evaluates every line everywhere.
    line_ids : sequence, optional
        Ids for ``table.line_id`` and parameter names ``l<id>_...`` (default 1..m).
    heights, widths : array_like, optional
        Starting heights (y units) and FWHM (cm⁻¹); NaN or None = estimate. A
        line's widths are bounded by 0.1 sampling step and 10 times its starting
        FWHM (at least 20 steps).
    noise : float, optional
        Noise sigma of y; measured on the line-free points if None
        (:func:`widgetkit.processing.estimate_noise`).
    constraints : mapping, optional
        Ties, fixed values, bounds and ``"doppler"`` (:mod:`.params`).
    weights : array_like or "from_transmittance", optional
        Residual weights, ``residual = (model - y) * weights`` (1/sigma_i).
        ``"from_transmittance"``: y is absorbance computed from transmittance, whose noise
        grows as 1/T; the fit ends with a solve weighted for it (:mod:`.reweight`).
    conf_interval : str or list of str, optional
        Parameter names for :func:`lmfit.conf_interval` (1 and 2 sigma); only
        for a converged fit, outside the budget.
    max_passes : int
        Levenberg–Marquardt passes: another follows one that converged on windows
        that then moved, or one that used its 60 iterations while still improving.
    max_nfev : int or None
        Most model evaluations of one solve, over both solver stages (default
        :data:`DEFAULT_MAX_NFEV`; None: no cap).
    time_limit : float, "auto" or None
        Most seconds of wall time (default ``"auto"``: 5 s plus 0.01 s per line;
        None: no limit). Checked before each model evaluation, as the cap is. A
        fit repeated after pruning gets what the first solve left, at least a
        quarter of the limit; the later solves (``add_missed``, weighting) what
        1.25 times the limit left, at least a tenth of it
        (:func:`.budget.stage_seconds`: the last solve ends within 1.3 times it).
    progress : callable, optional
        ``progress(fraction, text)`` during the fit (about four times a second):
        the share of the budget used and what the fit is doing.
    prune : bool
        Remove the lines the data cannot support (:mod:`.prune`: area below 3
        standard errors, FWHM on a bound, centre moved more than a width,
        collapsed onto a neighbour) and fit once more without them; each
        removal is listed in ``LineFit.removed``. False keeps every line.
    keep : sequence, optional
        Line ids never removed (lines added by hand); one that fails a test is
        kept and flagged. Lines named in ``constraints`` are kept too.
    add_missed : bool
        Look for lines the peak search missed in the residual of the fit (weak lines on
        the flank of strong ones), fit again with them, and keep that fit when chi-square
        fell by more than the added parameters explain (:mod:`.missed`); each added line
        is listed in ``LineFit.added``. Default False here; ``Session.fit_lines`` turns it
        on.
    added_min_snr : float, optional
        The least significance (height / σ) of a line added from the residual, when above
        the automatic threshold: a session gives the ``min_snr`` its peaks were found with.
    added_ids_from : int, optional
        The first id of an added line (integer ids; default the next after the largest):
        a session gives its next peak id, so that no later peak gets the same id.
    fringe : Fringe or its JSON, optional
        An interference fringe of the baseline found by the peak search
        (``PeakSearch.context.fringe``; a session passes its own): with ``baseline="auto"``
        it is refitted to the line-free points with the smooth background and subtracted
        (:mod:`.background`), and the noise is measured without it.
    replay_nfev : int or sequence, optional
        For replaying a recorded fit that ran out of time: per solve, the time
        limit counts as reached before evaluation ``n + 1``, whatever the clock
        says, so the replay ends where the record did (``Session.verify``). Given at all
        (even as a list of None), the fit is a replay: no decision is taken by the clock
        (the trust-region stage's start, :data:`._solve.TR_MIN_SHARE`).

    Returns
    -------
    LineFit
        Also when the fit stopped before converging (``converged=False``,
        ``stopped`` and ``message`` say why); nothing fitted is thrown away.

    Raises
    ------
    FitError
        Set-up errors only: no lines, unknown shape or baseline, a centre
        outside the data, bad ids, a bad constraint, a bad budget. A fit that
        fails is returned with ``converged=False``.
    """
    started = time.perf_counter()
    max_nfev = budget_number(max_nfev, "max_nfev", integer=True)
    if not (isinstance(time_limit, str) and time_limit == "auto"):
        time_limit = budget_number(time_limit, "time_limit", integer=False)
    replays = replay_counts(replay_nfev)
    from_t = isinstance(weights, str) and weights == FROM_TRANSMITTANCE
    if isinstance(weights, str) and not from_t:
        raise FitError(f"weights must be numbers or {FROM_TRANSMITTANCE!r}, got {weights!r}")
    weights = None if from_t else weights
    args = dict(shape=shape, baseline=baseline, region=region, window=window,
                constraints=constraints, weights=weights)
    fringe = as_fringe(fringe)
    prob = set_up(x, y, positions, shared_width=shared_width, line_ids=line_ids,
                  heights=heights, widths=widths, noise=noise, **args, fringe=fringe,
                  extra_spec={**({"fringe": fringe.to_json()} if fringe is not None else {}),
                              "max_nfev": max_nfev, "time_limit": time_limit,
                              "prune": bool(prune), "add_missed": bool(add_missed),
                              "keep": None if keep is None else list(keep),
                              **({"weights": FROM_TRANSMITTANCE} if from_t else {})})
    spec = prob.spec
    if time_limit == "auto":
        time_limit = auto_time_limit(len(prob.ids))
    budget = Budget(max_nfev, time_limit, progress, replays[0],
                    replaying=replay_nfev is not None)
    budget.report(f"fitting {len(prob.ids)} lines", force=True)
    first = solve(prob, budget, max_passes)
    run = Run(prob=prob, fields=assemble(prob, first), solves=[first], shared=shared_width,
              args=args, max_nfev=max_nfev, time_limit=time_limit, progress=progress,
              replays=replays, max_passes=max_passes, started=started,
              replaying=replay_nfev is not None)
    removals, added = [], []
    unjudged = not_judged(first) if prune or add_missed else None
    if unjudged is not None:
        run.flag("fit", unjudged if prune else
                 unjudged.replace("not pruned", "no line added from the residual"))
    else:
        if prune:
            removals = prune_stage(run, heights=heights, widths=widths, keep=keep,
                                   constraints=constraints, conf_interval=conf_interval)
        if add_missed:
            added = missed_stage(run, added_ids_from, added_min_snr)
    if from_t and not_judged(run.sol) is None:  # weights from a fit far from its end mislead
        weighted_stage(run)
    sol, fields, solves = run.sol, run.fields, run.solves
    fields.update(spec=spec, removed=removed_table(removals), added=added_table(added),
                  nfev=sum(s.nfev for s in solves), seconds=sum(s.seconds for s in solves),
                  solve_nfev=tuple(s.nfev for s in solves),
                  solve_stopped=tuple(s.stopped for s in solves),
                  solve_cut=tuple(bool(s.cut) for s in solves))
    cis = None
    if conf_interval is not None and sol.converged:
        res = sol.result
        pn = [conf_interval] if isinstance(conf_interval, str) else list(conf_interval)
        unknown = [p for p in pn if p not in res.params or not res.params[p].vary]
        if unknown:
            raise FitError(f"conf_interval names {unknown}, which are not varied parameters")
        cis = lmfit.conf_interval(sol.minimizer, res, p_names=pn, sigmas=[1, 2])
    total = dataclasses.replace(sol, nfev=fields["nfev"], seconds=fields["seconds"])
    return LineFit(message=verdict(total, max_nfev, time_limit), conf_intervals=cis, **fields)
