"""Read-only views of the state a session shows (mixed into :class:`Session`).

Every property reads the state after the step being viewed (``Session.view``),
so two panels on one session always show the same thing; tables are copies.
"""

from __future__ import annotations

import pandas as pd

from ..fitmarks import FIXED_NOTE, HELD_NOTE, mark_not_fitted
from ..spectrum import Spectrum
from .steps import Step

__all__ = ["StateViews", "LINE_COLUMNS", "ASSIGNMENT_COLUMNS", "CONSTANT_COLUMNS",
           "constants_table", "mark_fixed", "METHOD_LINE_POSITIONS", "METHOD_BAND_MODEL",
           "FIXED_NOTE", "HELD_NOTE"]

LINE_COLUMNS = ["line_id", "position", "position_err", "area", "area_err", "height", "fwhm",
                "fwhm_err"]
ASSIGNMENT_COLUMNS = ["line_id", "position", "isotopologue", "v_upper", "v_lower", "J_upper",
                      "J_lower", "label", "calc", "obs_minus_calc", "outlier"]
CONSTANT_COLUMNS = ["isotopologue", "name", "value", "stderr", "unit", "method"]
#: the ``method`` of each source of constants
METHOD_LINE_POSITIONS = "line positions"
METHOD_BAND_MODEL = "band model"


def mark_fixed(constants: pd.DataFrame, parameters: pd.DataFrame) -> pd.DataFrame:
    """Band-model constants with those that were not fitted marked (stderr NaN, ``note``
    :data:`FIXED_NOTE` / :data:`HELD_NOTE`): :func:`widgetkit.bandmodel.result.mark_not_fitted`,
    which :class:`~widgetkit.bandmodel.BandFit` applies itself; kept for constants read from
    a record, whose stderr is 0 (so sessions saved before verify unchanged)."""
    return mark_not_fitted(constants, parameters)


def constants_table(state) -> pd.DataFrame:
    """The constants of a state: those of the assignment (``method`` "line positions") and
    of the band-model fit (``method`` "band model"), in that order; further columns a
    result adds follow :data:`CONSTANT_COLUMNS`. Band-model constants that were not fitted
    (fixed by the user, or held) have ``stderr`` NaN and say so in ``note``
    (:func:`mark_fixed`)."""
    parts = []
    a = state.assignment
    if a is not None and len(a.constants):
        parts.append(a.constants.assign(method=METHOD_LINE_POSITIONS))
    b = getattr(state, "band_model", None)
    if b is not None and len(b.constants):
        parts.append(mark_fixed(b.constants, b.parameters).assign(method=METHOD_BAND_MODEL))
    if not parts:
        return pd.DataFrame(columns=CONSTANT_COLUMNS)
    out = pd.concat(parts, ignore_index=True)
    if "note" in out:
        out["note"] = out["note"].fillna("")
    return out[CONSTANT_COLUMNS + [c for c in out.columns if c not in CONSTANT_COLUMNS]]


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
        """Fitted and derived constants: ``isotopologue, name, value, stderr, unit, method``.

        ``method`` says which route produced each number: "line positions" (the assignment
        of fitted lines, :meth:`assign_band`) or "band model" (the contour fit,
        :meth:`fit_band_model`). Read columns by name; more may be added.
        """
        return constants_table(self.state)

    @property
    def band_model(self):
        """The last band-model fit (:class:`widgetkit.bandmodel.BandFit`), or None."""
        return self.state.band_model

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
