"""Benchmarks of widgetkit.processing on 1,000,000-point invented demo data.

Run: ``python benchmarks/bench_processing.py [n_points]``

Each line prints our time, the time of a named baseline measured in the same
run, and their ratio (baseline / ours: > 1 means we are faster):

* ALS baseline, banded Cholesky (scipy.linalg.solveh_banded) against the same
  iterations with a general sparse solve (scipy.sparse.linalg.spsolve);
* min/max decimation (vectorised reduceat) against a Python loop over bins
  calling numpy argmin/argmax on each bin;
* find_peaks (noise estimate, scipy peak search, parabola refinement, table)
  against bare scipy.signal.find_peaks with the same threshold;
* estimate_noise against numpy.std of the differences (a non-robust baseline);
* the default find_peaks (automatic threshold, local baseline) on broad lines
  (FWHM about 1,000 points, so the local-baseline window is about 10,000 points)
  against bare scipy.signal.find_peaks, and the widening of the points above the
  baseline by a running maximum (scipy.ndimage) against numpy.convolve with the
  same window (what it replaced).
"""

from __future__ import annotations

import sys
import time

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import spsolve

from widgetkit.processing import (
    baseline_als,
    decimate_minmax,
    estimate_noise,
    find_peaks,
)
from widgetkit.processing.baseline import second_difference_penalty


def _best(func, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        best = min(best, time.perf_counter() - t0)
    return best


def _als_spsolve(y: np.ndarray, lam: float, p: float, n_iter: int) -> np.ndarray:
    """The same ALS iterations with a general sparse LU solve (the baseline)."""
    n = y.size
    ab = second_difference_penalty(n)
    dtd = sp.diags(
        [ab[0, 2:], ab[1, 1:], ab[2], ab[1, 1:], ab[0, 2:]], [-2, -1, 0, 1, 2], format="csc"
    )
    w = np.ones(n)
    z = y
    for _ in range(n_iter):
        z = spsolve(sp.diags(w, 0, format="csc") + lam * dtd, w * y)
        new_w = np.where(y > z, p, 1.0 - p)
        if np.array_equal(new_w, w):
            break
        w = new_w
    return z


def _decimate_loop(x: np.ndarray, y: np.ndarray, n_bins: int):
    edges = x[0] + (x[-1] - x[0]) * (np.arange(n_bins) / n_bins)
    starts = np.searchsorted(x, edges)
    stops = np.append(starts[1:], x.size)
    idx = []
    for a, b in zip(starts, stops, strict=True):
        if b > a:
            seg = y[a:b]
            i, j = a + int(np.argmin(seg)), a + int(np.argmax(seg))
            idx.extend(sorted({i, j}))
    idx = np.asarray(idx)
    return x[idx], y[idx]


def _line(name: str, ours: float, base: float, base_name: str) -> None:
    print(
        f"{name:<28} ours {ours * 1e3:9.2f} ms   {base_name:<34} {base * 1e3:9.2f} ms   "
        f"ratio {base / ours:7.2f}x"
    )


def main(n: int = 1_000_000) -> None:
    rng = np.random.default_rng(2026)
    x = np.linspace(400.0, 4000.0, n)  # invented demo spectrum of a made-up sample
    t = (x - 2200.0) / 1800.0
    centres = rng.uniform(500.0, 3900.0, 300)
    y = 0.1 + 0.05 * t - 0.04 * t**2 + rng.normal(0.0, 0.002, n)
    for c in centres:
        lo, hi = np.searchsorted(x, [c - 20.0, c + 20.0])
        y[lo:hi] += 0.3 * 1.5**2 / ((x[lo:hi] - c) ** 2 + 1.5**2)
    print(f"widgetkit.processing benchmarks, {n:,} points, best of 3 (baseline once for ALS)")

    n_iter = 3
    ours = _best(lambda: baseline_als(y, lam=1e9, p=0.01, max_iter=n_iter))
    base = _best(lambda: _als_spsolve(y, 1e9, 0.01, n_iter), repeat=1)
    z1 = baseline_als(y, lam=1e9, p=0.01, max_iter=n_iter)
    z2 = _als_spsolve(y, 1e9, 0.01, n_iter)
    _line(f"ALS ({n_iter} iterations)", ours, base, "scipy.sparse.linalg.spsolve")
    print(f"{'':28} max |banded - spsolve| = {np.max(np.abs(z1 - z2)):.2e}")
    ours10 = _best(lambda: baseline_als(y, lam=1e9, p=0.01, max_iter=10), repeat=1)
    print(f"{'ALS (10 iterations, default)':<28} ours {ours10 * 1e3:9.2f} ms")

    ours = _best(lambda: decimate_minmax(x, y, 2000), repeat=5)
    base = _best(lambda: _decimate_loop(x, y, 2000))
    a, b = decimate_minmax(x, y, 2000), _decimate_loop(x, y, 2000)
    _line("decimate_minmax (2000 bins)", ours, base, "Python loop of argmin/argmax")
    print(f"{'':28} same points as the loop: {np.array_equal(a[0], b[0])}")

    noise = estimate_noise(y)
    from scipy.signal import find_peaks as scipy_find_peaks

    ours = _best(lambda: find_peaks(x, y, min_snr=20.0))
    base = _best(lambda: scipy_find_peaks(y, prominence=20.0 * noise))
    _line("find_peaks (min_snr=20)", ours, base, "bare scipy.signal.find_peaks")

    ours = _best(lambda: estimate_noise(y))
    base = _best(lambda: np.std(np.diff(y)))
    _line("estimate_noise", ours, base, "numpy.std of differences")
    _broad(x, rng)


def _broad(x: np.ndarray, rng: np.random.Generator) -> None:
    """Default find_peaks on broad lines: the long local-baseline window."""
    from scipy import ndimage
    from scipy.signal import find_peaks as scipy_find_peaks

    fwhm = 1000 * float(x[1] - x[0])  # about 1,000 points
    y = rng.normal(0.0, 0.002, x.size) + 0.01 * np.sin(x / 40.0)
    for c in rng.uniform(x[0] + 10 * fwhm, x[-1] - 10 * fwhm, 40):
        y += 0.05 * np.exp(-4.0 * np.log(2.0) * ((x - c) / fwhm) ** 2)
    ours = _best(lambda: find_peaks(x, y), repeat=1)
    base = _best(lambda: scipy_find_peaks(y, prominence=0.02), repeat=1)
    _line("find_peaks (default, broad)", ours, base, "bare scipy.signal.find_peaks")
    above = (y > 0.02).astype(np.uint8)
    grow = 2500  # a quarter of the ~10,000-point window
    ours = _best(lambda: ndimage.maximum_filter1d(above, 2 * grow + 1, mode="constant"))
    base = _best(lambda: np.convolve(above.astype(np.int32), np.ones(2 * grow + 1, np.int32),
                                     "same"), repeat=1)
    _line("widen mask (5001 points)", ours, base, "numpy.convolve, same window")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000)
