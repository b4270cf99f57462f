"""The Series panel: one constant against the series variable, every spectrum auditable.

It shows a :class:`~widgetkit.series.SeriesResult` (what ``wk.run_series``
returns or ``wk.SeriesResult.load`` reopens): the chosen constant of the
chosen isotopologue against the series variable with its standard errors as
error bars, ok spectra in blue, doubtful ones in orange, failed ones (no
value) as red crosses along the bottom of the plot, and a table of the
spectra. A click on a point opens that spectrum's session in the analysis
app (the one given, else an :class:`AnalysisApp` shown below the plot).
The panel keeps view state only: which constant, which spectrum is open.
"""

from __future__ import annotations

import bqplot as bq
import ipywidgets as ipw
import numpy as np
import pandas as pd

from ..errors import WidgetkitError
from ..formatting import display_isotopologue
from ._base import row, status_html
from ._plot import COLORS
from ._tables import TABLE_CSS, html_table

__all__ = ["SeriesPanel", "STATUS_COLORS"]

#: colours of ok, doubtful and failed spectra: the data blue, the model orange, the outlier red
STATUS_COLORS = {"ok": COLORS["data"], "doubtful": COLORS["model"], "failed": COLORS["outlier"]}


class SeriesPanel(ipw.VBox):
    """Plot a constant of a series against the series variable; click a point to open it.

    Parameters
    ----------
    result : SeriesResult
        The series to show.
    app : AnalysisApp, optional
        Where a clicked spectrum's session opens (``app.use_session``); default a new
        ``AnalysisApp`` below the plot.
    constant : str, optional
        The constant shown first (default ``T_rot`` when there is one, else the first).
    isotopologue : str, optional
        Its isotopologue (default the first one listed for it).
    """

    def __init__(self, result, *, app=None, constant: str | None = None,
                 isotopologue: str | None = None, **kwargs):
        super().__init__(**kwargs)
        self.add_class("wk-panel")
        self.add_class("wk-series")
        self.result = result
        self._app = app
        self._table = result.table
        #: spectrum names in the order of the plotted points (ok and doubtful, then failed)
        self.point_names: list[str] = []
        #: the name of the spectrum whose session is open, or None
        self.opened: str | None = None
        names = [n for n in pd.unique(self._table["name"].dropna())]
        first = constant if constant in names else ("T_rot" if "T_rot" in names
                                                     else (names[0] if names else None))
        self.constant = ipw.Dropdown(options=names, value=first, description="constant",
                                     layout=ipw.Layout(width="260px"))
        self.isotopologue = ipw.Dropdown(options=[], description="isotopologue",
                                         style={"description_width": "initial"},
                                         layout=ipw.Layout(width="260px"))
        self.status = ipw.HTML(status_html("info", ""), layout=ipw.Layout(min_height="1.6em"))
        self.status.add_class("wk-status-line")
        self._build_figure()
        self.spectra_table = ipw.HTML()
        self.app_box = ipw.VBox()
        self.constant.observe(self._on_constant_change, names="value")
        self.isotopologue.observe(self._on_isotopologue_change, names="value")
        self._set_isotopologues(isotopologue)
        self.children = [row(self.constant, self.isotopologue), self.status, self.figure,
                         ipw.HTML("<b>Spectra</b> (click a point to open its session)"),
                         self.spectra_table, self.app_box]
        self.render()

    # ------------------------------------------------------------------ building
    def _build_figure(self) -> None:
        xs, ys = bq.LinearScale(), bq.LinearScale()
        self.x_scale, self.y_scale = xs, ys
        var = self.result.variable
        self.x_axis = bq.Axis(scale=xs, label=var.label if var else "spectrum", grid_lines="none")
        self.y_axis = bq.Axis(scale=ys, side="left", label="", label_offset="60px",
                              tick_format=".6~g", grid_lines="none")
        self.bars = bq.Lines(x=np.zeros((0, 2)), y=np.zeros((0, 2)), scales={"x": xs, "y": ys},
                             colors=[STATUS_COLORS["ok"]], stroke_width=1.2)
        self.points = bq.Scatter(x=np.zeros(0), y=np.zeros(0), scales={"x": xs, "y": ys},
                                 colors=[STATUS_COLORS["ok"]], default_size=36,
                                 tooltip=bq.Tooltip(fields=["x", "y"], formats=[".6~g", ".6~g"]))
        self.failed_points = bq.Scatter(x=np.zeros(0), y=np.zeros(0), scales={"x": xs, "y": ys},
                                        marker="cross", colors=[STATUS_COLORS["failed"]],
                                        default_size=48)
        for mark in (self.points, self.failed_points):
            mark.on_element_click(self._on_point_click)
        self.figure = bq.Figure(marks=[self.bars, self.points, self.failed_points],
                                axes=[self.x_axis, self.y_axis],
                                fig_margin={"top": 20, "bottom": 45, "left": 85, "right": 15},
                                layout=ipw.Layout(width="100%", height="340px"),
                                animation_duration=0)

    def _set_isotopologues(self, preferred: str | None = None) -> None:
        t = self._table
        isos = [i for i in pd.unique(t.loc[t["name"] == self.constant.value, "isotopologue"])
                if isinstance(i, str)]
        value = preferred if preferred in isos else (isos[0] if isos else None)
        # shown as the trade writes them (H³⁵Cl), the ASCII key as the value
        self.isotopologue.options = [(display_isotopologue(i), i) for i in isos]
        self.isotopologue.value = value

    # ------------------------------------------------------------------ handlers
    def _on_constant_change(self, _change) -> None:
        self._set_isotopologues(self.isotopologue.value)
        self.render()

    def _on_isotopologue_change(self, _change) -> None:
        self.render()

    def _on_point_click(self, mark, content: dict) -> None:
        i = (content.get("data") or {}).get("index")
        names = self._ok_names if mark is self.points else self._failed_names
        if i is not None and 0 <= int(i) < len(names):
            self.open_spectrum(names[int(i)])

    # ------------------------------------------------------------------ actions
    def open_spectrum(self, name: str):
        """Open the session of spectrum ``name`` in the analysis app; returns it (None when
        it cannot be opened: the status line says why)."""
        entry = self.result.entry(name)
        why = "; ".join(entry.get("reasons") or [])
        self.status.value = status_html("busy", f"opening the session of {name} ...")
        try:
            session = self.result.sessions[name]
        except (WidgetkitError, OSError) as exc:
            self.status.value = status_html("error", f"{name}: {exc}")
            return None
        if self._app is None:
            from .app import AnalysisApp

            self._app = AnalysisApp(session)
            self.app_box.children = [self._app]
        else:
            self._app.use_session(session)
        self.opened = name
        text = f"opened {name} ({entry['status']})" + (f": {why}" if why else "")
        self.status.value = status_html("ok" if entry["status"] == "ok" else "info", text)
        self._render_table()
        return session

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        """Draw the chosen constant and the table of spectra."""
        d = self.result.constant(self.constant.value, self.isotopologue.value) \
            if self.constant.value else pd.DataFrame(columns=["spectrum", "variable", "value",
                                                              "stderr", "status", "unit"])
        x = d["variable"].to_numpy(float)
        if len(d) and not np.isfinite(x).any():
            x = np.arange(len(d), dtype=float)  # no series variable: spectra in order
        v = d["value"].to_numpy(float)
        e = np.nan_to_num(d["stderr"].to_numpy(float))
        has = np.isfinite(v) & np.isfinite(x)
        colors = [STATUS_COLORS.get(s, STATUS_COLORS["ok"]) for s in d["status"][has]]
        self._ok_names = list(d["spectrum"][has])
        self._failed_names = list(d["spectrum"][~has])
        self.point_names = self._ok_names + self._failed_names
        floor = float(np.min(v[has] - e[has])) if has.any() else 0.0
        fx = np.where(np.isfinite(x[~has]), x[~has], np.nan)
        with self.figure.hold_sync():
            self.points.x, self.points.y = x[has], v[has]
            self.points.colors = colors or [STATUS_COLORS["ok"]]
            self.bars.x = np.stack([x[has], x[has]], axis=1) if has.any() else np.zeros((0, 2))
            self.bars.y = (np.stack([v[has] - e[has], v[has] + e[has]], axis=1) if has.any()
                           else np.zeros((0, 2)))
            self.bars.colors = colors or [STATUS_COLORS["ok"]]
            self.failed_points.x = fx[np.isfinite(fx)]
            self.failed_points.y = np.full(int(np.isfinite(fx).sum()), floor)
            unit = d["unit"].dropna().iloc[0] if d["unit"].notna().any() else ""
            self.y_axis.label = f"{self.constant.value} / {unit}" if unit else \
                str(self.constant.value or "")
        c = self.result.counts()
        if not self.opened:
            self.status.value = status_html(
                "info", f"{len(self.result)} spectra: {c['ok']} ok, {c['doubtful']} doubtful, "
                        f"{c['failed']} failed")
        self._render_table()

    def _render_table(self) -> None:
        sp = self.result.spectra
        d = self.result.constant(self.constant.value, self.isotopologue.value) \
            if self.constant.value else None
        if d is not None:
            sp = sp.merge(d[["spectrum", "value", "stderr"]], on="spectrum", how="left")
        opened = self.opened

        def cls(r) -> str:
            return "wk-current" if r["spectrum"] == opened else (
                "wk-outlier" if r["status"] != "ok" else "")

        cols = ["spectrum", "variable", "status", "value", "reasons", "warm_start"]
        self.spectra_table.value = TABLE_CSS + html_table(
            sp, name="series", columns=cols, row_class=cls,
            headers={"value": f"{self.constant.value}", "warm_start": "warm start from",
                     "variable": self.result.variable.label if self.result.variable
                     else "variable"})
