"""Min/max decimation for display."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from widgetkit.processing import ProcessingError, decimate_minmax


def _bins_by_loop(x, y, n_bins, lo, hi):
    """Reference: the bins' extremes by a plain loop over the definition."""
    out = []
    for b in range(n_bins):
        left, right = lo + (hi - lo) * (b / n_bins), lo + (hi - lo) * ((b + 1) / n_bins)
        inside = (x >= left) & ((x < right) if b < n_bins - 1 else (x <= hi))
        if inside.any():
            out.append((y[inside].min(), y[inside].max(), x[inside]))
    return out


def test_decimation_keeps_the_minimum_and_maximum_of_every_bin():
    rng = np.random.default_rng(9)
    x = np.sort(rng.uniform(0.0, 1000.0, 20_000))
    y = rng.normal(size=x.size)  # self-consistency input: random data
    xd, yd = decimate_minmax(x, y, 300)
    kept = dict(zip(xd.tolist(), yd.tolist(), strict=True))
    for ymin, ymax, xs in _bins_by_loop(x, y, 300, x[0], x[-1]):
        in_bin = [kept[v] for v in xs.tolist() if v in kept]
        assert min(in_bin) == ymin and max(in_bin) == ymax


def test_decimated_points_are_samples_in_ascending_x_and_at_most_two_per_bin():
    rng = np.random.default_rng(10)
    x = np.linspace(400.0, 4000.0, 100_000)
    y = np.cumsum(rng.normal(size=x.size))
    xd, yd = decimate_minmax(x, y, 1000)
    assert np.all(np.diff(xd) > 0)
    assert xd.size <= 2000
    idx = np.searchsorted(x, xd)
    assert np.array_equal(x[idx], xd) and np.array_equal(y[idx], yd)


def test_decimation_of_a_window_keeps_one_neighbour_outside_each_edge():
    x = np.arange(10_000.0)
    y = np.sin(x / 30.0)
    xd, yd = decimate_minmax(x, y, 50, lo=2000.5, hi=7000.5)
    assert xd[0] == 2000.0 and xd[-1] == 7001.0  # the outside neighbours
    inner = yd[1:-1]
    assert np.all((xd[1:-1] >= 2000.5) & (xd[1:-1] <= 7000.5))
    window = (x >= 2000.5) & (x <= 7000.5)
    assert inner.max() == y[window].max() and inner.min() == y[window].min()


def test_decimation_returns_the_raw_points_when_there_are_few():
    x = np.linspace(0.0, 1.0, 30)
    y = x**2
    xd, yd = decimate_minmax(x, y, 15)
    assert np.array_equal(xd, x) and np.array_equal(yd, y)
    xd, yd = decimate_minmax(x, y, 10, lo=0.2, hi=0.5)  # a window of 9 samples
    assert np.array_equal(xd, x[5:16]) and np.array_equal(yd, y[5:16])


def test_decimation_accepts_the_window_in_either_order():
    x = np.linspace(0.0, 100.0, 5000)
    y = np.cos(x)
    a = decimate_minmax(x, y, 40, lo=10.0, hi=60.0)
    b = decimate_minmax(x, y, 40, lo=60.0, hi=10.0)
    assert np.array_equal(a[0], b[0]) and np.array_equal(a[1], b[1])


def test_decimation_refuses_bad_bin_counts_and_mismatched_arrays():
    with pytest.raises(ProcessingError, match="n_bins"):
        decimate_minmax(np.arange(5.0), np.arange(5.0), 0)
    with pytest.raises(ProcessingError, match="equal length"):
        decimate_minmax(np.arange(5.0), np.arange(4.0), 2)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-1e3, 1e3, allow_nan=False), min_size=3, max_size=400),
    st.integers(1, 60),
    st.integers(0, 2**31 - 1),
)
def test_decimation_keeps_every_bin_extreme_for_any_data(ys, n_bins, seed):
    rng = np.random.default_rng(seed)
    y = np.asarray(ys)
    x = np.cumsum(rng.uniform(0.1, 2.0, y.size))  # uneven ascending grid
    xd, yd = decimate_minmax(x, y, n_bins)
    assert np.all(np.diff(xd) > 0)
    kept = dict(zip(xd.tolist(), yd.tolist(), strict=True))
    for ymin, ymax, xs in _bins_by_loop(x, y, n_bins, x[0], x[-1]):
        vals = [kept[v] for v in xs.tolist() if v in kept]
        assert min(vals) == ymin and max(vals) == ymax
