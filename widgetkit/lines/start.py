"""Robust starting values for a line fit (the noise σ is
:func:`widgetkit.processing.estimate_noise`, the one implementation).

* Baseline: least squares on the points away from every line (first the
  outer 5 % of the data at each end, then every point more than 5 starting
  FWHM from any line).
* Height: data minus that baseline at the starting position.
* FWHM: the distance between the half-maximum crossings on both sides,
  linearly interpolated, searched no further than half way to the next line;
  one crossing found gives twice that half width.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .baselines import Baseline

__all__ = ["Starts", "starting_values"]


@dataclass(frozen=True)
class Starts:
    """Starting values: baseline coefficients (internal), heights and FWHM per line."""

    baseline: np.ndarray
    heights: np.ndarray
    fwhm: np.ndarray


def _half_width(yb: np.ndarray, x: np.ndarray, i0: int, h: float, lo: int, hi: int, step: int):
    """Distance from x[i0] to the half-maximum crossing, walking by ``step``."""
    stop = hi if step > 0 else lo
    idx = np.arange(i0, stop, step)
    if idx.size < 2:
        return None
    seg = yb[idx] * np.sign(h)
    below = np.nonzero(seg < 0.5 * abs(h))[0]
    if below.size == 0 or below[0] == 0:
        return None
    k = below[0]
    a, b = seg[k - 1], seg[k]
    xa, xb = x[idx[k - 1]], x[idx[k]]
    xc = xa + (0.5 * abs(h) - a) * (xb - xa) / (b - a) if b != a else xb
    return abs(xc - x[i0])


def far_from_lines(x: np.ndarray, positions: np.ndarray, reach: np.ndarray) -> np.ndarray:
    """Points further than ``reach`` from every line (linear in lines + points)."""
    lo = np.searchsorted(x, positions - reach, side="left")  # covered: [lo, hi)
    hi = np.searchsorted(x, positions + reach, side="right")
    cover = np.zeros(x.size + 1, dtype=np.int64)
    np.add.at(cover, lo, 1)
    np.add.at(cover, np.maximum(hi, lo), -1)
    return np.cumsum(cover[:-1]) == 0


def starting_values(x: np.ndarray, y: np.ndarray, positions: np.ndarray, baseline: Baseline,
                    x_ref: float, heights=None, fwhm=None) -> Starts:
    """Robust starting values from the data (see the module docstring).

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        Data, x ascending (cm⁻¹).
    positions : ndarray, shape (m,)
        Starting line positions inside the data range.
    baseline : Baseline
        The baseline model (its ``start`` gives the coefficients).
    x_ref : float
        Centre of the baseline's axis ``u = x - x_ref``.
    heights, fwhm : array_like, optional
        Given starting heights / FWHM (cm⁻¹); missing ones (None or NaN) are
        estimated.
    """
    n, m = x.size, positions.size
    dx = float(np.median(np.diff(x)))
    u = x - x_ref
    k = max(3, n // 20)
    edge = np.r_[0:k, n - k:n]
    coef = baseline.start(u[edge], y[edge])
    order = np.argsort(positions)
    for _ in range(2):
        yb = y - baseline.evaluate(u, coef)
        h_est = np.interp(positions, x, yb)
        centre = np.clip(np.searchsorted(x, positions), 0, n - 1)
        f_est = np.empty(m)
        sp = positions[order]
        for rank, i in enumerate(order):
            lo_x = -np.inf if rank == 0 else 0.5 * (sp[rank - 1] + sp[rank])
            hi_x = np.inf if rank == m - 1 else 0.5 * (sp[rank] + sp[rank + 1])
            lo = int(np.searchsorted(x, lo_x))
            hi = int(np.searchsorted(x, hi_x, side="right"))
            i0 = int(centre[i])
            if abs(yb[i0]) < abs(h_est[i]) * 0.5 or i0 >= hi:
                i0 = int(np.clip(np.searchsorted(x, positions[i]) - 1, lo, hi - 1))
            right = _half_width(yb, x, i0, h_est[i], lo, hi, 1)
            left = _half_width(yb, x, i0, h_est[i], lo - 1, hi, -1)
            sides = [s for s in (left, right) if s is not None]
            if len(sides) == 2:
                f_est[i] = left + right
            elif sides:
                f_est[i] = 2.0 * sides[0]
            else:
                f_est[i] = np.nan
        bad = ~np.isfinite(f_est) | (f_est < dx)
        if np.any(~bad):
            f_est[bad] = np.median(f_est[~bad])
        else:
            f_est[:] = 4.0 * dx
        f_est = np.maximum(f_est, dx)
        if fwhm is not None:
            given = np.asarray(fwhm, dtype=float)
            f_est = np.where(np.isfinite(given), given, f_est)
        # refit the baseline on the points far from every line
        far = far_from_lines(x, positions, 5.0 * f_est)
        if far.sum() >= max(5, 2 * len(baseline.params) + 2):
            coef = baseline.start(u[far], y[far])
        else:
            break
    yb = y - baseline.evaluate(u, coef)
    h_est = np.interp(positions, x, yb)
    if heights is not None:
        given = np.asarray(heights, dtype=float)
        h_est = np.where(np.isfinite(given), given, h_est)
    return Starts(baseline=coef, heights=h_est, fwhm=f_est)
