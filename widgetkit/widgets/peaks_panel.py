"""The Peaks panel: find peaks, add one by clicking, select and remove, the peak table."""

from __future__ import annotations

import html
import math

import bqplot as bq
import ipywidgets as ipw
import numpy as np
import pandas as pd

from ..formatting import plural
from ._base import PlotPanel, row
from ._plot import COLORS, SpectrumFigure

__all__ = ["PeaksPanel", "peak_rows"]

#: the peak table's columns: name, heading, width (characters), format
PEAK_COLUMNS = (("peak_id", "peak", 5, "d"), ("position", "position / cm⁻¹", 15, ".4f"),
                ("height", "height", 10, ".4g"), ("snr", "SNR", 7, ".1f"),
                ("origin", "found by", 9, "s"))
_NBSP = "\u00a0"  # spaces a browser keeps inside a list entry
_LIST_CSS = ("<style>.wk-peaks select, .wk-peaks-head{font-family:ui-monospace,monospace;"
             "font-size:12px} .wk-peaks-head{white-space:pre;padding:0 5px;"
             "background:#f3f3f3;border-bottom:1px solid #ddd}</style>")


def _cell(value, width: int, fmt: str, left: bool) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)) or value is pd.NA:
        text = "–"
    else:
        try:
            text = format(int(value) if fmt == "d" else value, fmt)
        except (TypeError, ValueError):
            text = str(value)
    return text.ljust(width) if left else text.rjust(width)


def peak_rows(peaks: pd.DataFrame) -> tuple[str, list[tuple[str, int]]]:
    """The peak table as a heading and one entry per peak (text, peak_id), in fixed-width
    columns, for the clickable list of the Peaks panel."""
    cols = [c for c in PEAK_COLUMNS if c[0] in peaks.columns]
    head = "  ".join(h.ljust(w) if n == "origin" else h.rjust(w) for n, h, w, _ in cols)
    rows = []
    for rec in peaks.to_dict("records"):
        text = "  ".join(_cell(rec.get(n), w, f, n == "origin") for n, _, w, f in cols)
        rows.append((text.replace(" ", _NBSP), int(rec["peak_id"])))
    return head, rows


