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
from scipy.sparse.linalg import spsolve

from .start import far_from_lines

__all__ = ["Background", "smooth_background", "line_free", "REACH", "CURVED", "KNOT_FWHM"]

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
    """

    knots: np.ndarray = field(repr=False)
    coefficients: np.ndarray = field(repr=False)
    values: np.ndarray = field(repr=False)
    knot_spacing: float
    n_free: int
    straight_ratio: float

    def at(self, x) -> np.ndarray:
        """The background at ``x`` (cm⁻¹; 0 outside the knots)."""
        spline = BSpline(self.knots, self.coefficients, 3, extrapolate=False)
        return np.nan_to_num(spline(np.asarray(x, dtype=float)), nan=0.0)

    def to_json(self) -> dict:
        return {"knots": self.knots.tolist(), "coefficients": self.coefficients.tolist(),
                "knot_spacing": self.knot_spacing, "n_free": self.n_free,
                "straight_ratio": self.straight_ratio}

    @classmethod
    def from_json(cls, d, x) -> Background:
        """The background of a record ``d`` (:meth:`to_json`), evaluated at ``x``."""
        knots = np.asarray(d["knots"], dtype=float)
        coefficients = np.asarray(d["coefficients"], dtype=float)
        tmp = cls(knots, coefficients, np.zeros(0), float(d["knot_spacing"]), int(d["n_free"]),
                  float(d["straight_ratio"]))
        return dataclasses.replace(tmp, values=tmp.at(x))

    def describe(self) -> str:
        return (f"a smooth background (cubic spline, knots every {self.knot_spacing:.3g} "
                f"cm-1, fitted to {self.n_free} line-free points) was subtracted before the "
                f"fit: about a straight line those points scatter {self.straight_ratio:.3g} x "
                "the noise variance")


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


def _pspline(x: np.ndarray, y: np.ndarray, use: np.ndarray, spacing: float
             ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Penalised cubic B-spline through the ``use`` points: knots, coefficients and the
    values at every x."""
    k = 3
    n_int = max(1, int(math.ceil((x[-1] - x[0]) / spacing)))
    inner = np.linspace(x[0], x[-1], n_int + 1)
    t = np.concatenate([[x[0]] * k, inner, [x[-1]] * k])
    b = BSpline.design_matrix(x, t, k).tocsr()
    w = sparse.diags(use.astype(float))
    nc = b.shape[1]
    d2 = sparse.diags([np.ones(nc - 2), -2.0 * np.ones(nc - 2), np.ones(nc - 2)], [0, 1, 2],
                      shape=(nc - 2, nc))
    per_knot = max(float(use.sum()) / nc, 1.0)
    lhs = (b.T @ w @ b + PENALTY * per_knot * (d2.T @ d2)).tocsc()
    rhs = b.T @ (use * y)
    c = spsolve(lhs, rhs)
    return t, c, b @ c


def smooth_background(x, y, positions, fwhm, heights, sigma: float) -> Background | None:
    """The smooth background under the lines of ``y(x)``, or None when a straight line
    does (module docstring).

    Parameters
    ----------
    x, y : ndarray
        Ascending wavenumber and data.
    positions, fwhm, heights : array_like
        Starting centres and FWHM of the lines (cm⁻¹) and their heights (y units).
    sigma : float
        Noise σ of y.
    """
    x, y = np.asarray(x, float), np.asarray(y, float)
    pos = np.asarray(positions, float)
    f, h = np.abs(np.asarray(fwhm, float)), np.abs(np.asarray(heights, float))
    if x.size < 4 * KNOT_STEPS or not (sigma > 0 and math.isfinite(sigma)) or pos.size == 0:
        return None
    dx = float(np.median(np.diff(x)))
    good = np.isfinite(f) & (f > 0) & np.isfinite(h)
    strong = good & (h >= np.quantile(h[good], 0.75)) if good.any() else good
    width = float(np.median(f[strong])) if strong.any() else KNOT_STEPS * dx
    f = np.minimum(f, WIDE * width)
    free = line_free(x, pos, f, h, sigma, dx)
    if free.sum() < max(MIN_FREE, 0.1 * x.size):
        return None
    ratio, curved = _straight_ratio(x, y, free, sigma)
    if not curved:
        return None
    spacing = max(KNOT_FWHM * width, KNOT_STEPS * dx)
    use = free.copy()
    for _ in range(3):
        t, c, bg = _pspline(x, y, use, spacing)
        far = use & (np.abs(y - bg) > OUTLIER * sigma)
        if not far.any() or (use.sum() - far.sum()) < max(MIN_FREE, 0.05 * x.size):
            break
        use &= ~far
    return Background(knots=t, coefficients=c, values=bg, knot_spacing=spacing, n_free=int(use.sum()),
                      straight_ratio=ratio)
