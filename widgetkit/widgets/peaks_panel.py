"""The Peaks panel: find peaks, add one by clicking, select and remove, the peak table."""

from __future__ import annotations

import bqplot as bq
import ipywidgets as ipw
import numpy as np

from ._base import PlotPanel
from ._plot import COLORS, SpectrumFigure
from ._tables import html_table

__all__ = ["PeaksPanel"]


class PeaksPanel(PlotPanel):
    """Find peaks above a signal-to-noise threshold and edit the peak list by hand.

    In the mouse mode "add / select", a click on the plot background adds a
    peak at the nearest local maximum (``Session.add_peak(x, snap=True)``) and
    a click on a marker selects that peak, which "Remove" then deletes.
    """

    title = "Peaks"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._shown_ids: list[int] = []
        self._shown_x = np.zeros(0)
        self.selected_peak: int | None = None
        super().__init__(session, reverse_x=reverse_x, n_bins=n_bins, owner=owner,
                         read_only=read_only, **kwargs)

    def _build(self) -> None:
        self.plot = SpectrumFigure(title="Peaks", **self._figure_options)
        self.plot.add_curve("data")
        self.markers = bq.Scatter(x=np.zeros(0), y=np.zeros(0),
                                  scales={"x": self.plot.x_scale, "y": self.plot.y_scale},
                                  colors=[COLORS["peaks"]], default_size=48, stroke="black",
                                  interactions={"click": "add"},
                                  selected_style={"fill": COLORS["selected"], "stroke": "black"},
                                  unselected_style={"opacity": 1.0})
        self.plot.add_mark(self.markers)
        self.markers.observe(self._on_markers_change, names=["x"])
        self.markers.on_element_click(self._on_marker_click)

        self.min_snr = ipw.BoundedFloatText(value=5.0, min=0.1, max=1e6, step=0.5,
                                            description="min SNR", continuous_update=False,
                                            layout=ipw.Layout(width="170px"))
        self.min_separation = ipw.BoundedFloatText(value=0.0, min=0.0, max=1e4, step=0.1,
                                                   description="min sep.", continuous_update=False,
                                                   layout=ipw.Layout(width="170px"),
                                                   tooltip="cm⁻¹; 0 = no minimum")
        self.find_button = ipw.Button(description="Find peaks", icon="search",
                                      button_style="primary")
        self.find_button.add_class("wk-find-peaks")
        self.find_button.on_click(self._on_find_click)

        self.mouse_mode = ipw.ToggleButtons(options=[("zoom", "zoom"), ("add / select", "click")],
                                            value="zoom", description="",
                                            style={"button_width": "115px"})
        self.mouse_mode.observe(lambda ch: self.plot.set_mode(ch["new"]), names=["value"])
        self.reset_zoom_button = ipw.Button(description="Whole range", icon="arrows-h")
        self.reset_zoom_button.on_click(lambda _: self.plot.reset_window())

        self.add_position = ipw.FloatText(description="at", layout=ipw.Layout(width="170px"))
        self.add_button = ipw.Button(description="Add peak", icon="plus")
        self.add_button.on_click(self._on_add_click)
        self.selected_label = ipw.HTML("no peak selected")
        self.remove_button = ipw.Button(description="Remove selected", icon="trash")
        self.remove_button.on_click(self._on_remove_click)
        self.table = ipw.HTML()
        self._actions(self.find_button, self.add_button, self.remove_button)
        self.children = [
            ipw.HBox([self.min_snr, self.min_separation, self.find_button]),
            ipw.HBox([ipw.Label("mouse:"), self.mouse_mode, self.reset_zoom_button]),
            *self.plot.widgets(),
            ipw.HBox([self.add_position, self.add_button, self.selected_label, self.remove_button]),
            self.status,
            self.table,
        ]

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.plot.clear("data")
            self._set_markers([], np.zeros(0), np.zeros(0))
            self.table.value = ""
            return
        sp = s.spectrum
        if self._show_spectrum(sp):
            self.add_position.value = round(float(sp.x[sp.x.size // 2]), 4)
        peaks = s.peaks
        ids = [int(i) for i in peaks["peak_id"].tolist()]
        if self.selected_peak not in ids:
            self.selected_peak = None
        self._set_markers(ids, peaks["position"].to_numpy(float), peaks["height"].to_numpy(float))
        self._render_selection()
        cols = [c for c in ("peak_id", "position", "height", "snr", "origin") if c in peaks]
        self.table.value = html_table(
            peaks, name="peaks", columns=cols, empty="no peaks yet: press Find peaks",
            headers={"position": "position / cm⁻¹"},
            formats={"position": ".4f", "height": ".4g", "snr": ".1f"},
            row_class=lambda r: "wk-selected" if int(r["peak_id"]) == self.selected_peak else "")

    def _set_markers(self, ids: list[int], x: np.ndarray, y: np.ndarray) -> None:
        self._shown_ids = list(ids)
        self._shown_x = np.asarray(x, dtype=float)
        with self.markers.hold_sync():
            self.markers.x = self._shown_x
            self.markers.y = np.asarray(y, dtype=float)

    def _render_selection(self) -> None:
        if self.selected_peak is None:
            self.markers.selected = None
            self.selected_label.value = "no peak selected"
            return
        i = self._shown_ids.index(self.selected_peak)
        self.markers.selected = [i]
        self.selected_label.value = (f"peak <b>{self.selected_peak}</b> at "
                                     f"{self._shown_x[i]:.6g} cm⁻¹")

    # ------------------------------------------------------------------ actions
    def _on_find_click(self, _button) -> None:
        sep = float(self.min_separation.value)
        self._call("find peaks", "find_peaks", min_snr=float(self.min_snr.value),
                   min_separation=sep if sep > 0 else None)
        if self.last_error is None:
            self.show_status("ok", f"found {len(self.session.peaks)} peaks")

    def add_peak_at(self, x: float) -> int | None:
        """Add a peak near ``x`` (snapped to the nearest local maximum); its id or None."""
        pid = self._call("add peak", "add_peak", float(x), snap=True)
        if pid is not None:
            self.selected_peak = int(pid)
            self.render()
            peaks = self.session.peaks
            pos = float(peaks.set_index("peak_id").position[pid])
            same = peaks[(peaks["peak_id"] != pid) & ((peaks["position"] - pos).abs() < 1e-6)]
            if len(same):
                self.show_status("info", f"added peak {pid} at {pos:.6g} cm⁻¹, on the same maximum "
                                         f"as peak {int(same['peak_id'].iloc[0])}; remove one of "
                                         "them before fitting")
            else:
                self.show_status("ok", f"added peak {pid} at {pos:.6g} cm⁻¹")
        return pid

    def _on_add_click(self, _button) -> None:
        self.add_peak_at(self.add_position.value)

    def _on_markers_change(self, change) -> None:
        # bqplot's "add" click appends one point to the marker data in the browser
        new = np.asarray(change["new"], dtype=float)
        if new.size != self._shown_x.size + 1 or not np.array_equal(new[:-1], self._shown_x):
            return
        x = float(new[-1])
        if self.add_peak_at(x) is None:
            # refused (outside the data, or a read-only view): show the session's peaks again
            self.render()

    def _on_marker_click(self, _mark, content: dict) -> None:
        data = content.get("data") or {}
        i = data.get("index")
        if i is None or not 0 <= int(i) < len(self._shown_ids):
            return
        self.selected_peak = self._shown_ids[int(i)]
        self.render()

    def _on_remove_click(self, _button) -> None:
        if self.selected_peak is None:
            self.show_status("error", "remove: select a peak first (click its marker)")
            return
        pid = self.selected_peak
        self._call("remove peak", "remove_peak", pid, ok=f"removed peak {pid}")
