"""Static figures for reports, drawn with matplotlib's object API on the Agg canvas.

No pyplot and no global backend switch: each figure is a
:class:`matplotlib.figure.Figure` with its own Agg canvas, so making a report
never opens a window and never changes the user's matplotlib state. SVG output
is made reproducible (fixed id salt, no date) so that the same session gives
the same report bytes.
"""

from __future__ import annotations

import io

import matplotlib
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from .data import ReportData

__all__ = ["spectrum_figure", "residual_figure", "report_figures", "to_svg", "to_png"]

#: the fitted model in orange, as in the panels (red marks outliers there; common practice of the
#: Okabe–Ito palette for colour-blind readers)
MODEL_COLOUR = "#e69f00"
_Y_LABEL = {"absorbance": "absorbance", "transmittance": "transmittance", "intensity": "intensity"}
_RC = {"svg.hashsalt": "widgetkit-report", "svg.fonttype": "none", "font.size": 9.0}


def _new(width: float = 7.5, height: float = 3.2) -> Figure:
    # a fixed layout: the constrained layout engine costs seconds with many labels
    fig = Figure(figsize=(width, height), dpi=100)
    fig.subplots_adjust(left=0.1, right=0.98, bottom=min(0.3, 0.55 / height), top=1 - 0.3 / height)
    FigureCanvasAgg(fig)
    return fig


def spectrum_figure(data: ReportData, *, max_labels: int = 60) -> Figure | None:
    """The processed spectrum, the fitted model (when known) and the fitted line positions,
    with assignment labels; wavenumber decreasing to the right (infrared convention,
    common practice). None when the report holds no spectrum."""
    if data.spectrum_x is None or data.spectrum_y is None:
        return None
    x, y = data.spectrum_x, data.spectrum_y
    with matplotlib.rc_context(_RC):
        fig = _new()
        ax = fig.add_subplot()
        ax.plot(x, y, lw=0.6, color="0.2", label="spectrum (processed)")
        if data.model_x is not None and data.model_y is not None:
            ax.plot(data.model_x, data.model_y, lw=0.6, color=MODEL_COLOUR, label="fitted model")
        lines = data.lines
        if len(lines) and "position" in lines:
            pos = lines["position"].to_numpy(dtype=float)
            top = np.interp(pos, x, y)
            ax.plot(pos, top, "v", ms=3, color="tab:blue", label="fitted lines")
            a = data.assignments
            if len(a) and len(a) <= max_labels and "label" in a and "position" in a:
                for p, lab in zip(a["position"].to_numpy(dtype=float), a["label"]):
                    if isinstance(lab, str) and lab:
                        ax.annotate(lab, (p, float(np.interp(p, x, y))), xytext=(0, 4),
                                    textcoords="offset points", ha="center", fontsize=5,
                                    rotation=90)
        ax.set_xlim(float(x[-1]), float(x[0]))
        ax.set_xlabel("wavenumber / cm$^{-1}$")
        ax.set_ylabel(_Y_LABEL.get(data.y_kind, data.y_kind))
        ax.legend(loc="best", fontsize=7, frameon=False)
        ax.set_title(data.title, fontsize=9)
    return fig


def residual_figure(data: ReportData) -> Figure | None:
    """obs − calc of the assigned lines against position, one colour per isotopologue,
    outliers as open circles. None when nothing is assigned."""
    a = data.assignments
    need = {"position", "obs_minus_calc"}
    if not len(a) or not need <= set(a.columns):
        return None
    a = a[a["obs_minus_calc"].notna()]
    if not len(a):
        return None
    with matplotlib.rc_context(_RC):
        fig = _new(height=2.4)
        ax = fig.add_subplot()
        groups = a.groupby("isotopologue", dropna=False) if "isotopologue" in a else [("", a)]
        for name, g in groups:
            out = g["outlier"].astype(bool).to_numpy() if "outlier" in g else np.zeros(len(g), bool)
            p = g["position"].to_numpy(dtype=float)
            r = g["obs_minus_calc"].to_numpy(dtype=float)
            (h,) = ax.plot(p[~out], r[~out], "o", ms=3, label=str(name) if name == name else "–")
            if out.any():
                ax.plot(p[out], r[out], "o", ms=5, mfc="none", color=h.get_color())
        ax.axhline(0.0, lw=0.5, color="0.5")
        ax.invert_xaxis()
        ax.set_xlabel("wavenumber / cm$^{-1}$")
        ax.set_ylabel("obs − calc / cm$^{-1}$")
        ax.legend(loc="best", fontsize=7, frameon=False)
    return fig


def report_figures(data: ReportData) -> dict[str, Figure]:
    """The figures a report shows, by name (``"spectrum"``, ``"residuals"``), skipping empty ones."""
    out = {}
    for name, make in (("spectrum", spectrum_figure), ("residuals", residual_figure)):
        fig = make(data)
        if fig is not None:
            out[name] = fig
    return out


def to_svg(fig: Figure) -> str:
    """The figure as an SVG document (text), reproducible byte for byte."""
    buf = io.StringIO()
    with matplotlib.rc_context(_RC):
        fig.savefig(buf, format="svg", metadata={"Date": None})
    text = buf.getvalue()
    return text[text.index("<svg"):]  # drop the XML prolog and doctype for inline use


def to_png(fig: Figure, *, dpi: int = 150) -> bytes:
    """The figure as PNG bytes."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()
