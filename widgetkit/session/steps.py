"""Steps, the analysis state they act on, and the registry of step kinds.

A :class:`Step` is the record of one change: its kind, its parameters exactly
as given, the time, a one-line summary, the result it produced (plain JSON
data, compared again by :meth:`Session.verify`) and the software versions.

A step *kind* is one small class registered with :func:`register_step`. Its
``apply`` is a pure function of the previous :class:`State` and the
parameters; it returns the new state, the result to record and the summary::

    @register_step
    class Smooth(StepKind):
        kind = "smooth"

        def apply(self, state, params, ctx):
            spectrum = my_smoother(state.spectrum, **params)
            return state.evolve(spectrum=spectrum), {"npoints": len(spectrum)}, "smoothed"

The session adds a public method that validates its arguments and calls
``self._run("smooth", params)``.

Fast reopen: :meth:`StepKind.restore` rebuilds the state from the recorded
result instead of computing it again (the default runs ``apply``);
:meth:`Session.load` uses it, :meth:`Session.verify` always runs ``apply``.

Dependent results are invalidated: a step that changes the spectrum or the
peaks clears what was derived from them (:func:`drop_dependents`) and says so
in its result (``"cleared"``) and summary; earlier states are kept, so undo
brings everything back.
"""

from __future__ import annotations

import dataclasses
import functools
import platform
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ..errors import SessionStateError, WidgetkitError
from ..spectrum import Spectrum
from .params import Param, check_params
from .records import table_to_json

__all__ = ["Step", "State", "StepKind", "STEP_KINDS", "register_step", "software_versions",
           "Context", "table_to_json", "utc_now", "drop_dependents", "cleared_text",
           "RecordMismatch", "assigned_count", "seal_json"]

PEAK_COLUMNS = ["peak_id", "position", "height", "snr"]


def utc_now() -> str:
    """The current UTC time in ISO 8601 with milliseconds."""
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


def software_versions() -> dict[str, str]:
    """Versions of Python and the packages a result depends on (read from metadata, no imports)."""
    return dict(_software_versions())


@functools.lru_cache(maxsize=1)
def _software_versions() -> dict[str, str]:
    from importlib import metadata  # here: reopening a session never needs it

    out = {"python": platform.python_version()}
    for pkg in ("widgetkit", "numpy", "scipy", "pandas", "lmfit"):
        try:
            out[pkg] = metadata.version(pkg)
        except metadata.PackageNotFoundError:  # pragma: no cover - editable installs have it
            out[pkg] = "unknown"
    return out


@dataclass(frozen=True)
class Step:
    """The record of one change to a session.

    Attributes
    ----------
    kind : str
        A registered step kind (``"load"``, ``"crop"``, ``"fit_lines"``, ...).
    params : dict
        The parameters exactly as given (JSON data).
    at : str
        UTC time in ISO 8601.
    summary : str
        One line for people.
    result : dict
        What the step produced, as JSON data; replayed and compared by ``verify``.
    software : dict
        Versions of Python and the libraries when the step was taken.
    """

    kind: str
    params: dict
    at: str
    summary: str
    result: dict = field(default_factory=dict)
    software: dict = field(default_factory=dict)
    #: the seal read from a file (:meth:`seal` of the step as it was written), or None
    sha256: str | None = field(default=None, compare=False)

    def to_json(self) -> dict:
        """The step as written to a file, sealed (``sha256``, see :meth:`seal`)."""
        out = {"kind": self.kind, "params": self.params, "at": self.at, "summary": self.summary,
               "result": self.result, "software": self.software}
        out["sha256"] = seal_json(out)
        return out

    def seal(self) -> str:
        """sha256 of the step's canonical JSON (sorted keys, no spaces, ASCII): any edit of
        any value of the step (a parameter, the time, a digit of a result) changes it, so
        :meth:`Session.verify` reports a step whose content no longer matches its seal."""
        return seal_json({"kind": self.kind, "params": self.params, "at": self.at,
                      "summary": self.summary, "result": self.result, "software": self.software})


def seal_json(content: dict) -> str:
    """sha256 (hex) of ``content`` as canonical JSON: sorted keys, no spaces, ASCII only."""
    import hashlib
    import json

    text = json.dumps(content, sort_keys=True, separators=(",", ":"), allow_nan=False)
    return hashlib.sha256(text.encode("ascii")).hexdigest()


def _empty_peaks() -> pd.DataFrame:
    return pd.DataFrame({"peak_id": pd.Series(dtype="int64"),
                         "position": pd.Series(dtype="float64"),
                         "height": pd.Series(dtype="float64"),
                         "snr": pd.Series(dtype="float64")})


