"""The decimated spectrum figure: few points per mark, every bin's extremes kept, re-decimated
on zoom and pan."""

import numpy as np
import pytest

from widgetkit.widgets import SpectrumFigure


@pytest.fixture
def noisy():
    """Invented data (self-consistency only): 1,000,000 points of seeded noise with sharp lines."""
    rng = np.random.default_rng(11)
    x = np.linspace(400.0, 4400.0, 1_000_000)
    y = rng.normal(0.0, 0.01, x.size)
    y[rng.integers(0, x.size, 40)] += rng.uniform(0.5, 2.0, 40)  # one-sample spikes
    return x, y


def _bin_extremes(x, y, lo, hi, n_bins):
    """Max and min of y in each of n_bins equal bins of [lo, hi] (the definition, bin by bin)."""
    edges = lo + (hi - lo) * np.arange(n_bins + 1) / n_bins
    out = []
    for k, (a, b) in enumerate(zip(edges[:-1], edges[1:])):
        i0 = np.searchsorted(x, a, side="left")
        i1 = np.searchsorted(x, b, side="right" if k == n_bins - 1 else "left")
        if i1 > i0:
            out.append((y[i0:i1].max(), y[i0:i1].min()))
    return np.array(out)


def test_a_million_point_curve_is_sent_as_at_most_two_points_per_bin_plus_the_edges(noisy):
    fig = SpectrumFigure(n_bins=1000)
    fig.add_curve("data")
    fig.set_curve("data", *noisy)
    mark = fig.curve("data")
    assert mark.x.size <= 2 * 1000 + 2
    assert mark.x.dtype == np.float32  # display only
    # the full data are kept for analysis
    assert fig.full_data("data")[0].size == 1_000_000


def test_the_sent_curve_keeps_the_maximum_and_minimum_of_every_bin(noisy):
    x, y = noisy
    fig = SpectrumFigure(n_bins=500)
    fig.add_curve("data")
    fig.set_curve("data", x, y)
    sent = np.asarray(fig.curve("data").y)
    ext = _bin_extremes(x, y, x[0], x[-1], 500).astype(np.float32)
    assert np.isin(ext[:, 0], sent).all()
    assert np.isin(ext[:, 1], sent).all()
    # every spike (a peak one sample wide) survives
    assert np.float32(y.max()) in sent


def test_zooming_re_decimates_for_the_visible_window_only(noisy):
    x, y = noisy
    fig = SpectrumFigure(n_bins=400)
    fig.add_curve("data")
    fig.set_curve("data", x, y)
    fig.x_scale.min, fig.x_scale.max = 2000.0, 2100.0  # what the browser sets on zoom
    xs = np.asarray(fig.curve("data").x, dtype=float)
    inside = xs[(xs >= 2000.0) & (xs <= 2100.0)]
    assert xs.size <= 2 * 400 + 2
    assert inside.size >= xs.size - 2  # only the two outside neighbours lie beyond the window
    ext = _bin_extremes(x, y, 2000.0, 2100.0, 400).astype(np.float32)
    assert np.isin(ext[:, 0], np.asarray(fig.curve("data").y)).all()
    # pan: a new window is sent again
    fig.x_scale.min, fig.x_scale.max = 3000.0, 3100.0
    xs = np.asarray(fig.curve("data").x, dtype=float)
    assert 2999.0 < np.median(xs) < 3101.0


def test_a_reversed_axis_window_works_in_either_order(noisy):
    x, y = noisy
    fig = SpectrumFigure(n_bins=200, reverse_x=True)
    fig.add_curve("data")
    fig.set_curve("data", x, y)
    fig.x_scale.min, fig.x_scale.max = 2100.0, 2000.0
    xs = np.asarray(fig.curve("data").x, dtype=float)
    assert xs.min() >= 1999.9 and xs.max() <= 2100.1


def test_rows_of_components_are_decimated_with_shared_samples():
    # invented curves (self-consistency): two Gaussians on 100,000 points
    x = np.linspace(0.0, 100.0, 100_000)
    rows = np.stack([np.exp(-0.5 * ((x - c) / 0.5) ** 2) for c in (30.0, 60.0)])
    fig = SpectrumFigure(n_bins=300)
    fig.add_curve("component")
    fig.set_curve("component", x, rows)
    mark = fig.curve("component")
    assert mark.y.shape[0] == 2 and mark.y.shape == mark.x.shape
    assert mark.y.shape[1] <= 2 * 300 + 2
    assert np.isclose(mark.y.max(axis=1), 1.0, atol=1e-3).all()  # both peak tops kept


def test_a_brushed_interval_is_reported_once_when_the_mouse_is_released():
    fig = SpectrumFigure()
    got = []
    fig.on_brush(lambda lo, hi: got.append((lo, hi)))
    fig.set_mode("select")
    assert fig.figure.interaction is fig.brush
    fig.brush.brushing = True
    fig.brush.selected = np.array([2950.0, 2900.0])
    assert got == []
    fig.brush.brushing = False
    assert got == [(2900.0, 2950.0)]


def test_mouse_modes_switch_the_figure_interaction():
    fig = SpectrumFigure()
    fig.set_mode("click")
    assert fig.figure.interaction is None
    fig.set_mode("zoom")
    assert fig.figure.interaction is fig.panzoom
    with pytest.raises(ValueError, match="mouse mode"):
        fig.set_mode("lasso")


def test_a_zoom_on_a_million_points_sends_less_than_100_kilobytes(noisy, sent, browser_side):
    # issue 6: at most a few thousand points and under 100 kB per update
    fig = SpectrumFigure()
    fig.add_curve("data")
    fig.set_curve("data", *noisy)
    sent.clear()
    browser_side.update(fig.x_scale, min=1000.0, max=1500.0)  # one message, as from a zoom
    mark = fig.curve("data")
    updates = sent.updates_of(mark)
    assert len(updates) == 1  # x and y in one message (hold_sync)
    assert set(updates[0]["state"]) >= {"x", "y"}
    assert 0 < sent.buffer_bytes([mark]) < 100_000
