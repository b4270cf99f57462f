"""The local baseline under peaks, and the typical width of the lines.

Peak significance is measured from a *local baseline*: the level the
spectrum would have at a peak if the line were not there. It is estimated
from the points that carry no line, in three steps:

1. Points of sharp features are left out (:func:`~.noise.line_free_mask`).
2. At each remaining point a parabola is fitted by least squares to the
   remaining points within a window of ``window`` points (a running local
   quadratic; it follows sloping baselines and slow fringes without
   flattening them) and evaluated there, where the window holds at least a
   quarter of its points and they are balanced on both sides (a parabola
   fitted to one side only would extrapolate the noise); all other points
   get the value interpolated linearly between their nearest evaluated
   points, which bridges each line with a straight line.
3. Points where the data, averaged over a typical line width, stand more
   than 4 of that average's σ above the baseline (for peaks pointing up)
   are also left out, widened by three typical line widths (at most a quarter
   of the window: a wider gap around a narrow line only adds to the noise of
   the baseline bridged across it), and step 2 is
   repeated (three times at most). This removes broad bands, whose flanks
   are too gentle for step 1 to see, while single noise samples stay in.

The window must be wide compared with the lines (else the baseline climbs
into them) and narrow compared with the wiggles of the true baseline. It is
set from the typical line width (:func:`typical_width`): ten FWHM, at least
101 points (so that its own noise adds under 1 % to a peak height).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage, signal

from .noise import line_free_mask

__all__ = ["local_baseline", "typical_width", "baseline_window", "three_point_width"]

#: points above the baseline by more than this many σ (of a line-width average) are left out
ABOVE_SIGMAS = 4.0
#: a strong peak wider than this many times the lower quartile of their widths is a curve
WIDTH_OUTLIER = 5.0
#: lines narrower than this many samples (FWHM) get their width from three samples
NARROW = 4.0


def baseline_window(width_points: float, n: int) -> int:
    """Window (odd number of points) of the local baseline: ten typical FWHM,
    at least 101 points, at most the data length."""
    w = int(round(10.0 * max(width_points, 1.0)))
    w = max(101, w)
    w = min(w, n if n % 2 else n - 1)
    return max(3, w | 1)


def _local_quadratic(y: np.ndarray, use: np.ndarray, window: int
                     ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Value at each point of the least-squares quadratic through the ``use``
    points within ``window``; returns the values, where they are defined, and the
    variance of each value for unit white noise (the (0, 0) element of the
    inverse normal matrix)."""
    half = window // 2
    t = np.arange(-half, half + 1, dtype=np.float64) / max(half, 1)
    w = use.astype(np.float64)
    wy = w * y

    def corr(a, k):
        # sum_j a[i + j] t_j^k  (a correlation: the kernel is reversed for convolve)
        return signal.oaconvolve(a, (t**k)[::-1], mode="same")

    m0, m1, m2, m3, m4 = (corr(w, k) for k in range(5))
    r0, r1, r2 = (corr(wy, k) for k in range(3))
    # Cramer's rule for [[m0 m1 m2] [m1 m2 m3] [m2 m3 m4]] c = [r0 r1 r2], value c0
    det = m0 * (m2 * m4 - m3 * m3) - m1 * (m1 * m4 - m3 * m2) + m2 * (m1 * m3 - m2 * m2)
    num = r0 * (m2 * m4 - m3 * m3) - m1 * (r1 * m4 - m3 * r2) + m2 * (r1 * m3 - m2 * r2)
    # evaluated at points in use whose window holds enough of them on both sides (a
    # parabola fitted to one side only would extrapolate noise); the caller interpolates
    enough = (use & (m0 >= max(6.0, 0.25 * window)) & (np.abs(m1) <= 0.5 * m0)
              & (np.abs(det) > 1e-9 * np.maximum(m0, 1) ** 3))
    safe = np.where(enough, det, 1.0)
    value = np.where(enough, num / safe, 0.0)
    var = np.where(enough, (m2 * m4 - m3 * m3) / safe, 1.0)
    return value, enough, var


def _fill(value: np.ndarray, ok: np.ndarray, fallback: float) -> np.ndarray:
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return np.full(value.size, fallback)
    if idx.size == value.size:
        return value
    return np.interp(np.arange(value.size), idx, value[idx])


