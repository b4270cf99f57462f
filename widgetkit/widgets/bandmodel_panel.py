"""The Band model panel: fit a model of the whole band; data, model, residual, parameters.

The panel is a view of ``session.band_model`` (the last ``fit_band_model`` step): the
observed spectrum with the fitted model and the residual under it, the free, fixed and held
parameters with their standard errors, the constants (``method`` "band model"), the strong
correlations and the P–R estimate. "Fit band" calls :meth:`Session.fit_band_model` with
the controls' values; it runs only when pressed and shows its progress in the status line.
"""

from __future__ import annotations

import html
import re

import ipywidgets as ipw
import numpy as np

from ..errors import FitError
from ..formatting import plural
from ..session.views import mark_fixed
from ._base import PlotPanel, row
from ._plot import COLORS, SpectrumFigure
from ._tables import html_table
from .numbers import format_value

__all__ = ["BandModelPanel", "parse_band", "parse_fix"]

INSTRUMENT_CHOICES = [("Gaussian (FWHM = resolution)", "gaussian"),
                      ("triangular apodisation (sinc²)", "triangular"),
                      ("boxcar, unapodised (sinc)", "boxcar")]
BASELINE_CHOICES = [("none", None), ("constant", "constant"), ("linear", "linear"),
                    ("quadratic", "poly2"), ("cubic", "poly3")]
PARAMETER_COLUMNS = ["name", "value", "status", "unit", "note"]
CONSTANT_COLUMNS = ["isotopologue", "name", "value", "unit", "note"]
#: correlations at or above this magnitude are listed
SHOWN_CORRELATION = 0.9

_UNSET = object()


def parse_band(text: str) -> list[int]:
    """``"1-0"`` (upper-lower, the band label) -> ``[1, 0]``."""
    m = re.fullmatch(r"\s*(\d+)\s*[-–←,]\s*(\d+)\s*", str(text))
    if not m:
        raise FitError(f"band {text!r}: write it as upper-lower, e.g. 1-0 or 2-0")
    return [int(m.group(1)), int(m.group(2))]


def parse_fix(text: str) -> dict[str, float]:
    """``"B_e=1.93, D_e=6e-6"`` -> ``{"B_e": 1.93, "D_e": 6e-06}`` (empty text: no entries)."""
    out: dict[str, float] = {}
    for part in filter(None, (p.strip() for p in str(text).split(","))):
        name, sep, value = part.partition("=")
        try:
            if not sep:
                raise ValueError
            out[name.strip()] = float(value)
        except ValueError:
            raise FitError(f"fix: {part!r} is not name=value (e.g. B_e=1.931, temperature=296)"
                           ) from None
    return out


def session_molecule(session) -> str | None:
    """The formula the session's analysis is of: the molecule of its last band-model fit or,
    failing that, of its last assignment ("HCl"); None when it has neither."""
    for step in reversed(session.history):
        if step.kind in ("fit_band_model", "assign_band"):
            mol = step.params.get("molecule")
            if isinstance(mol, dict) and isinstance(mol.get("atoms"), list):
                return "".join(str(a) for a in mol["atoms"])
            if isinstance(mol, str):
                return mol
    return None


