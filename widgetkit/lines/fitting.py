"""Multi-line fits: :func:`fit` and its result :class:`LineFit`.

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
error of the optimum). A fit that fails comes back with ``converged=False``
and the reason; lines are flagged (``LineFit.flags``) when their starting
height is below the noise, their fitted FWHM is below the sampling step,
their area is not significant, or a parameter ends at its bound.
"""

from __future__ import annotations

import copy
import functools
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import lmfit
import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from ..errors import FitError
from ..processing.noise import estimate_noise
from . import solver, structured
from ._lmfit_sparse import SparseMinimizer
from .baselines import get_baseline
from .derived import line_table, parameter_covariance
from .model import WindowedModel
from .params import ThetaMap, build_params, line_prefix, theta_names
from .shapes import get_shape
from .start import starting_values

__all__ = ["fit", "LineFit", "DEFAULT_WINDOW", "CONVERGENCE_TOL"]

#: default window half-width, in half widths at half maximum of each line
DEFAULT_WINDOW = 100.0
#: converged when the remaining Gauss–Newton reduction is below this many reduced chi-squares
CONVERGENCE_TOL = solver.CONVERGENCE_TOL
#: a line whose starting height is below this many noise sigmas is flagged
BELOW_NOISE = 3.0
#: lower bound of every width parameter, in sampling steps (a narrower line is unresolvable)
MIN_WIDTH = 0.1


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
        success, message, covar).
    params : lmfit.Parameters
        Fitted parameters (``result.params``).
    chisqr, redchi : float
        Sum of squared (weighted) residuals and chisqr / (n - n_varys).
    nfev, njev : int
        Model and Jacobian evaluations over all stages (njev = iterations).
    converged : bool
        Our own convergence test (module docstring), not the solver's flag.
    message : str
        The verdict and lmfit's message.
    flags : dict
        line_id -> tuple of warnings (below noise, at a bound, ...), only for
        flagged lines; key ``"fit"`` for warnings about the whole fit.
    x, y : ndarray
        The data used (after ``region``).
    model_y, baseline_y, residual : ndarray
        Model (windowed evaluation, as fitted), its baseline part, and
        ``y - model_y``.
    components : ndarray, shape (n_lines, n)
        Each line alone, zero outside its window.
    spec : dict
        JSON-able record of what was asked.
    baseline_params : pandas.DataFrame
        name (b0, b1, b2 in the public form of :mod:`.baselines`), value, stderr.
    noise : float
        The noise sigma used (given or estimated).
    conf_intervals : dict or None
        ``lmfit.conf_interval`` output for the parameters asked for.
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


def _as_1d(a, name: str) -> np.ndarray:
    try:
        arr = np.asarray(a, dtype=float).ravel()
    except (TypeError, ValueError):
        raise FitError(f"parameter {name!r} must be numbers, got {type(a).__name__}") from None
    if not np.all(np.isfinite(arr)):
        raise FitError(f"parameter {name!r} contains NaN or infinite values at indices "
                       f"{np.nonzero(~np.isfinite(arr))[0][:5].tolist()}; remove them first")
    return arr


def _prepare_data(x, y, weights, region):
    x, y = _as_1d(x, "x"), _as_1d(y, "y")
    if x.size != y.size:
        raise FitError(f"x and y differ in length ({x.size} and {y.size})")
    w = None if weights is None else _as_1d(weights, "weights")
    if w is not None and w.size != x.size:
        raise FitError(f"weights has {w.size} values for {x.size} data points")
    order = np.argsort(x, kind="stable")
    x, y = x[order], y[order]
    w = None if w is None else w[order]
    if region is not None:
        try:
            lo, hi = sorted(float(r) for r in region)
        except (TypeError, ValueError):
            raise FitError(f"region must be (lo, hi) in cm-1, got {region!r}") from None
        keep = (x >= lo) & (x <= hi)
        x, y = x[keep], y[keep]
        w = None if w is None else w[keep]
    if x.size < 5:
        raise FitError(f"only {x.size} data points to fit (region={region!r}); widen the region")
    if np.any(np.diff(x) <= 0):
        raise FitError("x has repeated values; a fit needs distinct x values")
    return x, y, w


