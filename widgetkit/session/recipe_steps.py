"""How a recipe is built from a session's steps: which steps it keeps and how steps that
name peaks or lines by id find them again in another spectrum (see :mod:`.recipe`).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .steps import State

__all__ = ["RecipeStep", "EDIT_KINDS", "REPLACING_KINDS", "ID_STEPS", "LOCK_KINDS", "IdRefs", "line_hints",
           "kept_indices", "still_locked", "anchors_of", "id_table"]

#: manual edits: skipped (and reported) when they cannot be made on another spectrum
EDIT_KINDS = frozenset({"add_peak", "remove_peak", "set_assignment", "clear_assignment"})
#: a step of one of these kinds is replaced entirely by a directly following one of the same kind
REPLACING_KINDS = frozenset({"find_peaks", "fit_lines", "assign_band"})
_PEAK_EDITS = frozenset({"add_peak", "remove_peak"})
LOCK_KINDS = frozenset({"set_assignment", "clear_assignment"})
#: fallback anchor tolerance (cm-1) for a lone peak of unknown width
_LONE_TOLERANCE = 1.0


@dataclass(frozen=True)
class IdRefs:
    """How a step kind names peaks or lines by id.

    ``space`` is ``"peaks"`` (``State.peaks``, ``peak_id``) or ``"lines"`` (the
    line fit's table, ``line_id``); ``ids(params)`` lists the ids a step names;
    ``with_ids(params, mapping)`` returns the parameters with ids replaced
    (``mapping``: old id -> new id; ids missing from it are left out).
    """

    space: str
    ids: Callable[[dict], list[int]]
    with_ids: Callable[[dict, dict[int, int]], dict]


def _lock_ids(p: dict) -> list[int]:
    if "assignments" in p:
        return [int(k) for k in p["assignments"]]
    return [int(p["line_id"])]


def _lock_with_ids(p: dict, m: dict[int, int]) -> dict:
    if "assignments" in p:
        return {**p, "assignments": {str(m[int(k)]): v for k, v in p["assignments"].items()
                                     if int(k) in m}}
    return {**p, "line_id": m[int(p["line_id"])]}


#: step kinds whose parameters name peaks or lines by id (register new ones here)
ID_STEPS: dict[str, IdRefs] = {
    "remove_peak": IdRefs("peaks", lambda p: [int(p["peak_id"])],
                          lambda p, m: {**p, "peak_id": m[int(p["peak_id"])]}),
    "set_assignment": IdRefs("lines", _lock_ids, _lock_with_ids),
    "clear_assignment": IdRefs("lines", lambda p: [int(p["line_id"])],
                               lambda p, m: {**p, "line_id": m[int(p["line_id"])]}),
}


def id_table(state: State, space: str):
    """(ids, positions, fwhm or None) of the peaks or the fitted lines of a state."""
    if space == "peaks":
        t = state.peaks
        return (t["peak_id"].to_numpy(int), t["position"].to_numpy(float),
                t["fwhm"].to_numpy(float) if "fwhm" in t else None)
    fit = state.line_fit
    if fit is None:
        return np.zeros(0, int), np.zeros(0), None
    t = fit.table
    return (t["line_id"].to_numpy(int), t["position"].to_numpy(float),
            t["fwhm"].to_numpy(float) if "fwhm" in t else None)


def anchors_of(space: str, ids: list[int], state: State) -> dict:
    """id -> {position, tolerance} of each id in ``state`` (ids not found are left out)."""
    all_ids, pos, fwhm = id_table(state, space)
    out = {}
    for i in ids:
        k = np.nonzero(all_ids == i)[0]
        if k.size == 0:
            continue
        k = int(k[0])
        others = np.delete(pos, k)
        tol = 0.5 * float(np.min(np.abs(others - pos[k]))) if others.size else np.inf
        if fwhm is not None and np.isfinite(fwhm[k]) and fwhm[k] > 0:
            tol = min(tol, float(fwhm[k]))
        out[str(i)] = {"position": float(pos[k]),
                       "tolerance": float(tol) if np.isfinite(tol) else _LONE_TOLERANCE}
    return out



@dataclass(frozen=True)
class RecipeStep:
    """One step of a recipe: ``kind`` and ``params`` as recorded, ``summary`` of the
    original step, and ``anchors`` (id as str -> ``{"position", "tolerance"}``, cm⁻¹) for
    steps that name peaks or lines by id."""

    kind: str
    params: dict
    summary: str = ""
    anchors: dict | None = None

    def to_json(self) -> dict:
        return {"kind": self.kind, "params": self.params, "summary": self.summary,
                "anchors": self.anchors}



def kept_indices(history, final: State) -> list[int]:
    """Indices of the steps a recipe keeps (module notes)."""
    idx = [i for i, st in enumerate(history) if i > 0 and st.kind not in ("load", "note")]
    last_find = max((i for i in idx if history[i].kind == "find_peaks"), default=-1)
    idx = [i for i in idx if not (history[i].kind in _PEAK_EDITS and i < last_find)]
    kept = []
    for n, i in enumerate(idx):
        kind = history[i].kind
        nxt = history[idx[n + 1]].kind if n + 1 < len(idx) else None
        if kind in REPLACING_KINDS and nxt == kind:
            continue
        if kind in LOCK_KINDS and not still_locked(kind, history[i].params, final):
            continue
        kept.append(i)
    return kept


def still_locked(kind: str, params: dict, final: State) -> dict:
    """The part of a lock step that the final state still holds ({} when none)."""
    locks = {int(k): dict(v) for k, v in final.locks.items()}
    if kind == "clear_assignment":
        return params if locks.get(int(params["line_id"])) == {} else {}
    if "assignments" in params:
        still = {k: v for k, v in params["assignments"].items() if locks.get(int(k)) == dict(v)}
        return {**params, "assignments": still} if still else {}
    return params if locks.get(int(params["line_id"])) == dict(params["labels"]) else {}


def line_hints(state: State) -> dict:
    """The fitted lines of a state as plain lists (``line_id``, ``position``, ``fwhm`` and,
    when assigned, ``label`` and ``isotopologue``): what warm starts take from a
    neighbouring spectrum. Empty without a line fit."""
    fit = state.line_fit
    if fit is None:
        return {}
    t = fit.table
    out = {"line_id": [int(v) for v in t["line_id"]],
           "position": [float(v) for v in t["position"]],
           "fwhm": [float(v) if np.isfinite(v) else None
                    for v in (t["fwhm"] if "fwhm" in t else t["position"] * np.nan)]}
    a = getattr(state.assignment, "assignments", None)
    if a is not None and "label" in a:
        lab = a.set_index("line_id")
        for col in ("label", "isotopologue"):
            vals = lab[col] if col in lab else None
            out[col] = [None if vals is None or i not in vals.index or not isinstance(vals[i], str)
                        else str(vals[i]) for i in out["line_id"]]
    return out

