"""Noise estimate and peak picking.

Peaks point up (absorbance after baseline subtraction, or intensity). The
noise σ is estimated robustly from first differences, peaks are found with
:func:`scipy.signal.find_peaks` using a prominence threshold of
``min_snr · σ``, and each position is refined by the vertex of the parabola
through the maximum sample and its two neighbours.

The peak table has the columns of :data:`PEAK_COLUMNS`:

``peak_id``
    int, 1..n in ascending position.
``position``
    cm⁻¹, the parabola vertex (the sample's x when the three points are
    collinear or flat).
``height``
    the parabola's value at its vertex, in the units of ``y``: the raw
    refined maximum, *not* measured from a local baseline (subtract the
    baseline first, as the session does).
``snr``
    ``prominence / noise``.
``prominence``
    as defined by :func:`scipy.signal.peak_prominences` (height of the peak
    above the higher of the two lowest points reached before meeting higher
    ground on either side).
``index``
    int, the index of the maximum sample.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy import signal

from ._common import ProcessingError, as_xy, as_y

__all__ = [
    "PEAK_COLUMNS",
    "estimate_noise",
    "find_peaks",
    "nearest_maximum",
    "peak_row",
    "peak_table",
    "refine_parabola",
]

#: columns of the table :func:`find_peaks` returns, in order
PEAK_COLUMNS = ("peak_id", "position", "height", "snr", "prominence", "index")

#: 1 / Φ⁻¹(3/4): scales a median absolute deviation to σ for Gaussian noise
_MAD_TO_SIGMA = 1.4826


def estimate_noise(y) -> float:
    """Robust noise σ from the median absolute deviation of first differences.

    .. math::

        d_i = y_{i+1} - y_i, \\qquad
        \\sigma = \\frac{1.4826\\,\\operatorname{median}_i |d_i - \\operatorname{median}(d)|}
                       {\\sqrt{2}}

    For independent Gaussian noise of standard deviation σ on a slowly varying
    signal, each dᵢ is Gaussian with standard deviation σ√2, and 1.4826·MAD is a
    consistent estimate of a Gaussian standard deviation (1.4826 = 1/Φ⁻¹(3/4)).
    Differencing removes a smooth baseline; the median ignores the few large
    differences across sharp peaks and spikes.

    Parameters
    ----------
    y : array_like, shape (n,), n ≥ 3
        Values on an (ideally equally spaced) grid.

    Returns
    -------
    float
        σ in the units of ``y`` (0 for exactly linear data).
    """
    arr = as_y(y)
    d = np.diff(arr)
    mad = float(np.median(np.abs(d - np.median(d))))
    return _MAD_TO_SIGMA * mad / math.sqrt(2.0)


def refine_parabola(x, y, index) -> tuple[np.ndarray, np.ndarray]:
    """Vertex of the parabola through samples ``index - 1, index, index + 1``.

    With h₁ = x₁ − x₀, h₂ = x₂ − x₁ (any spacing) and t = x − x₁ the parabola
    is p(t) = y₁ + b t + a t², where

    .. math::

        a = \\frac{(y_2 - y_1)/h_2 - (y_1 - y_0)/h_1}{h_1 + h_2}, \\qquad
        b = \\frac{h_2 (y_1 - y_0)/h_1 + h_1 (y_2 - y_1)/h_2}{h_1 + h_2},

    and the vertex is t* = −b / (2a), p* = y₁ − b² / (4a). Where a ≥ 0 (no
    maximum) or the index is at an end, the sample itself is returned. t* is
    clipped to [−h₁, h₂].

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        Ascending x and the values.
    index : array_like of int, shape (m,)
        Indices of local maxima.

    Returns
    -------
    position, height : ndarray, shape (m,)
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    i = np.atleast_1d(np.asarray(index, dtype=np.intp))
    pos = x[i].astype(np.float64, copy=True)
    hgt = y[i].astype(np.float64, copy=True)
    inner = (i > 0) & (i < x.size - 1)
    j = i[inner]
    h1 = x[j] - x[j - 1]
    h2 = x[j + 1] - x[j]
    s1 = (y[j] - y[j - 1]) / h1
    s2 = (y[j + 1] - y[j]) / h2
    a = (s2 - s1) / (h1 + h2)
    b = (h2 * s1 + h1 * s2) / (h1 + h2)
    ok = a < 0
    a_ok = np.where(ok, a, -1.0)
    t = np.where(ok, np.clip(-b / (2.0 * a_ok), -h1, h2), 0.0)
    p = np.where(ok, y[j] - b * b / (4.0 * a_ok), y[j])
    # the clipped vertex must still lie on the parabola
    p = np.where(ok, y[j] + b * t + a * t * t, p)
    pos[inner] = x[j] + t
    hgt[inner] = p
    return pos, hgt


def _empty_table() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "peak_id": pd.Series([], dtype="int64"),
            "position": pd.Series([], dtype="float64"),
            "height": pd.Series([], dtype="float64"),
            "snr": pd.Series([], dtype="float64"),
            "prominence": pd.Series([], dtype="float64"),
            "index": pd.Series([], dtype="int64"),
        }
    )


