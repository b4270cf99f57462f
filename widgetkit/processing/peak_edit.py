"""Peaks placed by hand: snapping a click to a maximum, and the table row of a placed peak.

Both use the definitions of :mod:`.peaks`: ``snr`` is the height above the
local baseline divided by σ, ``prominence`` is scipy's
(:func:`scipy.signal.peak_prominences`).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ._common import ProcessingError, as_xy
from .peaks import PEAK_COLUMNS, refine_parabola

__all__ = ["nearest_maximum", "peak_row", "peak_table"]


def _positive_noise(noise) -> float:
    try:
        sigma = float(noise)
    except (TypeError, ValueError):
        sigma = math.nan
    if not (math.isfinite(sigma) and sigma > 0):
        raise ProcessingError(f"noise must be a positive number in y units, got {noise!r}")
    return sigma


def _summit(seg: np.ndarray, tol: float) -> tuple[int, bool]:
    """Climb along ``seg`` (starting at seg[0]) while it stays within ``tol`` of the
    highest value met so far; return the index of that highest value and whether
    the climb ran to the end of ``seg`` without dropping."""
    runmax = np.maximum.accumulate(seg)
    drop = np.flatnonzero(seg < runmax - tol)
    end = int(drop[0]) if drop.size else seg.size
    return int(np.argmax(seg[:end])), drop.size == 0


def nearest_maximum(
    x, y, position: float, *, search: float | None = None, noise: float | None = None,
    k: float = 3.0,
) -> float:
    """Climb from ``position`` to the nearest local maximum (for snapping clicks).

    From the sample nearest ``position`` the data are followed in each
    direction while they stay within a tolerance τ of the highest value met so
    far; the highest sample met is that direction's summit. A direction counts
    when its summit is more than τ above the start. The nearer counted summit
    is taken (the higher one if both are equally near); when neither counts the
    start is already at a top, and the highest sample of the two climbs is
    taken. The result is refined with :func:`refine_parabola`.

    With ``noise=None``, τ = 0: the climb stops at the first strict local
    maximum, so on noisy data it may stop on a noise wiggle. Give the noise σ
    (for example :func:`estimate_noise`) to step over wiggles smaller than
    τ = k·σ, as a click on a noisy band should.

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Ascending wavenumber (cm⁻¹) and values with peaks pointing up.
    position : float
        Where to start, in cm⁻¹, inside ``[x[0], x[-1]]``.
    search : float, optional
        Half-width in cm⁻¹ of the window the climb may use; default the whole
        spectrum.
    noise : float, optional
        σ in y units; τ = k·σ. Default None (τ = 0).
    k : float, default 3.0
        Tolerance in units of σ.

    Returns
    -------
    float
        The refined position of the maximum, in cm⁻¹.

    Raises
    ------
    ProcessingError
        When ``position`` lies outside the data, or when the summit is at the
        edge of the search window (or of the data) with the data still rising
        there: no maximum is within reach; widen ``search`` or place the peak
        by hand.
    """
    xa, ya = as_xy(x, y)
    p = float(position)
    if not (math.isfinite(p) and xa[0] <= p <= xa[-1]):
        raise ProcessingError(
            f"position {position!r} cm-1 is outside the data ({xa[0]:.6g}-{xa[-1]:.6g} cm-1)"
        )
    lo, hi = 0, xa.size - 1
    if search is not None:
        w = float(search)
        if not (math.isfinite(w) and w > 0):
            raise ProcessingError(f"search must be a positive width in cm-1, got {search!r}")
        lo = int(np.searchsorted(xa, p - w, side="left"))
        hi = int(np.searchsorted(xa, p + w, side="right")) - 1
    tol = 0.0
    if noise is not None:
        tol = float(k) * _positive_noise(noise)
    i = int(np.clip(np.argmin(np.abs(xa[lo : hi + 1] - p)) + lo, lo, hi))
    j_r, edge_r = _summit(ya[i : hi + 1], tol)
    j_l, edge_l = _summit(ya[lo : i + 1][::-1], tol)
    right = (i + j_r, edge_r and i + j_r == hi)
    left = (i - j_l, edge_l and i - j_l == lo)
    counted = [c for c in (right, left) if ya[c[0]] - ya[i] > tol]
    if not counted:
        counted = [max((right, left), key=lambda c: ya[c[0]])]
    top, at_edge = min(counted, key=lambda c: (abs(xa[c[0]] - p), -ya[c[0]]))
    if top == 0 or top == xa.size - 1 or (at_edge and top != i):
        raise ProcessingError(
            f"no maximum within reach of {p:.6g} cm-1: the climb reached "
            f"{xa[top]:.6g} cm-1, the edge of the "
            f"{'search window' if search is not None else 'data'}, still rising; "
            "widen search= or place the peak by hand"
        )
    pos, _ = refine_parabola(xa, ya, [top])
    return float(pos[0])


def _prominence_at(y: np.ndarray, i: int) -> float:
    """Prominence of sample ``i`` by the definition of scipy.signal.peak_prominences."""
    left_higher = np.flatnonzero(y[:i] > y[i])
    l0 = int(left_higher[-1]) + 1 if left_higher.size else 0
    right_higher = np.flatnonzero(y[i + 1 :] > y[i])
    r1 = i + int(right_higher[0]) if right_higher.size else y.size - 1
    base = max(float(y[l0 : i + 1].min()), float(y[i : r1 + 1].min()))
    return float(y[i]) - base




def peak_row(x, y, position: float, noise: float, *, baseline=None,
             direction: str = "up") -> dict:
    """The table row (without ``peak_id``) of a peak placed by hand at ``position``.

    The position is kept exactly as given. ``height`` is ``y`` interpolated
    linearly at ``position``; ``baseline`` is the local baseline there (the
    given array interpolated, default 0); ``snr = |height − baseline| / noise``;
    ``index`` is the nearest sample; ``prominence`` is that sample's prominence
    (0 on a slope or shoulder, where the sample is not a local maximum);
    ``fwhm`` is NaN (unknown for a placed peak).

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Ascending wavenumber (cm⁻¹) and values.
    position : float
        cm⁻¹, inside ``[x[0], x[-1]]``.
    noise : float
        σ in y units (> 0).
    baseline : array_like, shape (n,), optional
        The local baseline (for example :attr:`.PeakContext.baseline`).
    direction : {"up", "down"}
        Peaks or dips (the prominence is taken on ``-y`` for dips).

    Returns
    -------
    dict
        Keys ``position, height, snr, prominence, fwhm, baseline, index``.
    """
    xa, ya = as_xy(x, y)
    p = float(position)
    if not (math.isfinite(p) and xa[0] <= p <= xa[-1]):
        raise ProcessingError(
            f"peak position {position!r} cm-1 is outside the data "
            f"({xa[0]:.6g}-{xa[-1]:.6g} cm-1); place it inside"
        )
    sigma = _positive_noise(noise)
    i = int(np.argmin(np.abs(xa - p)))
    sign = 1.0 if direction == "up" else -1.0
    prom = _prominence_at(sign * ya, i)
    height = float(np.interp(p, xa, ya))
    base = 0.0 if baseline is None else float(np.interp(p, xa, np.asarray(baseline, float)))
    return {
        "position": p,
        "height": height,
        "snr": abs(height - base) / sigma,
        "prominence": prom,
        "fwhm": math.nan,
        "baseline": base,
        "index": i,
    }


def peak_table(x, y, positions, noise: float, *, baseline=None,
               direction: str = "up") -> pd.DataFrame:
    """A peak table (columns :data:`~.peaks.PEAK_COLUMNS`) for positions placed by hand.

    Rows are sorted by position and numbered 1..n; each row is :func:`peak_row`.
    """
    pos = np.sort(np.atleast_1d(np.asarray(positions, dtype=np.float64)))
    if pos.size == 0:
        from .peaks import _empty_table

        return _empty_table()
    rows = [peak_row(x, y, p, noise, baseline=baseline, direction=direction) for p in pos]
    table = pd.DataFrame(rows, columns=list(PEAK_COLUMNS[1:]))
    table.insert(0, "peak_id", np.arange(1, pos.size + 1, dtype=np.int64))
    return table.astype({"index": "int64"})
