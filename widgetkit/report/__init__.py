"""Reports and supplementary material from a session (a face of widgetkit).

>>> import widgetkit as wk
>>> from widgetkit.report import write_report, write_bundle
>>> s = wk.Session.load("hcl_band.session.json")          # doctest: +SKIP
>>> write_report(s, "hcl_band.html")                       # doctest: +SKIP
>>> write_bundle(s, "supplementary/")                      # doctest: +SKIP

Every format shows the same sections, gathered once by :func:`collect`: whether
the session was verified (or that verification was not run), the methods (how
every number was obtained: weights, free and fixed parameters, how standard
errors were computed), flags (parameters on a bound, doubtful results,
outliers), the source file and its sha256, each step (numbered from 0, the load
being step 0) with its parameters, the fitted lines with uncertainties, the
assignments with obs − calc, the constants with uncertainties and units, and
the software versions. The numbers are the session's own: Markdown, HTML and
LaTeX round every one of them by its uncertainty, the CSV tables keep them
exactly.
"""

from .bundle import Bundle, BundleExistsError, referee_readme, write_bundle
from .cells import parse_cell, parse_uncertainty
from .csvout import read_report_csv, render_csv
from .data import ReportData, StepRecord, collect
from .figures import report_figures, residual_figure, spectrum_figure
from .flags import collect_flags
from .html import render_html
from .latex import render_latex, tex_escape
from .methods import describe_methods
from .render import render_markdown
from .write import REPORT_FORMATS, ReportFormatError, ReportPathError, write_report

__all__ = [
    "collect", "ReportData", "StepRecord", "describe_methods", "collect_flags",
    "write_report", "REPORT_FORMATS", "ReportFormatError", "ReportPathError",
    "render_markdown", "render_html", "render_latex", "render_csv", "read_report_csv",
    "write_bundle", "Bundle", "BundleExistsError", "referee_readme",
    "spectrum_figure", "residual_figure", "report_figures",
    "parse_uncertainty", "parse_cell", "tex_escape",
]