def _check_noise(noise, y: np.ndarray) -> float:
    if noise is None:
        sigma = estimate_noise(y)
        if sigma <= 1e-12 * float(np.max(np.abs(y))):
            raise ProcessingError(
                f"the noise estimated from the data is {sigma:.3g}, at the level of rounding "
                "(noise-free or linear data), so a "
                "signal-to-noise threshold means nothing; pass noise= explicitly (in y units)"
            )
        return sigma
    sigma = float(noise)
    if not (math.isfinite(sigma) and sigma > 0):
        raise ProcessingError(f"noise must be a positive number in y units, got {noise!r}")
    return sigma


def find_peaks(
    x, y, *, min_snr: float = 5.0, min_separation: float | None = None, noise: float | None = None
) -> pd.DataFrame:
    """Find peaks that stand out of the noise by at least ``min_snr``.

    Parameters
    ----------
    x : array_like, shape (n,)
        Wavenumber in cm⁻¹, strictly ascending.
    y : array_like, shape (n,)
        Values with peaks pointing up (baseline already subtracted).
    min_snr : float, default 5.0
        Minimum prominence in units of the noise σ: passed to
        :func:`scipy.signal.find_peaks` as ``prominence=min_snr * noise``.
        Prominence is measured from the lowest point on either side, so on a
        long stretch of pure noise the highest wiggle can reach a prominence
        of 5-7 σ (the range of thousands of Gaussian samples); use 8 or more
        to keep noise out of long noisy spectra.
    min_separation : float, optional
        Minimum distance between peaks in cm⁻¹, converted to samples with the
        median spacing: ``distance = max(1, ceil(min_separation / median(diff(x))))``.
        Of peaks closer than that, the higher is kept (scipy's rule).
    noise : float, optional
        σ in y units; default :func:`estimate_noise` of ``y``.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`PEAK_COLUMNS` (see the module docstring), one row per
        peak, ascending position; an empty table of those columns when there
        is none.

    Raises
    ------
    ProcessingError
        On mismatched or non-finite arrays, a non-positive ``min_snr``,
        ``min_separation`` or ``noise``, or a noise estimate of exactly 0.
    """
    xa, ya = as_xy(x, y)
    snr_min = float(min_snr)
    if not (math.isfinite(snr_min) and snr_min > 0):
        raise ProcessingError(f"min_snr must be a positive number, got {min_snr!r}")
    sigma = _check_noise(noise, ya)
    kwargs: dict = {"prominence": snr_min * sigma}
    if min_separation is not None:
        sep = float(min_separation)
        if not (math.isfinite(sep) and sep > 0):
            raise ProcessingError(
                f"min_separation must be a positive distance in cm-1, got {min_separation!r}"
            )
        dx = float(np.median(np.diff(xa)))
        kwargs["distance"] = max(1, math.ceil(sep / dx - 1e-9))
    idx, props = signal.find_peaks(ya, **kwargs)
    if idx.size == 0:
        return _empty_table()
    pos, hgt = refine_parabola(xa, ya, idx)
    prom = np.asarray(props["prominences"], dtype=np.float64)
    return pd.DataFrame(
        {
            "peak_id": np.arange(1, idx.size + 1, dtype=np.int64),
            "position": pos,
            "height": hgt,
            "snr": prom / sigma,
            "prominence": prom,
            "index": idx.astype(np.int64),
        }
    )


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
        tol = float(k) * _check_noise(noise, ya)
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


def peak_row(x, y, position: float, noise: float) -> dict:
    """The table row (without ``peak_id``) of a peak placed by hand at ``position``.

    The position is kept exactly as given. ``height`` is ``y`` interpolated
    linearly at ``position``; ``index`` is the nearest sample; ``prominence``
    is that sample's prominence (0 on a slope or shoulder, where the sample is
    not a local maximum) and ``snr = prominence / noise``, the same
    definitions as :func:`find_peaks`.

    Parameters
    ----------
    x, y : array_like, shape (n,)
        Ascending wavenumber (cm⁻¹) and values.
    position : float
        cm⁻¹, inside ``[x[0], x[-1]]``.
    noise : float
        σ in y units (> 0), for example from :func:`estimate_noise`.

    Returns
    -------
    dict
        Keys ``position, height, snr, prominence, index``.
    """
    xa, ya = as_xy(x, y)
    p = float(position)
    if not (math.isfinite(p) and xa[0] <= p <= xa[-1]):
        raise ProcessingError(
            f"peak position {position!r} cm-1 is outside the data "
            f"({xa[0]:.6g}-{xa[-1]:.6g} cm-1); place it inside"
        )
    sigma = _check_noise(noise, ya)
    i = int(np.argmin(np.abs(xa - p)))
    prom = _prominence_at(ya, i)
    return {
        "position": p,
        "height": float(np.interp(p, xa, ya)),
        "snr": prom / sigma,
        "prominence": prom,
        "index": i,
    }


def peak_table(x, y, positions, noise: float) -> pd.DataFrame:
    """A peak table (columns :data:`PEAK_COLUMNS`) for positions placed by hand.

    Rows are sorted by position and numbered 1..n; each row is
    :func:`peak_row`.
    """
    pos = np.sort(np.atleast_1d(np.asarray(positions, dtype=np.float64)))
    if pos.size == 0:
        return _empty_table()
    rows = [peak_row(x, y, p, noise) for p in pos]
    table = pd.DataFrame(rows, columns=list(PEAK_COLUMNS[1:]))
    table.insert(0, "peak_id", np.arange(1, pos.size + 1, dtype=np.int64))
    return table.astype({"index": "int64"})
