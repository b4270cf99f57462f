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
"""

from __future__ import annotations

import dataclasses
import functools
import platform
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from importlib import metadata
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from ..errors import SessionStateError
from ..spectrum import Spectrum

__all__ = ["Step", "State", "StepKind", "STEP_KINDS", "register_step", "software_versions",
           "Context", "table_to_json", "utc_now"]

PEAK_COLUMNS = ["peak_id", "position", "height", "snr"]


def utc_now() -> str:
    """The current UTC time in ISO 8601 with milliseconds."""
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


def software_versions() -> dict[str, str]:
    """Versions of Python and the packages a result depends on (read from metadata, no imports)."""
    return dict(_software_versions())


@functools.lru_cache(maxsize=1)
def _software_versions() -> dict[str, str]:
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

    def to_json(self) -> dict:
        return {"kind": self.kind, "params": self.params, "at": self.at, "summary": self.summary,
                "result": self.result, "software": self.software}


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
    """

    spectrum: Spectrum | None = None
    baseline: np.ndarray | None = None
    peaks: pd.DataFrame = field(default_factory=_empty_peaks)
    line_fit: Any = None
    assignment: Any = None
    assign_spec: dict | None = None
    locks: Mapping[int, dict] = field(default_factory=dict)
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    def evolve(self, **changes) -> State:
        """A copy with some fields changed (values derived from the spectrum are kept
        while the spectrum stays the same)."""
        cache = self._cache if "spectrum" not in changes else {}
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
    """What a step may read besides the state: the decoded source spectra by id."""

    sources: Mapping[str, Spectrum]


class StepKind:
    """Base class of a step kind; subclasses set ``kind`` and implement ``apply``.

    ``tolerance`` is the relative tolerance ``verify`` uses for floating-point
    results of this kind (integers, strings and booleans always compare exactly).
    """

    kind: ClassVar[str] = ""
    tolerance: ClassVar[float] = 1e-9

    def apply(self, state: State, params: dict, ctx: Context) -> tuple[State, dict, str]:
        raise NotImplementedError

    def __repr__(self) -> str:
        return f"<step kind {self.kind!r}>"


STEP_KINDS: dict[str, StepKind] = {}


def register_step(cls: type[StepKind]) -> type[StepKind]:
    """Class decorator: register a step kind under ``cls.kind``."""
    if not cls.kind:
        raise TypeError(f"{cls.__name__} needs a non-empty class attribute 'kind'")
    if cls.kind in STEP_KINDS and type(STEP_KINDS[cls.kind]) is not cls:
        raise TypeError(f"step kind {cls.kind!r} is already registered")
    STEP_KINDS[cls.kind] = cls()
    return cls


def _plain(v):
    """numpy scalars -> Python; NaN/inf -> None (JSON has no NaN)."""
    if isinstance(v, (np.bool_, bool)):
        return bool(v)
    if isinstance(v, (np.integer,)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        f = float(v)
        return f if np.isfinite(f) else None
    if v is None or (isinstance(v, float) and np.isnan(v)):
        return None
    if isinstance(v, str):
        return v
    try:
        if pd.isna(v):
            return None
    except (TypeError, ValueError):
        pass
    return v


def table_to_json(df: pd.DataFrame | None) -> dict:
    """A DataFrame as ``{column: [values]}`` of plain JSON values."""
    if df is None:
        return {}
    return {str(c): [_plain(v) for v in df[c].tolist()] for c in df.columns}
