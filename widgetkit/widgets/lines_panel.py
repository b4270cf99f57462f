"""The Lines panel: fit line shapes to the peaks; model, components, residuals, line table."""

from __future__ import annotations

import html

import ipywidgets as ipw

from ..formatting import column_label, fit_verdict, plural
from ._base import PlotPanel, row
from ._plot import COLORS, SpectrumFigure
from ._tables import html_table
from .numbers import format_value

__all__ = ["LinesPanel"]

SHAPE_CHOICES = [("Voigt", "voigt"), ("Gaussian", "gaussian"), ("Lorentzian", "lorentzian"),
                 ("pseudo-Voigt", "pseudo_voigt")]
BASELINE_CHOICES = [("automatic", "auto"), ("none", None), ("constant", "constant"),
                    ("linear", "linear"),
                    ("quadratic", "poly2"), ("exponential", "exponential")]
LINE_COLUMNS = ["line_id", "position", "position_err", "area", "area_err", "height", "height_err",
                "fwhm", "fwhm_err", "sigma", "sigma_err", "gamma", "gamma_err"]

_UNSET = object()

#: column headings in the trade's words (the data keep the one vocabulary: sigma, gamma)
HEADERS = {"line_id": "line", "area": "area / (y·cm⁻¹)", "height": "height",
           **{c: f"{column_label(c, unit=False)} / cm⁻¹"
              for c in ("position", "fwhm", "sigma", "gamma")}}
SHAPE_NAMES = dict((v, k) for k, v in SHAPE_CHOICES)


class LinesPanel(PlotPanel):
    """Fit every peak (optionally inside a brushed region) with a line shape.

    The fit runs only when "Fit lines" is pressed (it may take seconds); the
    button is disabled and says so while it runs, and the status line shows the
    busy indicator. Under the spectrum: the model, each line with the baseline,
    and the residuals ``y - model``.
    """

    title = "Lines"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._shown_fit = _UNSET
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
        self.baseline = ipw.Dropdown(options=BASELINE_CHOICES, value="auto",
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
            row(self.shape, self.baseline, self.shared_width),
            row(self.use_region, self.region_lo, self.region_hi, self.fit_button),
            row(ipw.Label("mouse:"), self.mouse_mode, self.reset_zoom_button),
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
        """One line on the fit in our own words (never the solver library's messages)."""
        if fit is None:
            return ""
        verdict = fit_verdict(fit.converged, getattr(fit, "message", ""))
        color = "#1e6b30" if fit.converged else "#b03a2e"
        spec = getattr(fit, "spec", None)
        shape = spec.get("shape", "") if isinstance(spec, dict) else ""
        lines = plural(len(fit.table), f"{SHAPE_NAMES.get(shape, shape)} line")
        how = ("reopened from the record" if fit.nfev is None
               else plural(int(fit.nfev), "model evaluation"))
        removed = getattr(fit, "removed", None)
        gone = ""
        if removed is not None and len(removed):
            items = "; ".join(f"{lid}: {why}" for lid, why in zip(removed["line_id"],
                                                                 removed["reason"]))
            gone = (f' · <span title="{html.escape(items)}">'
                    f"{html.escape(plural(len(removed), 'line'))} removed as unsupported by "
                    f"the data ({html.escape(', '.join(map(str, removed['line_id'])))})</span>")
        return (f'<div class="wk-fit-summary"><span style="color:{color}"><b>'
                f"{html.escape(verdict)}</b></span> · "
                f"{html.escape(lines)} · reduced χ² {format_value(fit.redchi, 4)} · "
                f"{html.escape(how)}{gone}</div>")

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
        opts = self.fit_options()
        n = len(self.session.peaks) if self.session is not None else 0
        shape = SHAPE_NAMES.get(opts["shape"], opts["shape"])
        self.fit_button.description = "Fitting…"
        self.fit_button.icon = "hourglass-half"
        def progress(fraction: float, text: str) -> None:
            self.show_status("busy", f"fitting {plural(n, shape + ' line')}: {text} "
                                     f"({fraction:.0%} of the budget)")

        try:
            self._call("fit lines", "fit_lines", **opts, progress=progress,
                       busy=f"fitting {plural(n, shape + ' line')}…")
        finally:
            self.fit_button.description = "Fit lines"
            self.fit_button.icon = "line-chart"
        if self.last_error is None:
            fit = self.session.line_fit
            text = (f"fitted {plural(len(fit.table), 'line')}, reduced χ² "
                    f"{format_value(fit.redchi, 4)}")
            if fit.converged:
                self.show_status("ok", text)
            else:
                self.show_status("info", f"{text}; kept although it "
                                         f"{fit_verdict(False, fit.message)}")

    def _on_brush(self, lo: float, hi: float) -> None:
        self.region_lo.value, self.region_hi.value = lo, hi
        self.use_region.value = True
        self.show_status("info", f"fit region {lo:.6g}–{hi:.6g} cm⁻¹")
