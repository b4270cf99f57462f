"""Set-up of a line fit: checked data, the settings record, starting values, parameters
with their bounds and the windowed model (:class:`Problem`).

Everything here is checked before any solving starts: a set-up error raises
:class:`~widgetkit.errors.FitError` naming the parameter and the fix, and nothing is
fitted.
"""

from __future__ import annotations

import copy
import dataclasses
import json
from collections.abc import Mapping
from dataclasses import dataclass

import lmfit
import numpy as np

from ..errors import FitError
from ..processing.fringe import Fringe
from ..processing.noise import estimate_noise
from .background import Background, fringe_background, smooth_background
from .baselines import Baseline, get_baseline
from .model import WindowedModel
from .params import ThetaMap, build_params, line_prefix, theta_names
from .shapes import Shape, get_shape
from .start import Starts, starting_values

__all__ = ["Problem", "set_up", "plain", "BELOW_NOISE", "MIN_WIDTH", "MAX_WIDTH_GROWTH"]

#: a line whose starting height is below this many noise sigmas is flagged
BELOW_NOISE = 3.0
#: lower bound of every width parameter, in sampling steps (a narrower line is unresolvable)
MIN_WIDTH = 0.1
#: upper bound of a line's width parameters, in its starting FWHM (at least
#: :data:`MIN_MAX_WIDTH` sampling steps): a line that wants to be wider than this is
#: not the line that was found (it is spreading over a blend or the baseline); its
#: width then ends on the bound, where it is flagged and pruned
MAX_WIDTH_GROWTH = 10.0
#: the solver keeps every line area within this many times (largest |y|) x (span of x):
#: no line of the data can have more, and an area the data do not constrain (a line
#: narrowed between two samples) would otherwise run off to 1e200 and beyond
AREA_LIMIT = 1e3
MIN_MAX_WIDTH = 20.0
#: a line's centre stays within this many starting FWHM of where it was found (at least
#: :data:`MIN_REACH` sampling steps): further away it is not the line that was found. Left
#: free over the whole data range, the lines of a spectrum the model cannot describe were
#: measured wandering hundreds of cm-1 to soak up baseline structure, which kept such fits
#: from converging; a centre that ends on this bound is flagged, and pruning judges a line
#: that moved more than :data:`~.prune.MOVE_WIDTHS` FWHM anyway
POSITION_REACH = 1.5
MIN_REACH = 3.0
#: a background on which this fraction more of the lines start against the majority sign
#: is not used
MAX_FLIPPED = 0.05
#: when this fraction of the starting heights has one sign, every line takes it
ONE_SIGN = 0.8


@dataclass
class Problem:
    """One line fit, set up: data, shape and baseline, ids, starts, parameters, model.

    ``flags`` collects warnings per line id (key ``"fit"`` for the whole fit) while
    the fit runs; ``lo``/``hi`` are the bounds of the variables in ``tmap.var_names``
    order; ``dx`` the median sampling step, ``nfree`` points minus variables.
    """

    xs: np.ndarray
    ys: np.ndarray
    ws: np.ndarray | None
    shape: Shape
    baseline: Baseline
    ids: list
    positions: np.ndarray
    noise: float
    x_ref: float
    starts: Starts
    params: lmfit.Parameters
    tmap: ThetaMap
    model: WindowedModel
    lo: np.ndarray
    hi: np.ndarray
    dx: float
    nfree: int
    spec: dict
    flags: dict
    background: Background | None = None

    @property
    def yfit(self) -> np.ndarray:
        """The data the lines and the fitted baseline are fitted to (minus the background)."""
        return self.ys if self.background is None else self.ys - self.background.values


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


