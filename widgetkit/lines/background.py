"""A smooth background under the lines, for spectra whose baseline a straight line cannot follow.

A line fit carries a low-order baseline (:mod:`.baselines`) over the whole fitted range. Over a
wide range the true baseline of a spectrum is rarely that simple: a curved instrument
response, an etalon fringe from cell windows, the wing of a broad band. Forced through such a
baseline, a straight line leaves residual bumps of hundreds of σ, the lines widen and wander
to soak them up, and every position and error is then wrong.

``baseline="auto"`` (the default of :meth:`widgetkit.Session.fit_lines`) first asks the data
whether a straight line will do, and only when it will not, estimates a smooth background
and subtracts it before the fit, which then adds a straight-line correction as usual:

1. **Line-free points**: every point further than :data:`REACH` starting FWHM from every line
   (at least two samples), and for a strong line further than where a Lorentzian wing of its
   height falls to the noise, ``½·FWHM·√(h/σ)`` (at most :data:`MAX_REACH` FWHM): wings
   left among the free points would look like a curved baseline. A starting FWHM above
   :data:`WIDE` times the typical one (the median FWHM of the strongest quarter of the
   lines) counts as that: on a curved baseline the starting widths of weak lines are
   measured against the wrong level and come out far too wide.
2. **Does a straight line do?** A straight line is fitted to the line-free points. When their
   scatter about it is within :data:`CURVED` times the noise variance, or not significantly
   above it (5 standard deviations of a chi-square), the background is zero and the fit is
   the plain straight-line fit.
3. **Otherwise a penalised cubic spline** (B-splines with knots every :data:`KNOT_FWHM`
   typical FWHM, at least :data:`KNOT_STEPS` samples, and a small second-difference
   penalty; P-spline in the terms of Eilers & Marx, *Statistical Science* 11 (1996) 89) is
   fitted to the line-free points. Under a line, where no point is used, the penalty makes
   it the smoothest curve that joins the two sides in value and slope, so it bridges a
   fringe or a curve instead of cutting a straight chord under it. Line-free points more
   than :data:`OUTLIER` σ from it (weak lines the peak search left out) are dropped and
   the spline fitted again (twice at most).

4. **An interference fringe** found by the peak search (:mod:`widgetkit.processing.fringe`;
   the session passes it on) is part of the background: its sinusoids, at the frequencies
   the peak search measured, are fitted again to the line-free points together with the
   spline (their coefficients unpenalised), and the background is estimated even when,
   without the fringe, a straight line would do (then the spline is left out).

The knots are set from the lines, so the background cannot make a line-shaped bump; it
follows anything broader than a few line widths. The record says when a background was
subtracted (:class:`Background` ``.describe()``).

Limits: a spectrum with hardly any line-free point (a dense band at low resolution) gives
no estimate, and the straight line is used as before; a baseline with structure as narrow
as the lines cannot be told from lines by any method.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field

import numpy as np
from scipy import sparse
from scipy.interpolate import BSpline
from scipy.optimize import minimize_scalar
from scipy.sparse.linalg import spsolve

from ..errors import FitError
from ..processing.fringe import Fringe
from .start import far_from_lines

__all__ = ["Background", "smooth_background", "fringe_background", "as_fringe", "line_free",
           "REACH", "CURVED", "KNOT_FWHM"]

#: a point closer than this many starting FWHM to a line is not line-free
REACH = 3.0
#: starting FWHM above this many typical FWHM count as this many
WIDE = 3.0
#: the reach of a strong line's wings, at most this many FWHM
MAX_REACH = 30.0
#: line-free scatter about a straight line below this many noise variances: no background
CURVED = 1.3
#: knot spacing of the spline, in median line FWHM
KNOT_FWHM = 4.0
#: knot spacing of the spline, at least this many samples
KNOT_STEPS = 10
#: line-free points further than this many σ from the spline are left out of the next pass
OUTLIER = 4.0
#: the second-difference penalty, relative to the points per knot interval
PENALTY = 0.01
#: fewer line-free points than this (or than a tenth of the data) give no estimate
MIN_FREE = 20


@dataclass(frozen=True)
class Background:
    """A smooth background subtracted before a line fit.

    Attributes
    ----------
    knots, coefficients : ndarray
        The cubic B-spline (``scipy.interpolate.BSpline(knots, coefficients, 3)``).
    values : ndarray
        The background at every fitted point, y units.
    knot_spacing : float
        Spacing of the spline knots, cm⁻¹.
    n_free : int
        Line-free points it was fitted to.
    straight_ratio : float
        Scatter of the line-free points about a straight line, in noise variances (what
        decided that a straight line would not do).
    fringe : Fringe or None
        The interference fringe in the background (refitted on the line-free points); no
        knots then means no spline, only the fringe.
    """

    knots: np.ndarray = field(repr=False)
    coefficients: np.ndarray = field(repr=False)
    values: np.ndarray = field(repr=False)
    knot_spacing: float
    n_free: int
    straight_ratio: float
    fringe: Fringe | None = None

    def at(self, x) -> np.ndarray:
        """The background at ``x`` (cm⁻¹; the spline is 0 outside its knots)."""
        xa = np.asarray(x, dtype=float)
        out = np.zeros_like(xa)
        if self.knots.size:
            spline = BSpline(self.knots, self.coefficients, 3, extrapolate=False)
            out += np.nan_to_num(spline(xa), nan=0.0)
        if self.fringe is not None:
            out += self.fringe.at(xa)
        return out

    def to_json(self) -> dict:
        out = {"knots": self.knots.tolist(), "coefficients": self.coefficients.tolist(),
               "knot_spacing": self.knot_spacing, "n_free": self.n_free,
               "straight_ratio": self.straight_ratio}
        if self.fringe is not None:
            out["fringe"] = self.fringe.to_json()
        return out

    @classmethod
    def from_json(cls, d, x) -> Background:
        """The background of a record ``d`` (:meth:`to_json`), evaluated at ``x``."""
        knots = np.asarray(d["knots"], dtype=float)
        coefficients = np.asarray(d["coefficients"], dtype=float)
        fringe = Fringe.from_json(d["fringe"]) if d.get("fringe") is not None else None
        tmp = cls(knots, coefficients, np.zeros(0), float(d["knot_spacing"]), int(d["n_free"]),
                  float(d["straight_ratio"]), fringe)
        return dataclasses.replace(tmp, values=tmp.at(x))

    def describe(self) -> str:
        parts = []
        if self.knots.size:
            parts.append(f"a smooth background (cubic spline, knots every "
                         f"{self.knot_spacing:.3g} cm-1, fitted to {self.n_free} line-free "
                         f"points) was subtracted before the fit: about a straight line those "
                         f"points scatter {self.straight_ratio:.3g} x the noise variance")
        if self.fringe is not None:
            how = (f"refitted to {self.n_free} line-free points" if self.n_free else
                   "as the peak search measured it: too few line-free points to refit it")
            parts.append(self.fringe.describe().replace(
                "was set aside", f"was subtracted before the fit ({how})"))
        return "; ".join(parts)


def line_free(x: np.ndarray, positions: np.ndarray, fwhm: np.ndarray, heights: np.ndarray,
              sigma: float, dx: float) -> np.ndarray:
    """Points beyond the reach of every line (module docstring, step 1)."""
    f = np.abs(np.asarray(fwhm, dtype=float))
    ok = np.isfinite(f) & (f > 0)
    wings = 0.5 * np.sqrt(np.abs(np.asarray(heights, dtype=float)[ok]) / sigma)
    reach = np.maximum(np.clip(np.nan_to_num(wings), REACH, MAX_REACH) * f[ok], 2.0 * dx)
    return far_from_lines(x, np.asarray(positions, dtype=float)[ok], reach)


def _straight_ratio(x: np.ndarray, y: np.ndarray, free: np.ndarray, sigma: float
                    ) -> tuple[float, bool]:
    """Scatter of the free points about a straight line in noise variances, and whether it
    is too large for a straight line (module docstring, step 2)."""
    xf, yf = x[free], y[free]
    a = np.vstack([np.ones_like(xf), xf - xf.mean()]).T
    coef, *_ = np.linalg.lstsq(a, yf, rcond=None)
    dof = max(xf.size - 2, 1)
    chi2 = float(np.sum((yf - a @ coef) ** 2)) / sigma**2
    ratio = chi2 / dof
    return ratio, ratio > CURVED and chi2 > dof + 5.0 * math.sqrt(2.0 * dof)


def _pspline(x: np.ndarray, y: np.ndarray, use: np.ndarray, spacing: float | None,
             extra: np.ndarray | None = None
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Penalised cubic B-spline (``spacing`` None: a straight line, unpenalised) plus the
    unpenalised columns ``extra`` (n, m), fitted to the ``use`` points: knots (empty for
    the straight line), spline coefficients, the coefficients of ``extra`` and the values of
    the spline part at every x."""
    k = 3
    if spacing is None:
        t = np.zeros(0)
        b = sparse.csr_matrix(np.column_stack([np.ones_like(x), x - x.mean()]))
        n_pen = 0
    else:
        n_int = max(1, int(math.ceil((x[-1] - x[0]) / spacing)))
        inner = np.linspace(x[0], x[-1], n_int + 1)
        t = np.concatenate([[x[0]] * k, inner, [x[-1]] * k])
        b = BSpline.design_matrix(x, t, k).tocsr()
        n_pen = b.shape[1]
    nb = b.shape[1]
    full = b if extra is None else sparse.hstack([b, sparse.csr_matrix(extra)]).tocsr()
    nc = full.shape[1]
    w = sparse.diags(use.astype(float))
    lhs = full.T @ w @ full
    if n_pen > 2:
        d2 = sparse.diags([np.ones(n_pen - 2), -2.0 * np.ones(n_pen - 2), np.ones(n_pen - 2)],
                          [0, 1, 2], shape=(n_pen - 2, nc))
        per_knot = max(float(use.sum()) / n_pen, 1.0)
        lhs = lhs + PENALTY * per_knot * (d2.T @ d2)
    c = np.atleast_1d(spsolve(lhs.tocsc(), full.T @ (use * y)))
    return t, c[:nb], c[nb:], b @ c[:nb]


