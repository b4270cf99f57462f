"""Reports and supplementary material from a session (a face of widgetkit).

>>> import widgetkit as wk
>>> from widgetkit.report import write_report, write_bundle
>>> s = wk.Session.load("hcl_band.session.json")          # doctest: +SKIP
>>> write_report(s, "hcl_band.html")                       # doctest: +SKIP
>>> write_bundle(s, "supplementary/")                      # doctest: +SKIP

Every format shows the same sections, gathered once by :func:`collect`: the
source file and its sha256, each step with its parameters, the fitted lines
with uncertainties, the assignments with obs − calc, the constants with
uncertainties and units, and the software versions. The numbers are the
session's own: Markdown, HTML and LaTeX round them to the trade's
value(uncertainty) notation, the CSV keeps them exactly.
"""

from .bundle import Bundle, BundleExistsError, referee_readme, write_bundle
from .cells import parse_cell, parse_uncertainty
from .data import ReportData, StepRecord, collect
from .figures import report_figures, residual_figure, spectrum_figure
from .html import render_html
from .render import read_report_csv, render_csv, render_latex, render_markdown, tex_escape
from .write import REPORT_FORMATS, ReportFormatError, write_report

__all__ = [
    "collect", "ReportData", "StepRecord",
    "write_report", "REPORT_FORMATS", "ReportFormatError",
    "render_markdown", "render_html", "render_latex", "render_csv", "read_report_csv",
    "write_bundle", "Bundle", "BundleExistsError", "referee_readme",
    "spectrum_figure", "residual_figure", "report_figures",
    "parse_uncertainty", "parse_cell", "tex_escape",
]