def plain(obj):
    """numpy scalars and arrays inside settings -> Python numbers and lists."""
    if isinstance(obj, Mapping):
        return {(plain(k) if isinstance(k, np.generic) else k): plain(v)
                for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [plain(v) for v in obj]
    if isinstance(obj, np.ndarray):
        return plain(obj.tolist())
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not np.isfinite(obj):
        return None  # "estimate this one" in heights/widths; JSON has no NaN
    return obj


def _spec(**kw) -> dict:
    spec = copy.deepcopy(plain(kw))
    try:
        json.dumps(spec, allow_nan=False)
    except (TypeError, ValueError) as exc:
        raise FitError(f"fit settings must be plain data (numbers, strings, lists, dicts): "
                       f"{exc}") from None
    return spec


def _check_lines(xs, positions, line_ids, heights, widths, region):
    pos = _as_1d(positions, "positions")
    if pos.size == 0:
        raise FitError("no lines to fit (parameter 'positions' is empty); find or add peaks "
                       "first")
    ids = list(range(1, pos.size + 1)) if line_ids is None else plain(list(line_ids))
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
    return pos, ids


def set_up(x, y, positions, *, shape, shared_width, baseline, region, window, line_ids,
           heights, widths, noise, constraints, weights, extra_spec: Mapping,
           holds: Mapping | None = None, background: Background | None = None,
           fringe: Fringe | None = None) -> Problem:
    """Check everything and build the :class:`Problem` (arguments as :func:`~.fitting.fit`;
    ``extra_spec`` joins the settings record; ``holds`` maps line ids to
    ``{"position": (lo, hi), "width_max": w}``, either optional: bounds of a line's
    centre and widths, within the usual ones; ``background`` one already estimated, for
    the repeated fit of ``baseline="auto"``; ``fringe`` an interference fringe to make part of
    the background of ``baseline="auto"``)."""
    auto = isinstance(baseline, str) and baseline == "auto"
    shp, bl = get_shape(shape), get_baseline("linear" if auto else baseline)
    spec = _spec(shape=shp.name, shared_width=shared_width,
                 baseline="auto" if auto else bl.name, region=(
        None if region is None else [float(r) for r in region]), window=window,
        constraints=dict(constraints or {}), positions=_as_1d(positions, "positions").tolist(),
        line_ids=None if line_ids is None else list(line_ids),
        heights=None if heights is None else np.asarray(heights, float).tolist(),
        widths=None if widths is None else np.asarray(widths, float).tolist(),
        noise=noise, **extra_spec)
    if window is not None and (isinstance(window, bool)
                               or not isinstance(window, (int, float, np.number))
                               or not float(window) > 1.0):
        raise FitError(f"window must be a number of half widths above 1 or None, got {window!r}")
    xs, ys, ws = _prepare_data(x, y, weights, region)
    pos, ids = _check_lines(xs, positions, line_ids, heights, widths, region)
    fringe = fringe if auto and background is None else None
    if noise is not None:
        sigma_n = float(noise)
    else:
        sigma_n = estimate_noise(ys if fringe is None else ys - fringe.at(xs))
    x_ref = 0.5 * (xs[0] + xs[-1])
    st, background, bg_flags = _starts(xs, ys, pos, bl, x_ref, heights, widths, sigma_n,
                                       auto, background, fringe)
    flags: dict = {"fit": bg_flags} if bg_flags else {}
    st = _one_sign(st, ids, sigma_n, heights, flags)
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
    for i, x0, h, f in zip(ids, pos, st.heights, st.fwhm):
        p = line_prefix(i)
        bounds[p + "area"] = (0.0, np.inf) if h >= 0 else (-np.inf, 0.0)
        hold = (holds or {}).get(i, {})
        lo_p, hi_p = hold.get("position") or (xs[0], xs[-1])
        reach = max(POSITION_REACH * abs(float(f)), MIN_REACH * dx)
        bounds[p + "position"] = (max(float(lo_p), float(x0) - reach, float(xs[0])),
                                  min(float(hi_p), float(x0) + reach, float(xs[-1])))
        wmax = min(span, max(MAX_WIDTH_GROWTH * abs(float(f)), MIN_MAX_WIDTH * dx))
        if hold.get("width_max") is not None:
            wmax = max(min(wmax, float(hold["width_max"])), 2.0 * MIN_WIDTH * dx)
        for wname in shp.widths:
            bounds[p + wname] = (MIN_WIDTH * dx, wmax)
    params = build_params(shp, bl, ids, theta0, bounds, plain(shared_width), plain(constraints))
    tmap = ThetaMap(params, names)
    yfit = ys if background is None else ys - background.values
    model = WindowedModel(xs, yfit, ws, shp, bl, x_ref, len(ids), tmap, window)
    model.set_windows(tmap.values(model.variables(params)))
    lo = np.array([params[n].min for n in tmap.var_names], dtype=float)
    hi = np.array([params[n].max for n in tmap.var_names], dtype=float)
    _limit_areas(tmap.var_names, lo, hi, ys, span)
    return Problem(xs=xs, ys=ys, ws=ws, shape=shp, baseline=bl, ids=ids, positions=pos,
                   noise=sigma_n, x_ref=x_ref, starts=st, params=params, tmap=tmap, model=model,
                   lo=lo, hi=hi, dx=dx, nfree=xs.size - len(tmap.var_names), spec=spec,
                   flags=flags, background=background)


def _starts(xs, ys, pos, bl, x_ref, heights, widths, sigma, auto: bool,
            background: Background | None, fringe: Fringe | None = None
            ) -> tuple[Starts, Background | None, list]:
    """Starting values, on the smooth background when there is one (given, or estimated for
    ``baseline="auto"`` and not refused), the background, and the fit's flags about it."""
    if background is not None:
        on_bg = starting_values(xs, ys - background.values, pos, bl, x_ref, heights, widths)
        return on_bg, background, [background.describe()]
    plain = ys if fringe is None else ys - fringe.at(xs)
    st = starting_values(xs, plain, pos, bl, x_ref, heights, widths)
    bg = (smooth_background(xs, ys, pos, st.fwhm, st.heights, sigma, fringe=fringe)
          if auto else None)
    if bg is None:
        return st, None, []
    on_bg = starting_values(xs, ys - bg.values, pos, bl, x_ref, heights, widths)
    sign = 1.0 if np.mean(st.heights > 0) >= 0.5 else -1.0
    against = np.mean(np.sign(on_bg.heights) != sign) - np.mean(np.sign(st.heights) != sign)
    if against > MAX_FLIPPED:  # it rose above lines: a dense band, not a baseline
        why = (f"a smooth background was estimated and not used: on it {against:.0%} more of "
               "the lines would start with the sign of no other line")
        only = fringe_background(fringe, xs)
        return (st, None, [why]) if only is None else (st, only, [why, only.describe()])
    return on_bg, bg, [bg.describe()]


def _one_sign(st: Starts, ids, sigma: float, given, flags: dict) -> Starts:
    """Lines all of one sign when at least :data:`ONE_SIGN` of the starting heights are:
    a line that starts with the other sign (its starting baseline sat above it, in a dense
    band with no line-free point) would otherwise be held to that sign for the whole fit.
    Heights the caller gave are left as they are."""
    h = np.asarray(st.heights, dtype=float)
    if h.size < 3:
        return st
    up = float(np.mean(h > 0))
    sign = 1.0 if up >= ONE_SIGN else -1.0 if up <= 1.0 - ONE_SIGN else 0.0
    fixed = np.asarray(given, dtype=float) if given is not None else np.full(h.size, np.nan)
    wrong = (np.sign(h) != sign) & ~np.isfinite(fixed) if sign else np.zeros(h.size, bool)
    if not wrong.any():
        return st
    new = np.where(wrong, sign * np.maximum(np.abs(h), BELOW_NOISE * sigma), h)
    for i in np.asarray(ids, dtype=object)[wrong]:
        flags.setdefault(i, []).append(
            "its starting height had the sign of no other line (the starting baseline sat "
            "above it); it starts with the sign of the others")
    return dataclasses.replace(st, heights=new)


def _limit_areas(names, lo, hi, ys, span: float) -> None:
    """Finite solver bounds on the areas (:data:`AREA_LIMIT`), in place; the lmfit
    parameters keep theirs, so a fit that never comes near the limit is unchanged."""
    amax = AREA_LIMIT * max(float(np.max(np.abs(ys))), 1e-300) * max(span, 1e-300)
    for k, n in enumerate(names):
        if n.endswith("_area"):
            lo[k], hi[k] = max(lo[k], -amax), min(hi[k], amax)