def smooth_background(x, y, positions, fwhm, heights, sigma: float,
                      fringe: Fringe | None = None) -> Background | None:
    """The smooth background under the lines of ``y(x)``, or None when a straight line
    does (module docstring).

    Parameters
    ----------
    x, y : ndarray
        Ascending wavenumber and data.
    positions, fwhm, heights : array_like
        Starting centres and FWHM of the lines (cm⁻¹) and their heights (y units).
    sigma : float
        Noise σ of y (without the fringe).
    fringe : Fringe, optional
        An interference fringe found by the peak search: always part of the background,
        refitted to the line-free points (as given when there are too few).
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    pos = np.asarray(positions, float)
    f, h = np.abs(np.asarray(fwhm, float)), np.abs(np.asarray(heights, float))
    if x.size < 4 * KNOT_STEPS or not (sigma > 0 and math.isfinite(sigma)) or pos.size == 0:
        return fringe_background(fringe, x)
    dx = float(np.median(np.diff(x)))
    good = np.isfinite(f) & (f > 0) & np.isfinite(h)
    strong = good & (h >= np.quantile(h[good], 0.75)) if good.any() else good
    width = float(np.median(f[strong])) if strong.any() else KNOT_STEPS * dx
    f = np.minimum(f, WIDE * width)
    free = line_free(x, pos, f, h, sigma, dx)
    if free.sum() < max(MIN_FREE, 0.1 * x.size):
        return fringe_background(fringe, x)
    ratio, curved = _straight_ratio(x, y if fringe is None else y - fringe.at(x), free, sigma)
    if not curved and fringe is None:
        return None
    spacing = max(KNOT_FWHM * width, KNOT_STEPS * dx) if curved else None
    if fringe is not None:
        fringe = _retuned(fringe, x, y, free, spacing)
    extra = None if fringe is None else fringe.columns(x)
    use = free.copy()
    for _ in range(3):
        t, c, cf, part = _pspline(x, y, use, spacing, extra)
        rings = 0.0 if extra is None else extra @ cf
        far = use & (np.abs(y - part - rings) > OUTLIER * sigma)
        if not far.any() or (use.sum() - far.sum()) < max(MIN_FREE, 0.05 * x.size):
            break
        use &= ~far
    refitted = None if fringe is None else fringe.with_coefficients(cf)
    if spacing is None:  # the straight line is the fit's own baseline: only the fringe stays
        c, part = np.zeros(0), 0.0
    return Background(knots=t, coefficients=c, values=part + rings,
                      knot_spacing=0.0 if spacing is None else spacing, n_free=int(use.sum()),
                      straight_ratio=ratio, fringe=refitted)


def as_fringe(value) -> Fringe | None:
    """A :class:`~widgetkit.processing.fringe.Fringe` from itself, its JSON or None."""
    if value is None or isinstance(value, Fringe):
        return value
    try:
        return Fringe.from_json(value)
    except (TypeError, KeyError, ValueError) as exc:
        raise FitError(f"fringe must be a Fringe (PeakSearch.context.fringe), its JSON or None, "
                       f"got {type(value).__name__}: {exc}") from None


def _retuned(fringe: Fringe, x, y, use, spacing) -> Fringe:
    """The fringe with its frequencies tuned, one after the other, within one periodogram bin
    of the data (1 / span) to the least residual of spline and fringe on the ``use`` points
    (the peak search measured them with a rougher mask of the lines)."""
    span = float(x[-1] - x[0])
    freqs = np.array(fringe.frequency, dtype=float)

    def rss(f: float, k: int) -> float:
        trial = freqs.copy()
        trial[k] = f
        tuned = dataclasses.replace(fringe, frequency=trial)
        _, _, cf, part = _pspline(x, y, use, spacing, tuned.columns(x))
        r = (y - part - tuned.columns(x) @ cf)[use]
        return float(r @ r)

    for k, f0 in enumerate(freqs.copy()):
        lo, hi = max(f0 - 1.0 / span, 0.5 * f0), f0 + 1.0 / span
        best = minimize_scalar(rss, bounds=(lo, hi), args=(k,), method="bounded",
                               options={"xatol": 1e-3 / span})
        if best.fun < rss(f0, k):
            freqs[k] = float(best.x)
    return dataclasses.replace(fringe, frequency=freqs)


def fringe_background(fringe: Fringe | None, x: np.ndarray) -> Background | None:
    """The peak search's fringe as the whole background (too few line-free points to fit)."""
    if fringe is None:
        return None
    return Background(knots=np.zeros(0), coefficients=np.zeros(0), values=fringe.at(x),
                      knot_spacing=0.0, n_free=0, straight_ratio=0.0, fringe=fringe)
