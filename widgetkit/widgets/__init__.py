"""Notebook panels over one :class:`~widgetkit.session.Session` (ipywidgets + bqplot).

Each panel works alone (``PeaksPanel(session)`` in a cell) or inside
:class:`AnalysisApp`, which shows all of them as tabs on one session. Panels
hold view state only; every analysis action is a session method, and every
panel re-renders when the session notifies it (``Session.subscribe``).

Panels: :class:`SpectrumPanel` (open, metadata, crop, baseline, absorbance),
:class:`PeaksPanel` (find, click to add, select, remove), :class:`LinesPanel`
(line-shape fit, model, components, residuals, line table),
:class:`LevelsPanel` (assign, lock or clear, Fortrat and obs − calc plots,
constants), :class:`BandModelPanel` (fit the whole band: data, model,
residual, parameters, constants, correlations), :class:`RecordPanel`
(history, notes, step through, save, reopen, verify).
:class:`SeriesPanel` shows a series (``wk.run_series``): a constant against the series
variable, and opens any spectrum's session in the app.
"""

from __future__ import annotations

from ._plot import SpectrumFigure
from .app import AnalysisApp
from .bandmodel_panel import BandModelPanel
from .levels_panel import LevelsPanel, fortrat_m
from .lines_panel import LinesPanel
from .numbers import format_uncertainty, format_value
from .peaks_panel import PeaksPanel
from .record_panel import RecordPanel
from .series_panel import SeriesPanel
from .spectrum_panel import SpectrumPanel

__all__ = [
    "AnalysisApp",
    "SpectrumPanel",
    "PeaksPanel",
    "LinesPanel",
    "LevelsPanel",
    "BandModelPanel",
    "RecordPanel",
    "SeriesPanel",
    "SpectrumFigure",
    "format_uncertainty",
    "format_value",
    "fortrat_m",
]
