"""Shared checks (private); :class:`ProcessingError` lives in :mod:`widgetkit.errors`.

:class:`ProcessingError` is the ``ValueError``-type widgetkit error for a
processing call given an option, method or value it cannot use. It derives from
:class:`widgetkit.errors.WidgetkitError`, so ``except WidgetkitError`` and
``except ValueError`` both catch it.
"""

from __future__ import annotations

import numpy as np

from ..errors import ProcessingError

__all__ = ["ProcessingError", "as_xy", "as_y", "describe_runs"]


def as_y(y, *, name: str = "y", min_points: int = 3) -> np.ndarray:
    """``y`` as a finite one-dimensional float64 array of at least ``min_points``."""
    arr = np.asarray(y, dtype=np.float64)
    if arr.ndim != 1:
        raise ProcessingError(f"{name} must be one-dimensional, got shape {arr.shape}")
    if arr.size < min_points:
        raise ProcessingError(
            f"{name} needs at least {min_points} points, got {arr.size}"
        )
    bad = ~np.isfinite(arr)
    if bad.any():
        raise ProcessingError(
            f"{name} holds {int(bad.sum())} non-finite value(s) (NaN or inf), the first at "
            f"index {int(np.argmax(bad))}; remove or replace them first"
        )
    return arr


def as_xy(x, y, *, min_points: int = 3) -> tuple[np.ndarray, np.ndarray]:
    """``x`` (strictly ascending) and ``y`` as checked float64 arrays of equal length."""
    xa = as_y(x, name="x", min_points=min_points)
    ya = as_y(y, name="y", min_points=min_points)
    if xa.shape != ya.shape:
        raise ProcessingError(
            f"x and y differ in length ({xa.size} and {ya.size}); give one y per x"
        )
    dx = np.diff(xa)
    if np.any(dx <= 0):
        i = int(np.argmax(dx <= 0))
        raise ProcessingError(
            f"x must be strictly ascending (wavenumber in cm-1); it is not at index {i} "
            f"({xa[i]!r} then {xa[i + 1]!r}); sort the data first"
        )
    return xa, ya


def describe_runs(x: np.ndarray, bad: np.ndarray, *, limit: int = 5) -> str:
    """Describe where ``bad`` (a boolean mask over ``x``) is true, as index runs.

    For example ``"indices 10-14 (1000.5-1004.5 cm-1), index 200 (1190 cm-1)"``;
    after ``limit`` runs the rest are counted (``"and 3 more runs"``).
    """
    idx = np.flatnonzero(bad)
    if idx.size == 0:
        return "nowhere"
    breaks = np.flatnonzero(np.diff(idx) > 1)
    starts = np.concatenate(([idx[0]], idx[breaks + 1]))
    ends = np.concatenate((idx[breaks], [idx[-1]]))
    parts = []
    for s, e in zip(starts[:limit], ends[:limit], strict=False):
        if s == e:
            parts.append(f"index {s} ({x[s]:.6g} cm-1)")
        else:
            parts.append(f"indices {s}-{e} ({x[s]:.6g}-{x[e]:.6g} cm-1)")
    text = ", ".join(parts)
    if starts.size > limit:
        text += f" and {starts.size - limit} more run(s)"
    return text