def _plain(obj):
    """numpy scalars and arrays inside settings -> Python numbers and lists."""
    if isinstance(obj, Mapping):
        return {(_plain(k) if isinstance(k, np.generic) else k): _plain(v)
                for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return _plain(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None  # "estimate this one" in heights/widths; JSON has no NaN
    return obj


def _spec(**kw) -> dict:
    spec = copy.deepcopy(_plain(kw))
    try:
        json.dumps(spec, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise FitError(f"fit settings must be plain data (numbers, strings, lists, dicts): "
                       f"{exc}") from None
    return spec


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
        baseline: str | None = "linear", region: Sequence[float] | None = None,
        window: float | None = DEFAULT_WINDOW, line_ids: Sequence | None = None,
        heights=None, widths=None, noise: float | None = None,
        constraints: Mapping | None = None, weights=None,
        conf_interval: str | Sequence[str] | None = None, max_passes: int = 4) -> LineFit:
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
    baseline : {"linear", None, "none", "constant", "poly2", "exponential"}
        Baseline fitted with the lines (:mod:`.baselines`).
    region : (lo, hi), optional
        Only data with lo ≤ x ≤ hi is used.
    window : float or None
        Half-width of each line's evaluation window in its HWHM (default
        :data:`DEFAULT_WINDOW`); None evaluates every line everywhere.
    line_ids : sequence, optional
        Ids for ``table.line_id`` and parameter names ``l<id>_...`` (default 1..m).
    heights, widths : array_like, optional
        Starting heights (y units) and FWHM (cm⁻¹); NaN or None = estimate.
    noise : float, optional
        Noise sigma of y; measured on the line-free points if None
        (:func:`widgetkit.processing.estimate_noise`).
    constraints : mapping, optional
        Ties, fixed values, bounds and ``"doppler"`` (:mod:`.params`).
    weights : array_like, optional
        Residual weights, ``residual = (model - y) * weights`` (1/sigma_i).
    conf_interval : str or list of str, optional
        Parameter names for :func:`lmfit.conf_interval` (1 and 2 sigma).
    max_passes : int
        Solver restarts allowed by the convergence test.

    Returns
    -------
    LineFit

    Raises
    ------
    FitError
        Set-up errors only: no lines, unknown shape or baseline, a centre
        outside the data, bad ids, a bad constraint. A fit that fails is
        returned with ``converged=False``.
    """
    shp, bl = get_shape(shape), get_baseline(baseline)
    spec = _spec(shape=shp.name, shared_width=shared_width, baseline=bl.name, region=(
        None if region is None else [float(r) for r in region]), window=window,
        constraints=dict(constraints or {}), positions=_as_1d(positions, "positions").tolist(),
        line_ids=None if line_ids is None else list(line_ids),
        heights=None if heights is None else np.asarray(heights, float).tolist(),
        widths=None if widths is None else np.asarray(widths, float).tolist(),
        noise=noise)
    if window is not None and (isinstance(window, bool)
                               or not isinstance(window, (int, float, np.number))
                               or not float(window) > 1.0):
        raise FitError(f"window must be a number of half widths above 1 or None, got {window!r}")
    xs, ys, ws = _prepare_data(x, y, weights, region)
    pos = _as_1d(positions, "positions")
    if pos.size == 0:
        raise FitError("no lines to fit (parameter 'positions' is empty); find or add peaks "
                       "first")
    ids = list(range(1, pos.size + 1)) if line_ids is None else _plain(list(line_ids))
    if len(ids) != pos.size or len(set(map(str, ids))) != len(ids):
        raise FitError(f"line_ids must be {pos.size} distinct ids, got {ids!r}")
    for i, p in zip(ids, pos):
        line_prefix(i)
        if not xs[0] <= p <= xs[-1]:
            raise FitError(f"line {i!r} at {p:g} cm-1 lies outside the data "
                           f"[{xs[0]:g}, {xs[-1]:g}] cm-1 (region={region!r}); remove it or "
                           "widen the region")
    for name, arr in (("heights", heights), ("widths", widths)):
        if arr is not None and np.asarray(arr, dtype=float).size != pos.size:
            raise FitError(f"{name} has {np.asarray(arr).size} values for {pos.size} lines")
    sigma_n = estimate_noise(ys) if noise is None else float(noise)
    x_ref = 0.5 * (xs[0] + xs[-1])
    st = starting_values(xs, ys, pos, bl, x_ref, heights, widths)

    flags: dict = {}
    for i, h in zip(ids, st.heights):
        if abs(h) < BELOW_NOISE * sigma_n:
            flags.setdefault(i, []).append(
                f"starting height {h:.3g} is below {BELOW_NOISE:g} x noise ({sigma_n:.3g})")
    w0 = shp.widths_from_fwhm(st.fwhm)
    area0 = st.heights / shp.height(1.0, *w0)
    theta0 = np.concatenate([area0, pos, *w0, st.baseline])
    names = theta_names(shp, ids, bl)
    dx = float(np.median(np.diff(xs)))
    span = float(xs[-1] - xs[0])
    bounds = {}
    for i, h in zip(ids, st.heights):
        p = line_prefix(i)
        bounds[p + "area"] = (0.0, np.inf) if h >= 0 else (-np.inf, 0.0)
        bounds[p + "position"] = (float(xs[0]), float(xs[-1]))
        for wname in shp.widths:
            bounds[p + wname] = (MIN_WIDTH * dx, span)
    params = build_params(shp, bl, ids, theta0, bounds, _plain(shared_width),
                          _plain(constraints))
    tmap = ThetaMap(params, names)
    model = WindowedModel(xs, ys, ws, shp, bl, x_ref, len(ids), tmap, window)
    model.set_windows(tmap.values(model.variables(params)))
    def expr_stderr(covar, fitted):
        values, cov_all = parameter_covariance(tmap, model.variables(fitted), covar)
        return {n: np.sqrt(max(cov_all[k, k], 0.0)) for n, (_, k) in values.items()
                if fitted[n].expr is not None}

    mini = SparseMinimizer(model.residual, params, jac=model.jacobian, scale_covar=True,
                           expr_stderr=expr_stderr)
    lo = np.array([params[n].min for n in tmap.var_names], dtype=float)
    hi = np.array([params[n].max for n in tmap.var_names], dtype=float)

    nfev, njev, crit, at_bound, res, error = 0, 0, np.inf, [], None, None
    nfree = xs.size - len(tmap.var_names)
    v = model.variables(params)
    wing_tol = 1e-3 * (sigma_n if sigma_n > 0 else max(float(np.max(np.abs(ys))), 1e-300))
    model.set_wings(tmap.values(v))
    for _ in range(max(1, int(max_passes))):
        with np.errstate(all="ignore"):
            v, crit, at_bound, n_ev, n_jev = solver.levenberg_marquardt(model, v, lo, hi, nfree)
        nfev += n_ev
        njev += n_jev
        theta = tmap.values(v)
        stable = solver.rewindow(model, theta)
        wings_moved = model.set_wings(theta) > wing_tol
        if crit >= CONVERGENCE_TOL or (stable and not wings_moved):
            break  # converged, or stuck: lmfit's solver below takes over
    # lmfit's least_squares from the solution gives the lmfit result there (and
    # takes over from wherever Levenberg–Marquardt stopped)
    current = params  # ours, built above; lmfit's prepare_fit copies it
    for n, val in zip(tmap.var_names, v):
        current[n].value = float(val)
    current.update_constraints()
    try:
        # from a converged point one cheap trust-region iteration is all lmfit needs
        extra = {"tr_options": {"maxiter": 25}} if crit < CONVERGENCE_TOL else {}
        if model.structured:  # many variables: no dense step anywhere (lines.structured)
            res = structured.lmfit_result(mini, model, current, v)
        else:
            res = mini.least_squares(params=current, **extra)
        nfev += int(res.nfev)
        njev += int(getattr(res, "njev", 0) or 0)
        if res.aborted or not np.isfinite(res.chisqr):
            error = f"the solver stopped: {res.message}"
        else:
            v = model.variables(res.params)
            crit, held = solver.certify(getattr(res, "jac", None), res.residual, v, lo, hi,
                                        res.redchi, model=model)
            at_bound = [tmap.var_names[k] for k in held]
    except (ValueError, FloatingPointError, np.linalg.LinAlgError) as exc:
        error = f"the solver failed: {exc}"
        res = mini.prepare_fit(current)
        res.method = "least_squares"
        res.residual = model.residual_vec(v)
        res._calculate_statistics()
        res.success, res.message = False, error
    converged = error is None and 0.0 <= crit < CONVERGENCE_TOL
    if converged:
        message = (f"converged (remaining Gauss-Newton reduction {crit:.2g} reduced "
                   f"chi-squares); lmfit: {res.message}")
    elif error is not None:
        message = f"not converged: {error}"
    else:
        message = (f"not converged: a further Gauss-Newton step would still lower chi-square "
                   f"by {crit:.3g} reduced chi-squares; lmfit: {res.message}")
    for name in at_bound:
        lid = next((i for i in ids if name.startswith(line_prefix(i))), "fit")
        flags.setdefault(lid, []).append(f"{name} ended at its bound")
    v = model.variables(res.params)
    theta = tmap.values(v)
    covar = getattr(res, "covar", None)
    values, cov_all = parameter_covariance(tmap, v, covar)
    table = line_table(shp, ids, values, cov_all)
    nb = len(bl.params)
    bc = theta[len(theta) - nb:]
    bcov = None
    if cov_all is not None and nb:
        k = [values[n][1] for n in bl.params]
        bcov = cov_all[np.ix_(k, k)]
    bvals, berrs = bl.public(bc, bcov, x_ref)
    t_fwhm, t_area, t_err = (table[c].to_numpy() for c in ("fwhm", "area", "area_err"))
    for k in np.nonzero(t_fwhm < dx)[0]:
        flags.setdefault(ids[k], []).append(
            f"fitted FWHM {t_fwhm[k]:.3g} is below the sampling step {dx:.3g}: a spike "
            "fitted to noise?")
    for k in np.nonzero(np.isfinite(t_err) & (np.abs(t_area) < 3.0 * t_err))[0]:
        flags.setdefault(ids[k], []).append(
            f"area {t_area[k]:.3g} is not significant (standard error {t_err[k]:.3g})")
    baseline_params = pd.DataFrame({"name": list(bl.public_names), "value": bvals,
                                    "stderr": berrs})
    model_y = model.evaluate(theta)
    baseline_y = bl.evaluate(model.u, bc)
    if ws is None and sigma_n > 0 and res.nfree > 0:
        ratio = res.redchi / sigma_n**2
        if ratio > 1.5:
            flags.setdefault("fit", []).append(
                f"chi-square is {ratio:.2f} x its expected value from the noise "
                f"({sigma_n:.3g}): missing lines, wrong shape or baseline?")
    cis = None
    if conf_interval is not None and converged:
        pn = [conf_interval] if isinstance(conf_interval, str) else list(conf_interval)
        unknown = [p for p in pn if p not in res.params or not res.params[p].vary]
        if unknown:
            raise FitError(f"conf_interval names {unknown}, which are not varied parameters")
        cis = lmfit.conf_interval(mini, res, p_names=pn, sigmas=[1, 2])
    return LineFit(
        table=table, result=res, params=res.params, chisqr=float(res.chisqr),
        redchi=float(res.redchi), nfev=nfev, converged=bool(converged), message=message,
        flags={k: tuple(v) for k, v in flags.items()}, x=xs, y=ys, model_y=model_y,
        baseline_y=baseline_y, components=model.components(theta), residual=ys - model_y,
        spec=spec, baseline_params=baseline_params, noise=sigma_n, conf_intervals=cis,
        njev=njev)