class PeaksPanel(PlotPanel):
    """Find peaks above a signal-to-noise threshold and edit the peak list by hand.

    The threshold is automatic unless a minimum SNR is typed (the status line
    then says the threshold used and how the noise was measured). In the mouse
    mode "add / select", a click on the plot background adds a peak at the top
    of the line clicked (``Session.add_peak(x, snap=True)``) and
    a click on a marker selects that peak, which "Remove" then deletes.
    """

    title = "Peaks"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._shown_ids: list[int] = []
        self._shown_x = np.zeros(0)
        self._filling_list = False
        self.selected_peak: int | None = None
        self._settings_of = None  # the find_peaks step whose settings the controls show
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

        self.auto_snr = ipw.Checkbox(value=True, description="automatic threshold",
                                     indent=False, layout=ipw.Layout(width="165px"),
                                     tooltip="set from the length of the spectrum so that "
                                             "noise alone gives under 0.05 false peaks")
        self.min_snr = ipw.BoundedFloatText(value=5.0, min=0.1, max=1e6, step=0.5,
                                            description="min SNR", continuous_update=False,
                                            layout=ipw.Layout(width="170px"))
        self.min_snr.observe(self._on_min_snr_change, names=["value"])
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
        # the peak table: a list whose rows are clicked to select a peak (as its marker is)
        self.table = ipw.HTML()
        self.peak_list = ipw.Select(options=[], rows=3, layout=ipw.Layout(width="auto"))
        self.peak_list.add_class("wk-peaks")
        self.peak_list.observe(self._on_peak_list_change, names=["value"])
        self._actions(self.find_button, self.add_button, self.remove_button)
        self.children = [
            row(self.auto_snr, self.min_snr, self.min_separation, self.find_button),
            row(ipw.Label("mouse:"), self.mouse_mode, self.reset_zoom_button),
            *self.plot.widgets(),
            row(self.add_position, self.add_button, self.selected_label, self.remove_button),
            self.status,
            self.table,
            self.peak_list,
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
        self._show_settings(s)
        peaks = s.peaks
        ids = [int(i) for i in peaks["peak_id"].tolist()]
        if self.selected_peak not in ids:
            self.selected_peak = None
        self._set_markers(ids, peaks["position"].to_numpy(float), peaks["height"].to_numpy(float))
        head, rows = peak_rows(peaks)
        if not rows:
            self.table.value = _LIST_CSS + '<div class="wk-peaks-empty">no peaks yet: press Find peaks</div>'
        else:
            self.table.value = (_LIST_CSS + f'<div class="wk-peaks-head">{html.escape(head)}</div>')
        self._filling_list = True  # new options reset the list's value: not a user's click
        try:
            if list(self.peak_list.options) != rows:
                self.peak_list.options = rows
            self.peak_list.rows = max(3, min(len(rows), 15))
            self.peak_list.layout.display = "" if rows else "none"
        finally:
            self._filling_list = False
        self._render_selection()

    def _show_settings(self, s) -> None:
        """The controls show the settings of the find_peaks step behind the peaks shown (once
        per step: what the user types afterwards stays)."""
        step = next((st for st in reversed(s.history[: s.viewing + 1])
                     if st.kind == "find_peaks"), None)
        if step is None or step is self._settings_of:
            return
        self._settings_of = step
        snr, sep = step.params.get("min_snr"), step.params.get("min_separation")
        if isinstance(snr, (int, float)):
            self.min_snr.value = float(snr)
        self.auto_snr.value = snr is None
        self.min_separation.value = float(sep) if isinstance(sep, (int, float)) else 0.0

    def _set_markers(self, ids: list[int], x: np.ndarray, y: np.ndarray) -> None:
        self._shown_ids = list(ids)
        self._shown_x = np.asarray(x, dtype=float)
        with self.markers.hold_sync():
            self.markers.x = self._shown_x
            self.markers.y = np.asarray(y, dtype=float)

    def _render_selection(self) -> None:
        if self.peak_list.value != self.selected_peak:
            self.peak_list.value = self.selected_peak
        if self.selected_peak is None:
            self.markers.selected = None
            self.selected_label.value = "no peak selected"
            return
        i = self._shown_ids.index(self.selected_peak)
        self.markers.selected = [i]
        self.selected_label.value = (f"peak <b>{self.selected_peak}</b> at "
                                     f"{self._shown_x[i]:.6g} cm⁻¹")

    # ------------------------------------------------------------------ actions
    def _on_min_snr_change(self, _change) -> None:
        self.auto_snr.value = False  # a typed threshold is meant to be used

    def _on_find_click(self, _button) -> None:
        sep = float(self.min_separation.value)
        snr = None if self.auto_snr.value else float(self.min_snr.value)
        self._call("find peaks", "find_peaks", min_snr=snr,
                   min_separation=sep if sep > 0 else None, busy="finding peaks…")
        if self.last_error is None:
            search = self.session.history[-1].result.get("search", {})
            used = search.get("min_snr")
            how = f" with SNR ≥ {used:.3g}" if isinstance(used, (int, float)) else ""
            noise = search.get("noise", {})
            sigma = noise.get("sigma")
            extra = (f"; noise {sigma:.3g} ({noise.get('method', '')})"
                     if isinstance(sigma, (int, float)) else "")
            self.show_status("ok", f"found {plural(len(self.session.peaks), 'peak')}{how}{extra}")

    def add_peak_at(self, x: float) -> int | None:
        """Add a peak near ``x`` (moved to the top of its line when that is within about one
        line width); its id, or None when refused (a position already taken is named in
        the status line)."""
        pid = self._call("add peak", "add_peak", float(x), snap=True)
        if pid is not None:
            self.selected_peak = int(pid)
            self.render()
            self.show_status("ok", self.session.history[-1].summary)
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

    def _on_peak_list_change(self, change) -> None:
        # a click on a row of the peak table selects that peak, as a click on its marker does
        new = change["new"]
        if self._filling_list or new == self.selected_peak or (
                new is not None and new not in self._shown_ids):
            return
        self.selected_peak = new
        self._render_selection()

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
