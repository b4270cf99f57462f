"""The combined view: every panel as a tab, all on one session."""

from __future__ import annotations

import ipywidgets as ipw
import traitlets

from .bandmodel_panel import BandModelPanel
from .levels_panel import LevelsPanel
from .lines_panel import LinesPanel
from .peaks_panel import PeaksPanel
from .record_panel import RecordPanel
from .spectrum_panel import SpectrumPanel

__all__ = ["AnalysisApp"]


class AnalysisApp(ipw.VBox):
    """All panels in tabs (Spectrum, Peaks, Lines, Levels, Band model, Record) on one session.

    Parameters
    ----------
    session : widgetkit.Session, optional
        The analysis to show; without one, open a file in the Spectrum tab.
    reverse_x : bool, optional
        Wavenumber axes from high to low (default: on for absorbance and
        transmittance spectra).
    n_bins : int, optional
        Bins of the display decimation.
    read_only : bool, default False
        Disable every control that changes the analysis (a walk-through in a
        meeting, e.g. under Voila): zoom, selections and the Record panel's
        Back/Forward still work; saving is still possible.

    Notes
    -----
    The app holds no analysis state: its panels subscribe to the session.
    Opening a file or reopening a saved session gives every panel the new
    session (:meth:`use_session`).
    """

    def __init__(self, session=None, *, reverse_x: bool | None = None, n_bins: int | None = None,
                 read_only: bool = False, **kwargs):
        super().__init__(**kwargs)
        self.add_class("wk-app")
        ro = {"owner": self, "read_only": read_only}
        plot_kw = {"reverse_x": reverse_x, "n_bins": n_bins, **ro}
        self.spectrum_panel = SpectrumPanel(session, **plot_kw)
        self.peaks_panel = PeaksPanel(session, **plot_kw)
        self.lines_panel = LinesPanel(session, **plot_kw)
        self.levels_panel = LevelsPanel(session, **ro)
        self.bandmodel_panel = BandModelPanel(session, **plot_kw)
        self.record_panel = RecordPanel(session, **ro)
        self.panels = [self.spectrum_panel, self.peaks_panel, self.lines_panel,
                       self.levels_panel, self.bandmodel_panel, self.record_panel]
        # one axis direction for all spectrum plots: the Spectrum panel's check box
        self._links = [traitlets.dlink((self.spectrum_panel.high_to_low, "value"),
                                       (p.plot.x_scale, "reverse"))
                       for p in (self.peaks_panel, self.lines_panel, self.bandmodel_panel)]
        self.tabs = ipw.Tab(children=self.panels, titles=[p.title for p in self.panels])
        self.children = [self.tabs]

    @property
    def session(self):
        return self.spectrum_panel.session

    def use_session(self, session) -> None:
        """Show ``session`` in every panel."""
        for p in self.panels:
            p.session = session

    def close(self) -> None:
        for link in self._links:
            link.unlink()
        for p in self.panels:
            p.close()
        super().close()
