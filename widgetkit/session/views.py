"""Read-only views of the state a session shows (mixed into :class:`Session`).

Every property reads the state after the step being viewed (``Session.view``),
so two panels on one session always show the same thing; tables are copies.
"""

from __future__ import annotations

import pandas as pd

from ..spectrum import Spectrum
from .steps import Step

__all__ = ["StateViews", "LINE_COLUMNS", "ASSIGNMENT_COLUMNS", "CONSTANT_COLUMNS"]

LINE_COLUMNS = ["line_id", "position", "position_err", "area", "area_err", "height", "fwhm",
                "fwhm_err"]
ASSIGNMENT_COLUMNS = ["line_id", "position", "isotopologue", "v_upper", "v_lower", "J_upper",
                      "J_lower", "label", "calc", "obs_minus_calc", "outlier"]
CONSTANT_COLUMNS = ["isotopologue", "name", "value", "stderr", "unit"]


class StateViews:
    """The read-only views; the class using it provides ``state``, ``_steps``, ``_sources``
    and ``_source_spectra``."""

    @property
    def spectrum(self) -> Spectrum:
        """The current processed spectrum."""
        return self.state.require_spectrum()

    @property
    def source_spectrum(self) -> Spectrum:
        """The raw spectrum as loaded."""
        return self._source_spectra[self._sources[0]["id"]]

    @property
    def baseline(self):
        """The last baseline subtracted (ndarray on ``spectrum.x``) or None."""
        return self.state.baseline

    @property
    def peaks(self) -> pd.DataFrame:
        """The peak table: ``peak_id, position, height, snr`` (+ ``prominence, origin``)."""
        return self.state.peaks.copy()

    @property
    def line_fit(self):
        """The last accepted :class:`widgetkit.lines.LineFit`, or None."""
        return self.state.line_fit

    @property
    def lines(self) -> pd.DataFrame:
        """The fitted lines (columns as :func:`widgetkit.lines.fit`), empty before a fit."""
        fit = self.state.line_fit
        return pd.DataFrame(columns=LINE_COLUMNS) if fit is None else fit.table.copy()

    @property
    def fit_result(self):
        """The lmfit result of the last accepted fit, or None."""
        fit = self.state.line_fit
        return None if fit is None else fit.result

    @property
    def assignment(self):
        """The last band assignment / progression result object, or None."""
        return self.state.assignment

    @property
    def assignments(self) -> pd.DataFrame:
        a = self.state.assignment
        return pd.DataFrame(columns=ASSIGNMENT_COLUMNS) if a is None else a.assignments.copy()

    @property
    def constants(self) -> pd.DataFrame:
        """Fitted and derived constants: ``isotopologue, name, value, stderr, unit``."""
        a = self.state.assignment
        return pd.DataFrame(columns=CONSTANT_COLUMNS) if a is None else a.constants.copy()

    @property
    def locks(self) -> dict:
        """Manual assignments: line_id -> labels."""
        return {k: dict(v) for k, v in self.state.locks.items()}

    @property
    def history(self) -> list[Step]:
        """The steps, oldest first (a copy)."""
        return list(self._steps)

    @property
    def sources(self) -> list[dict]:
        """Where the data came from: id, path, sha256 (of the file), size, format, y_kind,
        meta, read_options and ``data_sha256`` (of the embedded x then y as little-endian
        float64), as copies."""
        out = []
        for rec in self._sources:
            if "data_sha256" not in rec:  # hashed once, when first asked for
                rec["data_sha256"] = self._source_spectra[rec["id"]].data_sha256()
            out.append(dict(rec))
        return out
