"""Statistics of the noise measure (:mod:`.noise`): the line-free mask, the clipped RMS,
the local trend and the digitisation step; shared by the overall σ and its profile
(:mod:`.noise_profile`)."""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage
from scipy.stats import norm

__all__ = ["line_free_mask", "quantum", "lag_sigma", "FEATURE_SIGMAS", "CLIP", "TREND_POINTS"]

#: a point departing this many σ from its neighbours belongs to a feature
FEATURE_SIGMAS = 4.0
#: clipping level of the clipped RMS, in units of itself
CLIP = 3.5
#: differences over which the local trend is averaged
TREND_POINTS = 31
#: 1 / Φ⁻¹(3/4): scales a median absolute value to σ for Gaussian noise
_MAD_TO_SIGMA = 1.482602218505602

# variance of a N(0, 1) variable clipped at ±CLIP, as a standard deviation
_CLIP_SD = math.sqrt(1.0 - 2.0 * CLIP * norm.pdf(CLIP) / (2.0 * norm.cdf(CLIP) - 1.0))


def quantum(y: np.ndarray) -> float:
    """The digitisation step of ``y``: q when every value is an integer multiple of
    q from the smallest (within 10⁻³ q), else 0. Values with more distinct levels
    than half the points are taken as continuous (0)."""
    u = np.unique(y)
    if u.size < 2 or u.size > 0.5 * y.size:
        return 0.0
    du = np.diff(u)
    q = float(du.min())
    if q <= 0 or not math.isfinite(q):
        return 0.0
    r = du / q
    return q if np.all(np.abs(r - np.round(r)) < 1e-3) else 0.0


def _clipped_rms(d: np.ndarray) -> float:
    """RMS of ``d`` clipped iteratively at CLIP times itself, corrected to the
    standard deviation of unclipped Gaussian noise."""
    if d.size == 0:
        return 0.0
    s = math.sqrt(float(np.mean(d * d)))
    for _ in range(8):
        if s == 0.0:
            return 0.0
        keep = np.abs(d) <= CLIP * s
        new = math.sqrt(float(np.mean(d[keep] ** 2))) / _CLIP_SD
        if abs(new - s) <= 1e-4 * s:
            return new
        s = new
    return s


def _local_mean(values: np.ndarray, ok: np.ndarray, width: int = TREND_POINTS) -> np.ndarray:
    """Mean of ``values`` over the ``ok`` entries within a running window."""
    w = ok.astype(np.float64)
    num = ndimage.uniform_filter1d(np.where(ok, values, 0.0), width, mode="nearest")
    den = ndimage.uniform_filter1d(w, width, mode="nearest")
    return np.where(den > 0, num / np.maximum(den, 1e-12), 0.0)


def _dilate_runs(flag: np.ndarray) -> np.ndarray:
    """Widen every run of True by half its length plus two points on each side."""
    n = flag.size
    idx = np.flatnonzero(flag)
    if idx.size == 0:
        return flag
    breaks = np.flatnonzero(np.diff(idx) > 1)
    starts = np.concatenate(([idx[0]], idx[breaks + 1]))
    ends = np.concatenate((idx[breaks], [idx[-1]]))
    grow = (ends - starts + 1) // 2 + 2
    cover = np.zeros(n + 1, dtype=np.int64)
    np.add.at(cover, np.maximum(starts - grow, 0), 1)
    np.add.at(cover, np.minimum(ends + grow, n - 1) + 1, -1)
    return np.cumsum(cover[:n]) > 0


def line_free_mask(y, sigma: float, *, k: float = FEATURE_SIGMAS) -> np.ndarray:
    """Boolean mask of the points that belong to no feature, for noise σ.

    See the module docstring (part 1). Sign-agnostic: dips count as features too.

    Parameters
    ----------
    y : array_like, shape (n,)
    sigma : float
        Noise σ in y units.
    k : float, default 4
        Threshold in σ.

    Returns
    -------
    ndarray of bool, shape (n,)
    """
    ya = np.asarray(y, dtype=np.float64)
    n = ya.size
    d = np.diff(ya)
    d = d - _local_mean(d, np.ones(d.size, dtype=bool))
    flag = np.zeros(n, dtype=bool)
    steep = np.abs(d) > k * sigma * math.sqrt(2.0)
    flag[:-1] |= steep
    flag[1:] |= steep
    bend = np.abs(ya[1:-1] - 0.5 * (ya[:-2] + ya[2:])) > k * sigma * math.sqrt(1.5)
    flag[1:-1] |= bend
    return ~_dilate_runs(flag)


def lag_sigma(y: np.ndarray, free: np.ndarray, lag: int, min_count: int = 8
              ) -> tuple[float, float, int]:
    """σ from lag-``lag`` differences whose whole span is line-free (``free``), their local
    mean removed: the clipped RMS, the normal-scaled median absolute value (the Gaussian
    core), and the count (NaN for both below ``min_count`` differences)."""
    if y.size <= lag + 2:
        return math.nan, math.nan, 0
    blocked = np.concatenate(([0], np.cumsum(~free)))
    ok = (blocked[lag + 1:] - blocked[:-lag - 1]) == 0
    count = int(ok.sum())
    if count < min_count:
        return math.nan, math.nan, count
    d = y[lag:] - y[:-lag]
    d = (d - _local_mean(d, ok))[ok]
    core = _MAD_TO_SIGMA * float(np.median(np.abs(d))) / math.sqrt(2.0)
    return _clipped_rms(d) / math.sqrt(2.0), core, count
