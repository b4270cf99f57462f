"""The Lines panel: fit line shapes to the peaks; model, components, residuals, line table."""

from __future__ import annotations

import html

import ipywidgets as ipw

from ._base import PlotPanel
from ._plot import COLORS, SpectrumFigure
from ._tables import html_table
from .numbers import format_value

__all__ = ["LinesPanel"]

SHAPE_CHOICES = [("Voigt", "voigt"), ("Gaussian", "gaussian"), ("Lorentzian", "lorentzian"),
                 ("pseudo-Voigt", "pseudo_voigt")]
BASELINE_CHOICES = [("none", None), ("constant", "constant"), ("linear", "linear"),
                    ("quadratic", "poly2"), ("exponential", "exponential")]
LINE_COLUMNS = ["line_id", "position", "position_err", "area", "area_err", "height", "height_err",
                "fwhm", "fwhm_err", "sigma", "sigma_err", "gamma", "gamma_err"]

_UNSET = object()

HEADERS = {"position": "position / cm⁻¹", "fwhm": "fwhm / cm⁻¹", "sigma": "sigma / cm⁻¹",
           "gamma": "gamma / cm⁻¹", "area": "area / (y·cm⁻¹)"}


class LinesPanel(PlotPanel):
    """Fit every peak (optionally inside a brushed region) with a line shape.

    The fit runs only when "Fit lines" is pressed (it may take seconds); the
    button is disabled and says so while it runs. Under the spectrum: the
    model, each line with the baseline, and the residuals ``y - model``.
    """

    title = "Lines"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._shown_fit = _UNSET
        self.busy = False
        super().__init__(session, reverse_x=reverse_x, n_bins=n_bins, owner=owner,
                         read_only=read_only, **kwargs)

    def _build(self) -> None:
        self.plot = SpectrumFigure(title="Lines", residual=True, **self._figure_options)
        self.plot.add_curve("data")
        self.plot.add_curve("component", color=COLORS["component"], width=1.0, opacity=0.8)
        self.plot.add_curve("model", color=COLORS["model"], width=1.5)
        self.plot.add_curve("residual", color=COLORS["residual"], width=1.0, residual=True)
        self.plot.on_brush(self._on_brush)

        self.shape = ipw.Dropdown(options=SHAPE_CHOICES, value="voigt", description="shape")
        self.shared_width = ipw.Checkbox(value=False, description="shared width", indent=False)
        self.baseline = ipw.Dropdown(options=BASELINE_CHOICES, value="linear",
                                     description="baseline")
        self.use_region = ipw.Checkbox(value=False, description="fit region only", indent=False)
        self.region_lo = ipw.FloatText(description="from", layout=ipw.Layout(width="160px"))
        self.region_hi = ipw.FloatText(description="to", layout=ipw.Layout(width="160px"))
        self.mouse_mode = ipw.ToggleButtons(options=[("zoom", "zoom"), ("select region", "select")],
                                            value="zoom", description="",
                                            style={"button_width": "115px"})
        self.mouse_mode.observe(lambda ch: self.plot.set_mode(ch["new"]), names=["value"])
        self.reset_zoom_button = ipw.Button(description="Whole range", icon="arrows-h")
        self.reset_zoom_button.on_click(lambda _: self.plot.reset_window())
        self.fit_button = ipw.Button(description="Fit lines", icon="line-chart",
                                     button_style="primary")
        self.fit_button.add_class("wk-fit-lines")
        self.fit_button.on_click(self._on_fit_click)
        self.fit_summary = ipw.HTML()
        self.table = ipw.HTML()
        self._actions(self.fit_button)
        self.children = [
            ipw.HBox([self.shape, self.baseline, self.shared_width]),
            ipw.HBox([self.use_region, self.region_lo, self.region_hi, self.fit_button]),
            ipw.HBox([ipw.Label("mouse:"), self.mouse_mode, self.reset_zoom_button]),
            *self.plot.widgets(),
            self.status,
            self.fit_summary,
            self.table,
        ]

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.plot.clear("data", "model", "component", "residual")
            self.table.value = self.fit_summary.value = ""
            self._shown_fit = _UNSET
            return
        sp = s.spectrum
        if self._show_spectrum(sp):
            self.region_lo.value, self.region_hi.value = float(sp.x[0]), float(sp.x[-1])
        fit = s.line_fit
        if fit is not self._shown_fit:
            self._shown_fit = fit
            if fit is None:
                self.plot.clear("model", "component", "residual")
            else:
                self.plot.set_curve("model", fit.x, fit.model_y)
                self.plot.set_curve("component", fit.x, fit.components + fit.baseline_y,
                                    ref=fit.model_y)
                self.plot.set_curve("residual", fit.x, fit.residual)
            self.fit_summary.value = self._summary_html(fit)
            self.table.value = html_table(s.lines, name="lines", columns=LINE_COLUMNS,
                                          headers=HEADERS,
                                          empty="no lines yet: find peaks, then press Fit lines")

    @staticmethod
    def _summary_html(fit) -> str:
        if fit is None:
            return ""
        ok = "converged" if fit.converged else "NOT converged"
        color = "#1e6b30" if fit.converged else "#b03a2e"
        shape = fit.spec.get("shape", "") if isinstance(fit.spec, dict) else ""
        return (f'<div class="wk-fit-summary"><span style="color:{color}"><b>{ok}</b></span> · '
                f"{len(fit.table)} {html.escape(str(shape))} lines · reduced χ² "
                f"{format_value(fit.redchi, 4)} · "
                + ("reopened from the record · " if fit.nfev is None
                   else f"{fit.nfev} evaluations · ") +
                f"<span style='color:#777'>{html.escape(str(fit.message))[:200]}</span></div>")

    # ------------------------------------------------------------------ actions
    def fit_options(self) -> dict:
        """The keyword arguments "Fit lines" passes to ``Session.fit_lines``."""
        region = None
        if self.use_region.value:
            region = sorted((float(self.region_lo.value), float(self.region_hi.value)))
        return {"shape": self.shape.value, "shared_width": bool(self.shared_width.value),
                "baseline": self.baseline.value, "region": region}

    def _on_fit_click(self, _button) -> None:
        if self.busy:
            return
        self.busy = True
        self.fit_button.disabled = True
        self.fit_button.description = "Fitting…"
        self.fit_button.icon = "hourglass-half"
        opts = self.fit_options()
        self.show_status("busy", f"fitting {opts['shape']} lines…")
        try:
            self._call("fit lines", "fit_lines", **opts)
        finally:
            self.busy = False
            self.fit_button.description = "Fit lines"
            self.fit_button.icon = "line-chart"
            self._render_all()
        if self.last_error is None:
            fit = self.session.line_fit
            self.show_status("ok", f"fitted {len(fit.table)} lines, reduced χ² "
                                   f"{format_value(fit.redchi, 4)}")

    def _on_brush(self, lo: float, hi: float) -> None:
        self.region_lo.value, self.region_hi.value = lo, hi
        self.use_region.value = True
        self.show_status("info", f"fit region {lo:.6g}–{hi:.6g} cm⁻¹")
