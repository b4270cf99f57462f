"""Marks on constants that were not fitted (fixed by the user or held by a fit), shared by the
band-model results and the session's views. Light: pandas only, so that reopening a session
imports no fitting code."""

from __future__ import annotations

import pandas as pd

__all__ = ["FIXED_NOTE", "HELD_NOTE", "mark_not_fitted", "unmarked"]

#: the ``note`` of a constant that was not fitted: set by the user (or a default) ...
FIXED_NOTE = "fixed (not fitted)"
#: ... or held by the fit because the data do not determine it
HELD_NOTE = "held (not determined by the data)"


def mark_not_fitted(constants: pd.DataFrame, parameters: pd.DataFrame) -> pd.DataFrame:
    """Constants with those that were not fitted marked, so they never read as exact
    measurements: ``stderr`` NaN and a ``note`` column (:data:`FIXED_NOTE`, :data:`HELD_NOTE`,
    else empty).

    ``T_rot`` takes the status of the parameter ``temperature`` (``fix={"temperature": 296}``
    makes it "fixed"); any other constant whose propagated standard error is exactly 0
    depends on fixed parameters only. A table already marked keeps its notes.
    """
    out = constants.copy()
    before = (out["note"].fillna("").astype(str).tolist() if "note" in out.columns
              else [""] * len(out))
    status = {}
    if {"name", "status"} <= set(parameters.columns):
        status = dict(zip(parameters["name"].astype(str), parameters["status"].astype(str),
                          strict=True))
    notes = []
    for name, err, old in zip(out["name"].astype(str), pd.to_numeric(out["stderr"], errors="coerce"),
                              before, strict=True):
        st = status.get("temperature") if name == "T_rot" else ("fixed" if err == 0 else "free")
        notes.append(old or (FIXED_NOTE if st == "fixed" else HELD_NOTE if st == "held" else ""))
    out["note"] = notes
    out.loc[out["note"] != "", "stderr"] = float("nan")
    return out


def unmarked(constants: pd.DataFrame) -> pd.DataFrame:
    """The constants as a session records them (sessions saved before the marking verify
    unchanged): ``stderr`` 0 where a constant was not fitted, and no ``note`` column."""
    out = constants.copy()
    if "note" in out.columns:
        out.loc[out["note"].fillna("").astype(str) != "", "stderr"] = 0.0
        out = out.drop(columns="note")
    return out
