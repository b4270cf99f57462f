"""Lines deposited on the working grid, and the grid sampled at the data points (private;
the steps 1 and 3 of :mod:`.render`); the renderer's work arrays, and the C allocator
readied for a fit's megabyte arrays (:func:`ready_allocator`)."""

from __future__ import annotations

import math
import threading
from typing import TYPE_CHECKING

import numpy as np
from scipy.interpolate import CubicSpline

if TYPE_CHECKING:
    from .render import Grid

__all__ = ["deposit", "sample", "scratch", "thread_work", "ready_allocator", "WINDOW",
           "SHARED_WORK_MAX", "ALLOCATOR_BLOCK"]

_SQRT2PI = math.sqrt(2.0 * math.pi)
WINDOW = 7.0  # deposit half-window in units of s_k


def deposit(grid: Grid, pos, s, weights: list[np.ndarray],
             out: np.ndarray | None = None) -> np.ndarray:
    """Columns Σ_k a_k g(u − ν_k; s_k) + b_k ∂g/∂ν + c_k ∂g/∂s on the grid.

    ``weights`` is a list of (a, b, c) triples of arrays (L,) or None; returns (n_cols, M),
    in ``out`` when given: a flat float array of n_cols · M elements or more, or a C-ordered
    2-d float array of at least n_cols rows of at least M (row j gets column j in its first
    M entries, the rest of it is left as it is: the zero padding of a transform; float32
    rows sum the deposits in float32).
    """
    h = grid.h
    if s.size and not float(np.max(s)) * WINDOW < 0.5 * grid.M * h:
        # lines wider than the spectrum (a solver's absurd trial step): no model
        if out is None:
            return np.full((len(weights), grid.M), np.nan)
        view = _rows(out, len(weights), grid.M)
        view.fill(np.nan)
        return view
    w = int(math.ceil(WINDOW * float(np.max(s)) / h)) if s.size else 0
    offs = np.arange(-w, w + 1)
    centre = np.rint((pos - grid.u0) / h).astype(np.int64)
    idx = centre[:, None] + offs[None, :]
    valid = (idx >= 0) & (idx < grid.M)
    idx = np.clip(idx, 0, grid.M - 1)
    d = grid.u0 + h * idx - pos[:, None]
    s2 = s[:, None]
    z = d / s2
    g = np.exp(-0.5 * z * z) / (s2 * _SQRT2PI)
    g = np.where(valid, g, 0.0)
    derivs = any(b is not None or c is not None for _, b, c in weights)
    if derivs:
        g_nu = g * z / s2  # ∂g/∂ν
        g_s = g * (z * z - 1.0) / s2  # ∂g/∂s
    n = len(weights)
    v = np.empty((n,) + g.shape)
    for j, (a, b, c) in enumerate(weights):
        vj = g * a[:, None]
        if b is not None:
            vj = vj + g_nu * b[:, None]
        if c is not None:
            vj = vj + g_s * c[:, None]
        v[j] = vj
    # one histogram for all columns: column j's grid index i goes to bin j·stride + i
    stride = out.shape[1] if out is not None and out.ndim == 2 else grid.M
    flat = (idx[None, :, :] + (stride * np.arange(n))[:, None, None]).ravel()
    if out is None:
        return np.bincount(flat, weights=v.ravel(), minlength=n * grid.M).reshape(n, grid.M)
    view = _rows(out, n, grid.M)
    view.fill(0.0)
    # (the same sums, in the same order, as bincount; values in the type of ``out``: ufunc.at
    # is slow when it casts)
    np.add.at(out.reshape(-1), flat, v.ravel().astype(out.dtype, copy=False))
    return view


def _rows(out: np.ndarray, n: int, M: int) -> np.ndarray:
    """The (n, M) part of ``out`` that :func:`deposit` writes."""
    if out.ndim == 2:
        if out.shape[0] < n or out.shape[1] < M or not out.flags.c_contiguous:
            raise ValueError("deposit: out must be C-ordered with at least (columns, M) entries")
        return out[:n, :M]
    return out.reshape(-1)[:n * M].reshape(n, M)


def sample(grid: Grid, rows: np.ndarray) -> np.ndarray:
    """Rows on the grid -> rows at the data points (shape (n, N)); a view when the grid is
    aligned with the data."""
    if grid.index is not None:
        i = grid.index
        step = int(i[1] - i[0]) if i.size > 1 else 1
        return rows[:, int(i[0]):int(i[-1]) + 1:step]
    return CubicSpline(grid.u, rows, axis=1)(grid.x)


def scratch(work: dict, name: str, shape: tuple, dtype) -> np.ndarray:
    """A work array kept in ``work`` between calls (zeros when new)."""
    a = work.get(name)
    if a is None or a.shape != shape or a.dtype != dtype:
        a = work[name] = np.zeros(shape, dtype=dtype)
    return a


_LOCAL = threading.local()
#: largest FFT length whose work arrays a thread keeps after its fits (a few MB)
SHARED_WORK_MAX = 1 << 18


def thread_work(n_fft: int, own: dict) -> dict:
    """The renderer's work arrays: those of the calling thread for grids up to
    :data:`SHARED_WORK_MAX` (a fit builds new models: stages, a rebuilt line list, the next
    spectrum of a series; sharing the arrays spares each the first touch of fresh memory,
    page faults worth a twentieth of a benchmark fit), else the model's own ``own`` (large
    grids: their arrays go with the model). Safe because the renderer uses them only within
    one call (the Jacobian it returns in one of them is copied by
    :meth:`.model.BandModel._assemble` before the next call) and a thread makes one call at
    a time."""
    if n_fft > SHARED_WORK_MAX:
        return own
    work = getattr(_LOCAL, "work", None)
    if work is None:
        work = _LOCAL.work = {}
    return work


#: the block :func:`ready_allocator` frees: just under glibc's ceiling (32 MiB on 64-bit
#: systems) for its adaptive mmap threshold, the value the widgetkit.series tasks use too
ALLOCATOR_BLOCK = (32 << 20) - (1 << 20)
_allocator_ready = False


def ready_allocator() -> None:
    """Once per process, before the first fit: allocate and free one untouched block of
    :data:`ALLOCATOR_BLOCK` bytes.

    glibc's ``malloc`` gives blocks above its *mmap threshold* (128 KiB at start) pages of
    their own, which every use touches afresh (a page fault each 4 KiB), and frees heap
    memory beyond its *trim threshold* back to the system. When a block above the mmap
    threshold is freed, glibc raises that threshold to the block's size and the trim
    threshold to twice it (up to 32 MiB and 64 MiB): it does so by itself once the process
    has freed an array that large. Until then the megabyte arrays of a fit (the Jacobian,
    the transforms, the widening's running sums) come and go with fresh pages: 1,700 to
    3,000 page faults a benchmark fit (5·10⁴ points), ~5 ms of ~65; none after this.
    The cost is memory the process keeps for reuse instead of returning it at once (at most
    twice the block). Elsewhere (another allocator, or thresholds fixed in the environment,
    which switch glibc's adaptation off) it changes nothing and costs an untouched
    allocation."""
    global _allocator_ready
    if not _allocator_ready:
        _allocator_ready = True
        np.empty(ALLOCATOR_BLOCK, dtype=np.uint8)
