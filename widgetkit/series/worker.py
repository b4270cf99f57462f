"""What runs on a worker: one spectrum in, a small outcome out.

:func:`run_one` reads one spectrum, runs the recipe on it in a new session
(one BLAS thread, so serial, process-pool and cluster runs compute the same
numbers; and the allocator's adaptive thresholds, :mod:`.alloc`, so that a
Dask worker computes as quickly as a pool worker), judges the outcome and
returns plain data: status and reasons, the constants, the session document
as JSON text (the caller writes it), the series variable and the lines for
warm starts. :func:`verify_one` replays one saved session of a series. Both
catch every error of their spectrum: one bad spectrum never stops a series.

Status of a spectrum:

* ``"failed"``: it could not be read, or a step other than a manual edit
  failed (the reason names the step, numbered from 0 = load, and the error);
* ``"doubtful"``: every step ran but a result says it is doubtful (an object
  of the final state with ``status == "doubtful"``, or ``converged`` False, or
  an assignment message starting with "DOUBTFUL");
* ``"ok"`` otherwise.
"""

from __future__ import annotations

import dataclasses
import json
import re
import time
from collections.abc import Mapping

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from ..errors import WidgetkitError
from ..session.recipe import Recipe, line_hints
from ..session.steps import table_to_json
from ..spectrum import Spectrum
from .alloc import task_thresholds

__all__ = ["run_one", "verify_one", "analysis_status", "warm_adjuster", "STATUS_RANK"]

#: ordering of outcomes: a warm start is kept only when it ranks higher
STATUS_RANK = {"failed": 0, "doubtful": 1, "ok": 2}
_PR = re.compile(r"^([PR])\((\d+)\)$")
_PLAIN = (pd.DataFrame, pd.Series, np.ndarray, Mapping, list, tuple, str, Spectrum)


def analysis_status(session) -> tuple[str, list[str]]:
    """("ok" or "doubtful", reasons) from the session's final state (module notes)."""
    state = session.state_at(len(session.history) - 1)
    reasons: list[str] = []
    for f in dataclasses.fields(state):
        obj = getattr(state, f.name)
        if obj is None or isinstance(obj, _PLAIN) or f.name.startswith("_"):
            continue
        if getattr(obj, "status", None) == "doubtful":
            why = [str(r) for r in (getattr(obj, "reasons", None) or [])] or ["doubtful"]
            reasons += [f"{f.name}: {r}" for r in why]
        elif getattr(obj, "status", None) is None:
            reasons += [f"{f.name}: {m}" for m in (getattr(obj, "messages", None) or [])
                        if isinstance(m, str) and m.startswith("DOUBTFUL")]
        if getattr(obj, "converged", None) is False:
            reasons.append(f"{f.name}: did not converge ({getattr(obj, 'message', '')})".rstrip())
    return ("doubtful" if reasons else "ok"), reasons


# ---------------------------------------------------------------------- warm starts
def _hint_tolerance(pos: np.ndarray, fwhm: np.ndarray) -> np.ndarray:
    """Half the FWHM, at most a quarter of the spacing to the nearest other line."""
    tol = np.where(np.isfinite(fwhm), 0.5 * fwhm, np.inf)
    if pos.size > 1:
        srt = np.sort(pos)
        gaps = np.diff(srt)
        nn = np.minimum(np.r_[np.inf, gaps], np.r_[gaps, np.inf])
        tol = np.minimum(tol, 0.25 * nn[np.searchsorted(srt, pos)])
    return np.where(np.isfinite(tol), tol, 0.5)


def _match(hint_pos: np.ndarray, tol: np.ndarray, positions) -> np.ndarray:
    """For each position, the index of the nearest hint line if within its tolerance, else -1."""
    p = np.asarray(positions, float)
    if hint_pos.size == 0 or p.size == 0:
        return np.full(p.size, -1)
    order = np.argsort(hint_pos)
    hp = hint_pos[order]
    k = np.searchsorted(hp, p)
    left, right = np.clip(k - 1, 0, hp.size - 1), np.clip(k, 0, hp.size - 1)
    pick = np.where(np.abs(hp[left] - p) <= np.abs(hp[right] - p), left, right)
    j = order[pick]
    return np.where(np.abs(hint_pos[j] - p) <= tol[j], j, -1)


def _arrays(hints: dict):
    pos = np.asarray(hints.get("position", []), float)
    fwhm = np.asarray([np.nan if v is None else v for v in hints.get("fwhm", [])], float)
    if fwhm.size != pos.size:
        fwhm = np.full(pos.size, np.nan)
    labels = list(hints.get("label") or [None] * pos.size)
    isos = list(hints.get("isotopologue") or [None] * pos.size)
    return pos, fwhm, labels, isos