def local_baseline(y, sigma: float, *, window: int, free=None, width: float = 1.0
                   ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Local baseline under upward peaks (see the module docstring).

    Parameters
    ----------
    y : ndarray, shape (n,)
        Values with peaks pointing up.
    sigma : float
        Noise σ in y units.
    window : int
        Odd window of the running local quadratic, in points.
    free : ndarray of bool, optional
        Line-free points; default :func:`~.noise.line_free_mask` of ``y``.
    width : float, default 1
        Typical line FWHM in points (the averaging length of step 3).

    Returns
    -------
    baseline : ndarray, shape (n,)
    free : ndarray of bool, shape (n,)
        The points the baseline rests on.
    variance : ndarray, shape (n,)
        Variance of the baseline in units of σ² (the baseline's own noise, which
        adds to every height measured from it).
    """
    ya = np.asarray(y, dtype=np.float64)
    n = ya.size
    use = line_free_mask(ya, sigma) if free is None else np.asarray(free, dtype=bool).copy()
    if use.sum() < 3:
        use = np.ones(n, dtype=bool)
    fallback = float(np.median(ya[use]))

    def estimate(mask):
        value, ok, var = _local_quadratic(ya, mask, window)
        return _fill(value, ok, fallback), _fill(var, ok, 1.0)

    base, var = estimate(use)
    grow = max(1, min(window // 4, int(round(3.0 * width))))
    avg = max(1, int(round(width)))
    for _ in range(3):
        excess = ndimage.uniform_filter1d(ya - base, avg, mode="nearest")
        above = excess > ABOVE_SIGMAS * sigma / np.sqrt(avg)
        if not above.any():
            break
        # widened by ``grow`` points each side: a running maximum, O(n) for any window
        wide = ndimage.maximum_filter1d(above.astype(np.uint8), 2 * grow + 1,
                                        mode="constant") > 0
        new_use = use & ~wide
        if new_use.sum() < 3 or np.array_equal(new_use, use):
            break
        use = new_use
        base, var = estimate(use)
    return base, use, np.clip(var, 0.0, 1.0)


def typical_width(y, sigma, *, min_prominence: float = 10.0, top: int = 25) -> float:
    """Typical FWHM, in points, of the strongest features of ``y`` (peaks up).

    The median width at half prominence (:func:`scipy.signal.peak_widths`) of the
    ``top`` most prominent peaks whose prominence exceeds ``min_prominence`` σ, leaving
    out widths above :data:`WIDTH_OUTLIER` times their lower quartile (the narrower of
    two). Prominence-based widths do not depend on a flat or sloping baseline, but a line
    on the flank of a strongly curved one has the curve in its prominence, and its width
    at half prominence is the curve's: with two lines the median was the curve's width.
    NaN when no peak is that prominent.
    """
    ya = np.asarray(y, dtype=np.float64)
    idx, props = signal.find_peaks(ya, prominence=min_prominence * sigma)
    if idx.size == 0:
        return math.nan
    order = np.argsort(props["prominences"])[::-1][:top]
    sel = idx[order]
    widths = np.sort(signal.peak_widths(ya, sel, rel_height=0.5)[0])
    low = widths[(widths.size - 1) // 4]
    width = float(np.median(widths[widths <= WIDTH_OUTLIER * low]))
    if width < NARROW:
        width = three_point_width(ya, sel, ya[sel] - props["prominences"][order], width)
    return width


def three_point_width(y, idx, ref, fallback: float) -> float:
    """Median FWHM, in samples, of the Gaussians through the three highest samples of
    each peak ``idx`` above its level ``ref``; ``fallback`` when no peak gives one.

    The logarithm of a Gaussian is a parabola, so three samples h₋, h₀, h₊ (above the
    level) give its σ exactly wherever the centre lies between them:
    σ² = −1 / (ln h₋ + ln h₊ − 2 ln h₀), FWHM = 2√(2 ln 2) σ. Interpolated widths at half
    height (:func:`scipy.signal.peak_widths`) overestimate lines only two or three samples
    wide, whose top sample lies below the true maximum (by 16 % for a Gaussian of FWHM 2
    samples centred between samples). Near their top, Lorentzians and Voigts of a few
    samples give nearly the same three values, and the same width.
    """
    ya = np.asarray(y, dtype=np.float64)
    i = np.asarray(idx, dtype=np.intp)
    r = np.broadcast_to(np.asarray(ref, dtype=np.float64), i.shape)
    inner = (i > 0) & (i < ya.size - 1)
    i, r = i[inner], r[inner]
    h = np.stack([ya[i - 1] - r, ya[i] - r, ya[i + 1] - r])
    ok = np.all(h > 0, axis=0)
    if not ok.any():
        return fallback
    lh = np.log(h[:, ok])
    c = lh[0] + lh[2] - 2.0 * lh[1]
    c = c[c < 0]
    if c.size == 0:
        return fallback
    return float(np.median(2.0 * math.sqrt(2.0 * math.log(2.0)) * np.sqrt(-1.0 / c)))