class BandModelPanel(PlotPanel):
    """Fit a model of the whole band (rotational lines, Boltzmann populations, isotopologues,
    line shape and instrument) to the spectrum; works on resolved and unresolved bands.

    The fit runs only when "Fit band" is pressed; the status line shows its progress.
    """

    title = "Band model"

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 owner=None, read_only: bool = False, **kwargs):
        self._shown_fit = _UNSET
        self._molecule_of = None  # the session whose molecule the field was filled from
        super().__init__(session, reverse_x=reverse_x, n_bins=n_bins, owner=owner,
                         read_only=read_only, **kwargs)

    # ------------------------------------------------------------------ layout
    def _build(self) -> None:
        self.plot = SpectrumFigure(title="Band model", residual=True, **self._figure_options)
        self.plot.add_curve("data")
        self.plot.add_curve("model", color=COLORS["model"], width=1.5)
        self.plot.add_curve("baseline", color=COLORS["baseline"], width=1.0, dashed=True)
        self.plot.add_curve("residual", color=COLORS["residual"], width=1.0, residual=True)

        small = ipw.Layout(width="190px")
        self.molecule = ipw.Text(value="CO", description="molecule", layout=small,
                                 placeholder="e.g. CO, HCl, or OCO (atoms along the axis)",
                                 tooltip="a diatomic formula (CO, HCl, H35Cl) or a linear "
                                         "molecule's atoms in order along its axis (OCO, HCN)")
        self.band = ipw.Text(value="1-0", description="band", layout=ipw.Layout(width="140px"))
        self.instrument = ipw.Dropdown(options=INSTRUMENT_CHOICES, value="gaussian",
                                       description="instrument", layout=ipw.Layout(width="330px"))
        self.resolution = ipw.BoundedFloatText(value=0.0, min=0.0, max=1e4, step=0.01,
                                               description="resolution",
                                               layout=ipw.Layout(width="190px"))
        self.resolution_note = ipw.HTML()
        self.temperature = ipw.BoundedFloatText(value=296.0, min=1.0, max=1e5,
                                                description="T / K", layout=small)
        self.fix_temperature = ipw.Checkbox(value=False, description="fix T", indent=False,
                                            layout=ipw.Layout(width="80px"))
        self.fix_more = ipw.Text(value="", description="also fix", layout=ipw.Layout(width="300px"),
                                 placeholder="name=value, e.g. B_e=1.9313")
        self.joint = ipw.Checkbox(value=True, indent=False,
                                  description="one set of constants for all isotopologues")
        self.baseline = ipw.Dropdown(options=BASELINE_CHOICES, value="linear",
                                     description="baseline", layout=ipw.Layout(width="210px"))
        self.fit_button = ipw.Button(description="Fit band", icon="line-chart",
                                     button_style="primary")
        self.fit_button.add_class("wk-fit-band")
        self.fit_button.on_click(self._on_fit_click)
        self.reset_zoom_button = ipw.Button(description="Whole range", icon="arrows-h")
        self.reset_zoom_button.on_click(lambda _: self.plot.reset_window())
        self.summary = ipw.HTML()
        self.parameter_table = ipw.HTML()
        self.constant_table = ipw.HTML()
        self.correlations = ipw.HTML()
        self._actions(self.fit_button)
        self.children = [
            row(self.molecule, self.band, self.instrument, self.resolution, self.resolution_note),
            row(self.temperature, self.fix_temperature, self.fix_more, self.baseline),
            row(self.joint, self.fit_button, self.reset_zoom_button),
            *self.plot.widgets(),
            self.status,
            self.summary,
            self.parameter_table,
            self.correlations,
            self.constant_table,
        ]

    # ------------------------------------------------------------------ rendering
    def render(self) -> None:
        s = self.session
        if s is None:
            self.plot.clear("data", "model", "baseline", "residual")
            self._clear_tables()
            self._shown_fit = _UNSET
            return
        if self._molecule_of is not s:  # a new session: its molecule, not the last one's
            self._molecule_of = s
            found = session_molecule(s)
            if found:
                self.molecule.value = found
        sp = s.spectrum
        self._show_spectrum(sp)
        res = (sp.meta or {}).get("resolution")
        self.resolution_note.value = (
            f"<span style='color:#555'>file: {format_value(res, 4)} cm⁻¹ (used when 0)</span>"
            if isinstance(res, (int, float)) else
            "<span style='color:#555'>0: fitted (the file gives none)</span>")
        fit = s.band_model
        if fit is self._shown_fit:
            return
        self._shown_fit = fit
        if fit is None:
            self.plot.clear("model", "baseline", "residual")
            self._clear_tables()
            return
        self._controls_from(fit.spec)
        self.plot.set_curve("model", fit.x, fit.model_y)
        base = fit.baseline_y
        self.plot.set_curve("baseline", fit.x, base if np.ndim(base) else np.full(fit.x.size, base))
        self.plot.set_curve("residual", fit.x, fit.residual)
        self.summary.value = self._summary_html(fit)
        ptab = fit.parameters.copy()
        ptab["stderr"] = np.where(ptab["status"] == "free", ptab["stderr"], np.nan)
        self.parameter_table.value = html_table(
            ptab, name="band-parameters", columns=PARAMETER_COLUMNS,
            headers={"name": "parameter", "status": "free / fixed / held"},
            row_class=lambda r: "wk-outlier" if r["status"] == "held" else "")
        # a constant that was fixed or held shows no standard error and says so (not "± 0")
        self.constant_table.value = html_table(mark_fixed(fit.constants, fit.parameters),
                                               name="band-constants",
                                               columns=CONSTANT_COLUMNS,
                                               empty="no constants")
        self.correlations.value = self._correlation_html(fit)

    def _controls_from(self, spec: dict) -> None:
        """The controls set to the options of the fit shown (a session reopened, or a fit
        made in code), so that "Fit band" repeats it unless the user changes something (the
        temperature fixed at 296 K showed "fix T" unticked, and a click refitted T free)."""
        bands = spec.get("band") or []
        if len(bands) == 1:
            self.band.value = f"{int(bands[0][0])}-{int(bands[0][1])}"
        if spec.get("instrument") in dict(INSTRUMENT_CHOICES).values():
            self.instrument.value = spec["instrument"]
        if spec.get("baseline") in dict(BASELINE_CHOICES).values():
            self.baseline.value = spec["baseline"]
        res = spec.get("resolution")
        self.resolution.value = float(res) if isinstance(res, (int, float)) and res > 0 else 0.0
        self.joint.value = bool(spec.get("joint", True))
        fix = dict(spec.get("fix") or {})
        t_fixed = fix.pop("temperature", None)
        self.fix_temperature.value = t_fixed is not None
        t = t_fixed if t_fixed is not None else spec.get("temperature")
        if isinstance(t, (int, float)) and t > 0:
            self.temperature.value = float(t)
        self.fix_more.value = ", ".join(f"{k}={float(v)!r}" for k, v in fix.items())

    def _clear_tables(self) -> None:
        for w in (self.summary, self.parameter_table, self.constant_table, self.correlations):
            w.value = ""

    @staticmethod
    def _summary_html(fit) -> str:
        ok = fit.status == "ok"
        color = "#1e6b30" if ok else "#8a5300"
        head = "fit ok" if ok else "doubtful"
        parts = [f'<span style="color:{color}"><b>{head}</b></span>',
                 f"reduced χ² {format_value(fit.redchi, 4)}",
                 f"instrument convolved in {html.escape(fit.domain)}"]
        if fit.structured_residual:
            parts.append("structured residual: errors widened up to "
                         f"× {format_value(fit.error_scale, 3)}")
        if fit.quick is not None:
            parts.append(f"P–R maxima {format_value(fit.quick.separation, 4)} cm⁻¹ apart")
        reasons = "".join(f"<li>{html.escape(r)}</li>" for r in fit.reasons)
        notes = "".join(f"<li>{html.escape(m)}</li>" for m in fit.messages
                        if not m.startswith("start of"))
        out = f'<div class="wk-band-summary">{" · ".join(parts)}'
        if reasons:
            out += f'<ul class="wk-band-reasons" style="color:{color}">{reasons}</ul>'
        if notes:
            out += f'<details><summary>notes</summary><ul style="color:#555">{notes}</ul></details>'
        return out + "</div>"

    @staticmethod
    def _correlation_html(fit) -> str:
        c = fit.correlation
        names = list(c.columns)
        pairs = [(names[i], names[j], float(c.iloc[i, j])) for i in range(len(names))
                 for j in range(i + 1, len(names)) if abs(c.iloc[i, j]) >= SHOWN_CORRELATION]
        if not pairs:
            return ""
        items = "".join(f"<li>{html.escape(a)} – {html.escape(b)}: {r:+.3f}</li>"
                        for a, b, r in pairs)
        return (f'<div class="wk-band-correlations"><b>strong correlations</b> '
                f"(the data determine only combinations of these)<ul>{items}</ul></div>")

    # ------------------------------------------------------------------ actions
    def fit_options(self) -> dict:
        """The keyword arguments "Fit band" passes to :meth:`Session.fit_band_model`."""
        fix = parse_fix(self.fix_more.value)
        if self.fix_temperature.value:
            fix["temperature"] = float(self.temperature.value)
        opts = {"band": parse_band(self.band.value), "instrument": self.instrument.value,
                "baseline": self.baseline.value, "joint": bool(self.joint.value)}
        if self.resolution.value > 0:
            opts["resolution"] = float(self.resolution.value)
        if fix:
            opts["fix"] = fix
        if not self.fix_temperature.value:
            opts["temperature"] = float(self.temperature.value)
        return opts

    def _on_fit_click(self, _button) -> None:
        if self.busy:
            return
        try:
            opts = self.fit_options()
        except FitError as exc:
            self.last_error = exc
            self.show_status("error", f"fit band: {exc}")
            return
        self.fit_button.description = "Fitting…"
        self.fit_button.icon = "hourglass-half"

        def progress(stage, iteration, chisqr, elapsed):
            self.show_status("busy", f"fitting the band: {stage}, step {iteration}, "
                                     f"χ² {format_value(chisqr, 4)}, {elapsed:.1f} s")

        try:
            self._call("fit band", "fit_band_model", self.molecule.value.strip(), progress=progress,
                       busy="fitting the band…", **opts)
        finally:
            self.fit_button.description = "Fit band"
            self.fit_button.icon = "line-chart"
        if self.last_error is None:
            fit = self.session.band_model
            n = int((fit.parameters["status"] == "free").sum())
            self.show_status("ok" if fit.status == "ok" else "warning",
                             f"fitted {plural(n, 'parameter')}: {fit.status}"
                             + (f" ({fit.reasons[0]})" if fit.reasons else ""))