@dataclass(frozen=True)
class State:
    """The analysis state after a step (treated as immutable: steps return new states).

    Attributes
    ----------
    spectrum : Spectrum or None
        The current processed spectrum.
    baseline : ndarray or None
        The last baseline subtracted (on ``spectrum.x``), for display.
    peaks : DataFrame
        ``peak_id, position, height, snr`` (+ ``prominence``, ``origin``).
    line_fit : LineFit or None
        The last accepted line fit.
    assignment : object or None
        The last band assignment or progression result.
    assign_spec : dict or None
        The parameters of the last ``assign_band`` step (re-used after manual edits).
    locks : dict
        Manual assignments, line_id -> labels.
    next_peak_id : int
        The id the next new peak gets. Ids only grow: a peak id (and so a line id)
        is never given to a different peak within a session.
    band_model : BandFit or None
        The last band-model fit (:mod:`widgetkit.bandmodel`); a step that changes the
        spectrum clears it.
    from_transmittance : bool
        The spectrum is absorbance computed from transmittance (``to_absorbance``): its
        noise grows as 1/T, and a line fit weights for it (``weighting="auto"``).
    peak_min_snr : float or None
        The ``min_snr`` the last peak search was asked for (None: automatic); lines a fit
        adds from its residual must stand out as much.
    fringe : Fringe or None
        The interference fringe the last peak search set aside
        (:mod:`widgetkit.processing.fringe`); a line fit with ``baseline="auto"`` subtracts
        it with its background. A new spectrum clears it.
    """

    spectrum: Spectrum | None = None
    baseline: np.ndarray | None = None
    peaks: pd.DataFrame = field(default_factory=_empty_peaks)
    line_fit: Any = None
    assignment: Any = None
    assign_spec: dict | None = None
    locks: Mapping[int, dict] = field(default_factory=dict)
    next_peak_id: int = 1
    band_model: Any = None
    from_transmittance: bool = False
    peak_min_snr: float | None = None
    fringe: Any = None
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    def evolve(self, **changes) -> State:
        """A copy with some fields changed (values derived from the spectrum are kept
        while the spectrum stays the same; a new spectrum clears the band-model fit)."""
        cache = self._cache if "spectrum" not in changes else {}
        if "spectrum" in changes and "band_model" not in changes:
            changes["band_model"] = None
        if "spectrum" in changes and "fringe" not in changes:
            changes["fringe"] = None
        return dataclasses.replace(self, **changes, _cache=cache)

    def noise(self) -> float:
        """Robust noise σ of the current spectrum (:func:`widgetkit.processing.estimate_noise`),
        computed once per state."""
        if "noise" not in self._cache:
            from ..processing import estimate_noise

            self._cache["noise"] = float(estimate_noise(self.require_spectrum().y))
        return self._cache["noise"]

    def require_spectrum(self) -> Spectrum:
        if self.spectrum is None:
            raise SessionStateError("the session has no spectrum yet; start it with a load step")
        return self.spectrum


@dataclass(frozen=True)
class Context:
    """What a step may read besides the state: the decoded source spectra by id, and the
    source records (path, sha256, size, format, y_kind, meta, read_options) by id."""

    sources: Mapping[str, Spectrum]
    records: Mapping[str, dict] = field(default_factory=dict)


class StepKind:
    """Base class of a step kind; subclasses set ``kind`` and implement ``apply``.

    ``tolerance`` is the relative tolerance ``verify`` uses for floating-point
    results of this kind (integers, strings and booleans always compare exactly).

    ``parameters`` declares the parameters (:class:`~widgetkit.session.params.Param`);
    :meth:`check_params` checks them for live calls and for saved files alike, before
    anything is computed (None: any bounded JSON, for a kind that declares nothing yet).
    ``argument_error`` is the error a live call with a bad argument raises.
    """

    kind: ClassVar[str] = ""
    parameters: ClassVar[tuple[Param, ...] | None] = None
    argument_error: ClassVar[type[WidgetkitError]] = SessionStateError
    tolerance: ClassVar[float] = 1e-9
    #: dotted paths in the result that ``verify`` does not compare: diagnostics that
    #: legitimately differ between machines (a solver's last step size in a message)
    volatile: ClassVar[tuple[str, ...]] = ()

    def check_params(self, params: dict) -> dict:
        """The parameters checked against :attr:`parameters` and normalised (numbers as
        float, whole numbers as int); raises
        :class:`~widgetkit.session.params.ParamProblem`. Override to add rules between
        parameters (call this first); never compute or import anything heavy here."""
        return check_params(self.parameters, params)

    def apply(self, state: State, params: dict, ctx: Context) -> tuple[State, dict, str]:
        """Compute the step: ``(new state, result to record, one-line summary)``.

        A pure function of the previous state and the parameters (run live, on replay
        by :meth:`Session.verify`, and by the default :meth:`restore`).
        """
        raise NotImplementedError

    def replay(self, state: State, params: dict, result: dict, ctx: Context
               ) -> tuple[State, dict, str]:
        """Compute the step again to reproduce its recorded ``result`` (``verify``, and a
        record that cannot be restored). The default is :meth:`apply`; a kind whose
        computation depends on more than its parameters (a fit stopped by its time
        limit) reads what it needs from the record to end where the record did."""
        return self.apply(state, params, ctx)

    def restore(self, state: State, params: dict, result: dict, ctx: Context) -> State:
        """The state after this step, rebuilt from its recorded ``result`` (fast reopen).

        :meth:`Session.load` calls this instead of :meth:`apply`. The default runs
        :meth:`apply`; a kind whose computation is expensive (fits, assignments)
        overrides it to rebuild its result objects from the record, which must then
        hold everything needed (see :mod:`widgetkit.session.records`). An override
        checks that the record agrees with ``state`` (the line ids exist, the sizes
        match) and raises :class:`RecordMismatch` when it does not: the session then
        runs :meth:`apply` for this step instead, so a damaged record never shows
        numbers no computation produced (``verify`` reports the difference).
        """
        return self.apply(state, params, ctx)[0]

    def __repr__(self) -> str:
        return f"<step kind {self.kind!r}>"


