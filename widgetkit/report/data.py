"""What a report holds: the tables and records of a session, gathered once.

:func:`collect` reads a :class:`~widgetkit.session.Session` and returns a
frozen :class:`ReportData`; every renderer (Markdown, HTML, LaTeX, CSV) works
from that one object, so all formats show the same numbers, and those numbers
are the session's own (copied, never recomputed).
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime, timezone
from typing import Any

import numpy as np
import pandas as pd

from .flags import known

__all__ = ["ReportData", "StepRecord", "collect", "LINE_VALUE_COLUMNS"]

#: line-table columns shown as value(uncertainty) pairs: column -> its standard-error column
LINE_VALUE_COLUMNS = {"position": "position_err", "area": "area_err", "fwhm": "fwhm_err",
                      "height": "height_err", "sigma": "sigma_err", "gamma": "gamma_err"}


@dataclass(frozen=True)
class StepRecord:
    """One step of the record as a report shows it (``number`` from 0: the load is step 0,
    so step i is ``session.history[i]``)."""

    number: int
    kind: str
    params: dict
    summary: str
    at: str

    @property
    def params_text(self) -> str:
        """The parameters as compact JSON with sorted keys."""
        return json.dumps(self.params, sort_keys=True, ensure_ascii=False, separators=(", ", ": "))


@dataclass(frozen=True)
class ReportData:
    """Everything a report shows, copied from one session.

    Attributes
    ----------
    title : str
    generated : str
        UTC time of :func:`collect`, ISO 8601.
    sources : list of dict
        ``id, path, format, size, sha256`` (of the file's bytes) and ``data_sha256``
        (of the embedded float64 arrays).
    steps : list of StepRecord
    lines, assignments, constants : DataFrame
        As :attr:`Session.lines`, :attr:`Session.assignments`, :attr:`Session.constants`.
    extra_tables : dict of str -> DataFrame
        Further tables of the assignment result (for example combination differences).
    software : dict of str -> str
        Package versions recorded in the steps (the newest recorded value of each).
    spectrum_x, spectrum_y : ndarray or None
        The processed spectrum, for figures.
    model_x, model_y : ndarray or None
        The fitted model (on the fitted points) when the line fit provides it.
    y_kind : str
    verified : bool or None
        The outcome of :meth:`Session.verify` when :func:`collect` was asked to run it;
        None when verification was not run (reports then say so).
    verify_messages : list of str
    messages : list of str
        What the assignment flagged, left out or cross-checked (its ``messages``).
    methods : list of str
        The methods paragraphs (:func:`~widgetkit.report.methods.describe_methods`).
    flags : list of str
        What to look at twice (:func:`~widgetkit.report.flags.collect_flags`).
    at_bound : frozenset of (line_id, column)
        Line-table cells whose parameter ended on a bound.
    """

    title: str
    generated: str
    sources: list
    steps: list
    lines: pd.DataFrame
    assignments: pd.DataFrame
    constants: pd.DataFrame
    extra_tables: Mapping[str, pd.DataFrame] = field(default_factory=dict)
    software: Mapping[str, str] = field(default_factory=dict)
    spectrum_x: np.ndarray | None = field(default=None, repr=False)
    spectrum_y: np.ndarray | None = field(default=None, repr=False)
    model_x: np.ndarray | None = field(default=None, repr=False)
    model_y: np.ndarray | None = field(default=None, repr=False)
    y_kind: str = "absorbance"
    verified: bool | None = None
    verify_messages: list = field(default_factory=list)
    messages: list = field(default_factory=list)
    methods: list = field(default_factory=list)
    flags: list = field(default_factory=list)
    at_bound: frozenset = field(default_factory=frozenset)

    def tables(self) -> dict[str, pd.DataFrame]:
        """The result tables in report order: lines, assignments, constants, extras."""
        out = {"lines": self.lines, "assignments": self.assignments, "constants": self.constants}
        out.update(self.extra_tables)
        return out


def _model_curve(fit, x: np.ndarray) -> tuple[np.ndarray | None, np.ndarray | None]:
    """(x, y) of the fitted model if the line fit offers it (``x``/``model_y``, else
    ``best_fit`` of its lmfit result on the spectrum's x); (None, None) otherwise."""
    if fit is None:
        return None, None
    fx, fy = known(fit, "x"), known(fit, "model_y")
    if fx is not None and fy is not None:
        fx, fy = np.asarray(fx, dtype=float), np.asarray(fy, dtype=float)
        if fx.shape == fy.shape and fx.ndim == 1:
            return fx, fy
    y = getattr(known(fit, "result"), "best_fit", None)
    if y is not None and np.shape(y) == x.shape:
        return x, np.asarray(y, dtype=float)
    return None, None


def _extra_tables(assignment: Any) -> dict[str, pd.DataFrame]:
    if assignment is None:
        return {}
    out: dict[str, pd.DataFrame] = {}
    if dataclasses.is_dataclass(assignment):
        names = [f.name for f in dataclasses.fields(assignment)]
    elif getattr(assignment, "restored", False) is True:  # rebuilt from the record
        names = [n for n in dir(assignment) if not n.startswith("_")]
    else:
        names = [n for n in vars(assignment) if not n.startswith("_")] if hasattr(
            assignment, "__dict__") else []
    for name in names:
        if name in ("assignments", "constants"):
            continue
        value = getattr(assignment, name, None)
        if isinstance(value, pd.DataFrame) and len(value.columns):
            out[name] = value.copy()
    return out


def _software(steps) -> dict[str, str]:
    out: dict[str, str] = {}
    for step in steps:
        for k, v in (step.software or {}).items():
            out[str(k)] = str(v)
    return out


def collect(session, *, title: str | None = None, verify: bool = False) -> ReportData:
    """Gather the tables and records of ``session`` for a report.

    Parameters
    ----------
    session : widgetkit.Session
        Its latest state is reported, also while an earlier one is being viewed.
    title : str, optional
        Default: the spectrum's ``meta["title"]``, else the source file name.
    verify : bool, default False
        Also replay the session (:meth:`Session.verify`) and report the outcome.

    Returns
    -------
    ReportData
    """
    from ..session.session import ASSIGNMENT_COLUMNS, LINE_COLUMNS
    from .flags import collect_flags
    from .methods import describe_methods, latest_constants

    history = session.history
    state = session.state_at(len(history) - 1)  # the latest state, whatever is being viewed
    sp = state.require_spectrum()
    sources = session.sources
    if title is None:
        title = (sp.meta.get("title") or session.source_spectrum.meta.get("title")
                 or (sources[0].get("path") or "").replace("\\", "/").rsplit("/", 1)[-1]
                 or "widgetkit session")
    fit, assignment = state.line_fit, state.assignment
    flags = collect_flags(session)
    x = np.array(sp.x, dtype=float)
    data = dict(
        title=str(title),
        generated=datetime.now(timezone.utc).isoformat(timespec="seconds"),
        sources=[{k: r.get(k) for k in ("id", "path", "format", "size", "sha256", "data_sha256")}
                 for r in sources],
        steps=[StepRecord(i, s.kind, dict(s.params), s.summary, s.at)
               for i, s in enumerate(history)],
        lines=pd.DataFrame(columns=LINE_COLUMNS) if fit is None else fit.table.copy(),
        assignments=(pd.DataFrame(columns=ASSIGNMENT_COLUMNS) if assignment is None
                     else assignment.assignments.copy()),
        constants=latest_constants(session),
        extra_tables=_extra_tables(assignment),
        software=_software(history),
        spectrum_x=x,
        spectrum_y=np.array(sp.y, dtype=float),
        model_x=_model_curve(fit, x)[0],
        model_y=_model_curve(fit, x)[1],
        y_kind=sp.y_kind,
        messages=[str(m) for m in (known(assignment, "messages") or [])],
        methods=describe_methods(session),
        flags=list(flags.items),
        at_bound=flags.at_bound,
    )
    if verify:
        rep = session.verify()
        data["verified"] = bool(rep.ok)
        data["verify_messages"] = list(rep.mismatches)
    return ReportData(**data)