def _widths(state, params: dict, hints: dict) -> list | None:
    pos, fwhm, _, _ = _arrays(hints)
    peaks = state.peaks
    region = params.get("region")
    if region is not None:
        lo, hi = sorted(float(v) for v in region)
        peaks = peaks[(peaks["position"] >= lo) & (peaks["position"] <= hi)]
    k = _match(pos, _hint_tolerance(pos, fwhm), peaks["position"].to_numpy(float))
    w = [float(fwhm[j]) if j >= 0 and np.isfinite(fwhm[j]) else None for j in k]
    return w if any(v is not None for v in w) else None


def _with_widths(session, params: dict, hints: dict) -> dict:
    w = _widths(session.state_at(len(session.history) - 1), params, hints)
    return params if w is None else {**params, "widths": w}


#: peaks are added for a neighbour's missing lines only when at least this fraction of its
#: assigned lines (inside the spectrum) was found here: the band must be there
MIN_FOUND = 0.5


def _missing_peaks(state, hints: dict) -> list[float]:
    """Assigned lines of the neighbour with no peak here (inside the spectrum); none when
    fewer than :data:`MIN_FOUND` of them were found (a spectrum without the band gets no
    invented peaks)."""
    pos, fwhm, labels, _ = _arrays(hints)
    sp = state.spectrum
    if sp is None or pos.size == 0:
        return []
    tol = _hint_tolerance(pos, fwhm)
    have = state.peaks["position"].to_numpy(float)
    inside = [(float(p), t) for p, t, lab in zip(pos, tol, labels)
              if lab and sp.x[0] < p < sp.x[-1]]
    missing = [p for p, t in inside if not np.any(np.abs(have - p) <= t)]
    if not inside or len(inside) - len(missing) < MIN_FOUND * len(inside):
        return []
    return missing


def _locks(state, hints: dict) -> dict:
    """Two locks taken from the neighbour: its lowest-J R and P lines of the main
    isotopologue (else its first two assigned lines) that match fitted lines here."""
    fit = state.line_fit
    if fit is None:
        return {}
    pos, fwhm, labels, isos = _arrays(hints)
    lines = fit.table
    k = _match(pos, _hint_tolerance(pos, fwhm), lines["position"].to_numpy(float))
    cands = [(j, int(lid)) for j, lid in zip(k, lines["line_id"]) if j >= 0 and labels[j]]
    named = [iso for iso in isos if iso]
    main = max(sorted(set(named)), key=named.count) if named else None

    def rank(item):
        m = _PR.match(labels[item[0]])
        return (0 if isos[item[0]] == main else 1, (int(m.group(2)), m.group(1)) if m else (999, ""))

    chosen, branches = {}, set()
    for j, lid in sorted(cands, key=rank):
        m = _PR.match(labels[j])
        branch = m.group(1) if m else len(chosen)
        if branch in branches or state.locks.get(lid) is not None:
            continue
        lock = {"label": labels[j]}
        if isos[j]:
            lock["isotopologue"] = isos[j]
        chosen[str(lid)] = lock
        branches.add(branch)
        if len(chosen) == 2:
            break
    return chosen if len(chosen) == 2 else {}


def warm_adjuster(recipe: Recipe, note: str, hints: dict | None = None):
    """The ``adjust`` of :meth:`Recipe.apply` for a series run: a note first (where the
    session came from); with ``hints`` (a neighbour's lines, :func:`line_hints`) also
    peaks for the neighbour's assigned lines missing after the last ``find_peaks``,
    starting widths for ``fit_lines`` and two locks before ``assign_band``."""
    last_find = max((i for i, s in enumerate(recipe.steps) if s.kind == "find_peaks"), default=-9)

    def adjust(i: int, kind: str, params: dict, session) -> list[tuple[str, dict]]:
        out: list[tuple[str, dict]] = [("note", {"text": note})] if i == 0 else []
        if not hints:
            return out + [(kind, params)]
        state = session.state_at(len(session.history) - 1)
        if i == last_find + 1:
            out += [("add_peak", {"position": p, "snap": True})
                    for p in _missing_peaks(state, hints)]
        if kind == "fit_lines" and params.get("widths") is None:
            return out + [(kind, lambda s, p=params: _with_widths(s, p, hints))]
        if kind == "assign_band":
            locks = _locks(state, hints)
            if locks:
                out.append(("set_assignment", {"assignments": locks}))
        return out + [(kind, params)]

    return adjust


# ---------------------------------------------------------------------- the tasks
def _constants(session) -> dict:
    try:
        c = session.constants
    except WidgetkitError:
        return {}
    return table_to_json(c)