class RecordMismatch(Exception):
    """Raised by :meth:`StepKind.restore` when the recorded result does not fit the state
    (internal: the session falls back to :meth:`StepKind.apply`)."""


STEP_KINDS: dict[str, StepKind] = {}


def register_step(cls: type[StepKind]) -> type[StepKind]:
    """Class decorator: register a step kind under ``cls.kind``."""
    if not cls.kind:
        raise TypeError(f"{cls.__name__} needs a non-empty class attribute 'kind'")
    if cls.kind in STEP_KINDS and type(STEP_KINDS[cls.kind]) is not cls:
        raise TypeError(f"step kind {cls.kind!r} is already registered")
    STEP_KINDS[cls.kind] = cls()
    return cls


def drop_dependents(state: State, *, spectrum: Spectrum | None = None,
                    peaks: pd.DataFrame | None = None, baseline: Any = ...
                    ) -> tuple[State, dict]:
    """The state with a new spectrum and/or peak table, and what that cleared.

    Parameters
    ----------
    state : State
        The state before the step.
    spectrum : Spectrum, optional
        The new spectrum (a step that changes the spectrum).
    peaks : DataFrame, optional
        The new peak table (a step that replaces or filters the peaks).
    baseline : ndarray or None, optional
        The new baseline for display (unchanged when not given).

    Returns
    -------
    state : State
        Line fit, assignment and the assignment's settings cleared (they were derived
        from the old spectrum or peaks); locks kept only for peaks still present.
    cleared : dict
        What was cleared, for the step's result: ``lines`` (number of fitted lines),
        ``assignment`` (number of assigned lines), ``locks`` (line ids), ``peaks``
        (number of peaks dropped), ``band_model`` (True: a new spectrum drops the
        band-model fit). Empty when nothing was.
    """
    changes: dict[str, Any] = {}
    if spectrum is not None:
        changes["spectrum"] = spectrum
    if baseline is not ...:
        changes["baseline"] = baseline
    new_peaks = state.peaks if peaks is None else peaks
    if peaks is not None:
        changes["peaks"] = peaks
    cleared: dict[str, Any] = {}
    n_dropped = len(set(state.peaks["peak_id"].tolist()) - set(new_peaks["peak_id"].tolist()))
    if n_dropped:
        cleared["peaks"] = n_dropped
    if state.line_fit is not None:
        cleared["lines"] = int(len(state.line_fit.table))
    if state.assignment is not None:
        cleared["assignment"] = assigned_count(state.assignment)
    if spectrum is not None and state.band_model is not None:
        cleared["band_model"] = True
    keep = set(new_peaks["peak_id"].tolist())
    gone = sorted(int(k) for k in state.locks if int(k) not in keep)
    if gone:
        cleared["locks"] = gone
    locks = {k: v for k, v in state.locks.items() if int(k) in keep}
    new = state.evolve(line_fit=None, assignment=None, assign_spec=None, locks=locks, **changes)
    return new, cleared


def assigned_count(assignment) -> int:
    """How many lines an assignment result labels."""
    labels = assignment.assignments.get("label")
    return 0 if labels is None else int(labels.notna().sum())


def cleared_text(cleared: dict) -> str:
    """``"; cleared 34 fitted lines, the assignment and 2 locks"`` (empty when nothing was)."""
    parts = []
    if cleared.get("peaks"):
        n = cleared["peaks"]
        parts.append(f"{n} peak{'s' if n != 1 else ''}")
    if "lines" in cleared:
        n = cleared["lines"]
        parts.append(f"{n} fitted line{'s' if n != 1 else ''}")
    if "assignment" in cleared:
        parts.append("the assignment")
    if cleared.get("locks"):
        n = len(cleared["locks"])
        parts.append(f"{n} lock{'s' if n != 1 else ''}")
    if cleared.get("band_model"):
        parts.append("the band-model fit")
    if not parts:
        return ""
    text = parts[0] if len(parts) == 1 else ", ".join(parts[:-1]) + " and " + parts[-1]
    return f"; cleared {text} (undo brings them back)"
