"""Decimated bqplot figures of spectra (view state only).

The browser cannot take raw spectra, so every curve is kept here at full
resolution and sent decimated: for the visible x-window (the x scale's
``min``/``max``, or the whole curve), :func:`widgetkit.processing.decimate_minmax`
keeps the lowest and highest sample of each of ``n_bins`` pixel-wide bins,
so no peak and no dip disappears. A change of the window (zoom, pan) sends the
curves again, decimated for the new window. Curves go as float32 (display
only: fits, tables and exports use the session's float64 data).

The mouse has one mode at a time: ``"zoom"`` (drag to pan, wheel to zoom),
``"select"`` (brush an x-interval) or ``"click"`` (clicks reach the marks,
used to add and select peaks).
"""

from __future__ import annotations

from collections.abc import Callable

import bqplot as bq
import ipywidgets as ipw
import numpy as np

from ..processing import decimate_minmax

__all__ = ["SpectrumFigure", "DEFAULT_BINS", "MOUSE_MODES"]

#: bins per visible window: at most 2 * DEFAULT_BINS + 2 points per curve
DEFAULT_BINS = 1000
MOUSE_MODES = ("zoom", "select", "click")
#: decimated windows kept per curve (going back to the whole range is then free)
CACHED_WINDOWS = 4

#: colours of the marks; the model (orange) and the outliers of the Levels panel (red,
#: ``OUTLIER``) are told apart at a glance, also with the commonest colour-vision deficiencies
#: (data blue and model orange are a pair of the Okabe–Ito palette, common practice)
COLORS = {"data": "#1f4e79", "baseline": "#d95f02", "model": "#e69f00", "component": "#7f8c8d",
          "residual": "#444444", "peaks": "#e67e22", "selected": "#2ecc71", "region": "#8e44ad",
          "outlier": "#d7191c"}


class _Curve:
    """One Lines mark and the full-resolution data behind it."""

    __slots__ = ("mark", "x", "y", "ref", "sent_window", "cache")

    def __init__(self, mark: bq.Lines):
        self.mark = mark
        self.x = np.empty(0)
        self.y = np.empty((0,))
        self.ref = None
        self.sent_window = None  # the window the mark's data were decimated for
        self.cache: dict = {}  # window -> decimated (x, y), the last few windows


