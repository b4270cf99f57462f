"""Notebook panels over one :class:`~widgetkit.session.Session` (ipywidgets + bqplot).

Each panel works alone (``PeaksPanel(session)`` in a cell) or inside
:class:`AnalysisApp`, which shows all of them as tabs on one session. Panels
hold view state only; every analysis action is a session method, and every
panel re-renders when the session notifies it.
"""

from __future__ import annotations

from .numbers import format_uncertainty, format_value
from .peaks_panel import PeaksPanel
from .spectrum_panel import SpectrumPanel

__all__ = ["SpectrumPanel", "PeaksPanel", "format_uncertainty", "format_value"]