def _failed(task: dict, reason: str, t0: float, sha=None, **extra) -> dict:
    value = unit = None
    var = task.get("variable")
    if var is not None and var.field is None:  # a file name or a mapping tells it even so
        value, unit, _ = var.value({}, task["name"], task.get("path"))
    return {"index": task["index"], "name": task["name"], "source": task.get("path"),
            "sha256": sha, "variable": value, "variable_unit": unit, "status": "failed",
            "reasons": [reason], "notes": [], "constants": {}, "document": None,
            "seconds": time.perf_counter() - t0, "warm_start": task.get("warm_meta"),
            "hints": None, **extra}


def run_one(task: dict) -> dict:
    """Analyse one spectrum of a series (module notes); never raises for its spectrum.

    ``task``: ``index``, ``name``, ``path`` or ``spectrum``, ``recipe`` (a Recipe),
    ``read_options`` (None: the recipe's), ``variable`` (a Variable or None), ``note``,
    and for a warm start ``hints`` and ``warm_meta``.
    """
    t0, c0 = time.perf_counter(), time.process_time()
    with threadpool_limits(limits=1), task_thresholds():
        recipe: Recipe = task["recipe"]
        opts = recipe.read_options if task.get("read_options") is None else task["read_options"]
        sp = task.get("spectrum")
        try:
            if sp is None:
                from ..io import read_spectrum

                sp = read_spectrum(task["path"], **opts)
        except FileNotFoundError:
            return _failed(task, f"step 0 (load): no such file {task['path']} (on the machine "
                                 "that ran it; a cluster needs the files on a shared path)", t0)
        except (WidgetkitError, OSError) as exc:
            return _failed(task, f"step 0 (load): {exc}", t0)
        except Exception as exc:  # noqa: BLE001 - one bad file never stops the series
            return _failed(task, f"step 0 (load): unexpected {type(exc).__name__}: {exc}", t0)
        sha = (sp.source or {}).get("sha256") or sp.data_sha256()
        value = unit = None
        notes: list[str] = []
        var = task.get("variable")
        if var is not None:
            value, unit, problem = var.value(sp.meta, task["name"], task.get("path"))
            if problem:
                notes.append(problem)
        adjust = warm_adjuster(recipe, task["note"], task.get("hints"))
        try:
            run = recipe.apply(sp, read_options=opts, adjust=adjust)
        except Exception as exc:  # noqa: BLE001 - e.g. a spectrum the session refuses
            return _failed(task, f"step 0 (load): {type(exc).__name__}: {exc}", t0, sha=sha)
        notes += list(run.skipped)
        if run.failed:
            status, reasons = "failed", [run.failed]
        else:
            status, reasons = analysis_status(run.session)
        doc = json.dumps(run.session.to_document(), allow_nan=False, separators=(",", ":"))
        hints = line_hints(run.session.state_at(len(run.session.history) - 1))
        return {"index": task["index"], "name": task["name"], "source": task.get("path"),
                "sha256": sha, "variable": value, "variable_unit": unit, "status": status,
                "reasons": reasons, "notes": notes, "constants": _constants(run.session),
                "document": doc, "seconds": time.perf_counter() - t0,
                "cpu_seconds": time.process_time() - c0,
                "warm_start": task.get("warm_meta"), "hints": hints or None}


def verify_one(task: dict) -> dict:
    """Replay one saved session of a series and compare it with its series entry.

    ``task``: ``index``, ``name``, ``path`` (the session file), ``session_sha256``,
    ``sha256`` (of the source) and ``constants`` (as recorded in the series file).
    Returns ``index``, ``name``, ``ok``, ``mismatches`` and ``steps_checked``.
    """
    from ..session import Session
    from ..session.verify import compare_results
    from .sources import file_sha256

    out = {"index": task["index"], "name": task["name"], "ok": False, "mismatches": [],
           "steps_checked": 0}
    mism = out["mismatches"]
    with threadpool_limits(limits=1), task_thresholds():
        try:
            if file_sha256(task["path"]) != task["session_sha256"]:
                mism.append(f"session file {task['path']}: its sha256 differs from the one in "
                            "the series file (the file was changed after the run)")
            s = Session.load(task["path"])
        except Exception as exc:  # noqa: BLE001 - reported on its row
            mism.append(f"session file {task['path']}: cannot be read: {exc}")
            return out
        src_sha = (s.sources[0] or {}).get("sha256") or s.sources[0].get("data_sha256")
        if task.get("sha256") and src_sha not in (task["sha256"], None) \
                and s.sources[0].get("data_sha256") != task["sha256"]:
            mism.append(f"source sha256 in the session ({src_sha}) differs from the series file's "
                        f"({task['sha256']})")
        report = s.verify()
        mism += [f"session: {m}" for m in report.mismatches]
        out["steps_checked"] = report.steps_checked
        compare_results(task.get("constants") or {}, _constants(s), rtol=1e-9,
                        where="series constants", out=mism)
    out["ok"] = not mism
    return out