class SpectrumFigure:
    """A spectrum figure: x (wavenumber) and y scales, decimated curves, mouse modes.

    Parameters
    ----------
    title : str
        Figure title.
    reverse_x : bool
        Draw the wavenumber axis from high to low (common practice for infrared
        absorbance and transmittance spectra).
    n_bins : int, default DEFAULT_BINS
        Bins per visible window for the min/max decimation.
    height : str
        CSS height of the main figure.
    residual : bool
        Add a second, short figure under the first, sharing its x scale (for
        fit residuals).
    """

    def __init__(self, *, title: str = "", reverse_x: bool = True, n_bins: int = DEFAULT_BINS,
                 height: str = "320px", residual: bool = False, y_label: str = ""):
        self.n_bins = int(n_bins)
        self.x_scale = bq.LinearScale(reverse=bool(reverse_x))
        self.y_scale = bq.LinearScale()
        self._curves: dict[str, _Curve] = {}
        self._brush_callbacks: list[Callable[[float, float], None]] = []
        self.x_axis = bq.Axis(scale=self.x_scale, label="wavenumber / cm⁻¹", grid_lines="none",
                              label_offset="32px")
        self.y_axis = bq.Axis(scale=self.y_scale, side="left", label=y_label,
                              grid_lines="none", tick_format=".3g", label_offset="55px")
        self.figure = bq.Figure(marks=[], axes=[self.x_axis, self.y_axis], title=title,
                                fig_margin={"top": 30, "bottom": 40, "left": 75, "right": 15},
                                layout=ipw.Layout(width="100%", height=height),
                                min_aspect_ratio=0.01, max_aspect_ratio=100, animation_duration=0)
        self.residual_figure = None
        if residual:
            self.r_scale = bq.LinearScale()
            self.residual_figure = bq.Figure(
                marks=[], axes=[bq.Axis(scale=self.x_scale, grid_lines="none"),
                                bq.Axis(scale=self.r_scale, side="left",
                                        label="residual", tick_format=".2g", grid_lines="none",
                                        label_offset="55px", num_ticks=3)],
                fig_margin={"top": 5, "bottom": 30, "left": 75, "right": 15},
                layout=ipw.Layout(width="100%", height="130px"),
                min_aspect_ratio=0.01, max_aspect_ratio=100, animation_duration=0)
        self.panzoom = bq.interacts.PanZoom(scales={"x": [self.x_scale]})
        self.brush = bq.interacts.BrushIntervalSelector(scale=self.x_scale, color=COLORS["region"])
        self.brush.observe(self._on_brush_change, names=["brushing"])
        self.figure.interaction = self.panzoom
        self.mode = "zoom"
        self.x_scale.observe(self._on_window_change, names=["min", "max"])

    # ------------------------------------------------------------------ marks
    def add_curve(self, name: str, *, color: str | None = None, width: float = 1.5,
                  residual: bool = False, opacity: float = 1.0, dashed: bool = False) -> bq.Lines:
        """Add an (empty) decimated curve; returns its Lines mark."""
        scales = {"x": self.x_scale, "y": self.r_scale if residual else self.y_scale}
        mark = bq.Lines(x=np.zeros(0, np.float32), y=np.zeros(0, np.float32), scales=scales,
                        colors=[color or COLORS.get(name, "black")], stroke_width=width,
                        opacities=[opacity], line_style="dashed" if dashed else "solid")
        fig = self.residual_figure if residual else self.figure
        fig.marks = [*fig.marks, mark]
        self._curves[name] = _Curve(mark)
        return mark

    def add_mark(self, mark: bq.Mark, *, residual: bool = False) -> bq.Mark:
        """Add an undecimated mark (markers, labels: a few points only)."""
        fig = self.residual_figure if residual else self.figure
        fig.marks = [*fig.marks, mark]
        return mark

    def curve(self, name: str) -> bq.Lines:
        return self._curves[name].mark

    def set_curve(self, name: str, x, y, *, ref=None) -> None:
        """Give curve ``name`` new full-resolution data and send it decimated.

        ``y`` may be 2-D (one row per line, all on ``x``); the rows are then
        decimated with the sample indices chosen for ``ref`` (a 1-D array on
        ``x``, default the sum of the rows), so they stay equally long.
        ``x=None`` clears the curve.
        """
        c = self._curves[name]
        if x is None:
            c.x, c.y, c.ref = np.empty(0), np.empty(0), None
        else:
            c.x = np.asarray(x, dtype=np.float64)
            c.y = np.asarray(y, dtype=np.float64)
            c.ref = None if ref is None else np.asarray(ref, dtype=np.float64)
        c.cache = {}
        self._send(c, force=True)

    def clear(self, *names: str) -> None:
        for n in names:
            self.set_curve(n, None, None)

    def full_data(self, name: str) -> tuple[np.ndarray, np.ndarray]:
        c = self._curves[name]
        return c.x, c.y

    # ------------------------------------------------------------------ window and decimation
    @property
    def window(self) -> tuple[float | None, float | None]:
        """The visible x-range (None where the scale follows the data)."""
        return self.x_scale.min, self.x_scale.max

    def reset_window(self) -> None:
        """Show the whole x-range again (the scales follow the data)."""
        with self.x_scale.hold_trait_notifications():
            self.x_scale.min = None
            self.x_scale.max = None
        self.y_scale.min = None
        self.y_scale.max = None
        self.redraw()

    def _decimated(self, c: _Curve) -> tuple[np.ndarray, np.ndarray]:
        if c.x.size == 0:
            return np.zeros(0, np.float32), np.zeros(0, np.float32)
        lo, hi = self.window
        if lo is not None and hi is not None and lo > hi:
            lo, hi = hi, lo
        if c.y.ndim == 1:
            xd, yd = decimate_minmax(c.x, c.y, self.n_bins, lo=lo, hi=hi)
            return xd.astype(np.float32), yd.astype(np.float32)
        ref = c.ref if c.ref is not None else c.y.sum(axis=0)
        # decimate the reference row, then take the same samples of every row
        xd, _ = decimate_minmax(c.x, ref, self.n_bins, lo=lo, hi=hi)
        sel = np.searchsorted(c.x, xd)
        return (np.broadcast_to(c.x[sel], (c.y.shape[0], sel.size)).astype(np.float32),
                c.y[:, sel].astype(np.float32))

    def _send(self, c: _Curve, force: bool = False) -> None:
        window = self.window
        if not force and window == c.sent_window:
            return  # min and max of one zoom arrive as two notifications
        c.sent_window = window
        if window in c.cache:
            xd, yd = c.cache[window]
        else:
            xd, yd = self._decimated(c)
            if len(c.cache) >= CACHED_WINDOWS:
                c.cache.pop(next(iter(c.cache)))
            c.cache[window] = (xd, yd)
        with c.mark.hold_sync():
            c.mark.x = xd
            c.mark.y = yd

    def redraw(self) -> None:
        """Send every curve again, decimated for the current window."""
        for c in self._curves.values():
            self._send(c)

    def _on_window_change(self, change) -> None:
        self.redraw()

    # ------------------------------------------------------------------ mouse
    def set_mode(self, mode: str) -> None:
        """``"zoom"`` (pan and zoom x), ``"select"`` (brush an interval) or ``"click"``."""
        if mode not in MOUSE_MODES:
            raise ValueError(f"mouse mode must be one of {MOUSE_MODES}, got {mode!r}")
        self.mode = mode
        self.figure.interaction = {"zoom": self.panzoom, "select": self.brush, "click": None}[mode]

    def clear_brush(self) -> None:
        """Remove the brushed interval (its rectangle in the browser too), e.g. after a crop
        made from it: the rectangle would otherwise stay over data that moved."""
        with self.brush.hold_trait_notifications():
            self.brush.selected = None
        self.brush.reset()

    def on_brush(self, callback: Callable[[float, float], None]) -> None:
        """Call ``callback(lo, hi)`` (cm⁻¹, lo < hi) when a brushed interval is finished."""
        self._brush_callbacks.append(callback)

    def _on_brush_change(self, change) -> None:
        if change["new"] or self.brush.selected is None or len(self.brush.selected) != 2:
            return
        lo, hi = sorted(float(v) for v in self.brush.selected)
        for cb in self._brush_callbacks:
            cb(lo, hi)

    def widgets(self) -> list[ipw.Widget]:
        out = [self.figure]
        if self.residual_figure is not None:
            out.append(self.residual_figure)
        return out
