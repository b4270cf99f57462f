"""Lines the data cannot support: which fitted lines to remove before fitting again.

After a fit, a line is removed when

* its area is below :data:`AREA_SIGMAS` of its standard errors (``"insignificant"``;
  the errors judged against the noise, not inflated by what the model misses), unless
  its width is held (below) or it is next to a held line (its area was shared with a
  line that ran away, and is judged again after the hold);
* its FWHM sits on the lower bound: every width narrower than the sampling allows, a
  spike (``"width_at_bound"``); a width on the upper bound (the line spread over a
  blend, a fringe or the baseline) is *held* instead: the repeated fit keeps it below
  :data:`HOLD_WIDTHS` times its starting FWHM;
* its centre left its window: it moved more than :data:`MOVE_WIDTHS` times its width
  (the larger of its fitted and starting FWHM) from where it started, and another line
  now sits where it started (``"moved"``: that line does its work). A line that moved
  as far without being replaced is *held*: the repeated fit starts it where it started
  and keeps its centre within its width of there; one that moved onto the start of a
  line that left takes that line's place (it starts where it ended);
* it collapsed onto a neighbour: two centres closer than :data:`MERGE_WIDTHS` times the
  smaller FWHM are one line; the one with the larger area stays and the other is merged
  into it (``"merged"``).

Lines that must not change are never removed (``protected``: lines added by hand, lines
named in constraints); they are kept with a flag saying which test they failed. Nothing
is removed when every line would be. :func:`find_unsupported` only decides; the fit
driver (:func:`~.fitting.fit`) fits again once without the removed lines.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from .params import line_prefix

#: lines are judged for pruning only on a first fit this close to its minimum (reduced
#: chi-squares of remaining reduction: its values are then within a standard error)
PRUNE_CRIT = 1.0
#: pruning that would remove more than this share of the lines (and more than two) is not
#: done (flagged)
MAX_PRUNED = 0.3

__all__ = ["Removal", "find_unsupported", "removed_table", "protected_by_constraints",
           "AREA_SIGMAS", "MOVE_WIDTHS", "MERGE_WIDTHS", "REMOVED_COLUMNS"]

#: an area below this many standard errors is not supported by the data
AREA_SIGMAS = 3.0
#: a centre that moved more than this many FWHM from its start left its window
MOVE_WIDTHS = 1.0
#: two centres closer than this many FWHM (the smaller) are one line
MERGE_WIDTHS = 0.25
#: a line whose width ran to its upper bound is held below this many starting FWHM
HOLD_WIDTHS = 2.0
#: lines whose starts are closer than this many starting FWHM are neighbours
NEAR_WIDTHS = 3.0
#: columns of ``LineFit.removed``
REMOVED_COLUMNS = ("line_id", "rule", "reason", "merged_into", "start", "position", "area",
                   "area_err", "fwhm")


@dataclass(frozen=True)
class Removal:
    """One line removed from a fit: its id, the rule (``"insignificant"``,
    ``"width_at_bound"``, ``"moved"``, ``"merged"``), the reason in words, the line it
    was merged into (or None), its starting position and what the first fit gave it."""

    line_id: object
    rule: str
    reason: str
    merged_into: object
    start: float
    position: float
    area: float
    area_err: float
    fwhm: float


def removed_table(removals: Iterable[Removal]) -> pd.DataFrame:
    """The removals as a DataFrame with :data:`REMOVED_COLUMNS` (empty when none)."""
    rows = [[getattr(r, c) for c in REMOVED_COLUMNS] for r in removals]
    table = pd.DataFrame(rows, columns=list(REMOVED_COLUMNS))
    for c in ("start", "position", "area", "area_err", "fwhm"):
        table[c] = table[c].astype(float)
    for c in ("rule", "reason"):
        table[c] = table[c].astype(object)
    return table


def protected_by_constraints(ids: Iterable, constraints: Mapping | None) -> set:
    """Line ids named in ``constraints`` (as a parameter, inside an expression, or in
    the ``doppler`` lines): removing them would change what was asked."""
    text = []
    for key, spec in (constraints or {}).items():
        if key == "doppler":
            if isinstance(spec, Mapping) and "lines" in spec:
                text += [line_prefix(i) for i in spec["lines"]]
            continue
        text.append(str(key))
        if isinstance(spec, str):
            text.append(spec)
        elif isinstance(spec, Mapping) and isinstance(spec.get("expr"), str):
            text.append(spec["expr"])
    joined = " ".join(text)
    return {i for i in ids if re.search(r"\b" + re.escape(line_prefix(i)), joined)}


def _width_at_bound(params, prefix: str, widths: tuple) -> tuple[str, str] | None:
    """("high" or "low", reason) when the line's FWHM sits on a bound."""
    own = [params[prefix + w] for w in widths]
    own = [p for p in own if p.vary and p.expr is None]
    if not own:
        return None  # shared or fixed widths: not this line's

    def at(p, side):
        bound = p.min if side == "lo" else p.max
        if not np.isfinite(bound):
            return False
        return abs(p.value - bound) <= 1e-6 * max(abs(bound), abs(p.max - p.min), 1e-300)

    high = [p.name for p in own if at(p, "hi")]
    if high:
        return "high", f"its width {high[0].split('_', 1)[1]} ran to its upper bound"
    if all(at(p, "lo") for p in own):
        return "low", "its width sits on the lower bound (narrower than the sampling allows)"
    return None


def _merges(ids, pos, fwhm, area, skip) -> dict:
    """line id -> (kept id, distance, fwhm) for lines collapsed onto a neighbour."""
    out: dict = {}
    order = np.argsort(pos, kind="stable")
    for a, b in zip(order[:-1], order[1:]):
        if ids[a] in out or ids[b] in out:
            continue
        f = min(fwhm[a], fwhm[b])
        d = abs(pos[b] - pos[a])
        if np.isfinite(f) and d < MERGE_WIDTHS * f:
            keep, drop = (a, b) if abs(area[a]) >= abs(area[b]) else (b, a)
            if ids[drop] in skip and ids[keep] not in skip:
                keep, drop = drop, keep
            out[ids[drop]] = (ids[keep], d, f)
    return out


def _moved(k, ids, positions, fwhms, starts, start_fwhm):
    """(distance, width, id of the line now at the start or None), or None if line ``k``
    stayed within its width of its start."""
    fwhm = fwhms[k]
    width = max(fwhm if np.isfinite(fwhm) else 0.0, float(start_fwhm[k]))
    moved = abs(positions[k] - float(starts[k]))
    if not moved > MOVE_WIDTHS * width:
        return None
    d = np.abs(positions - float(starts[k]))
    d[k] = np.inf
    j = int(np.argmin(d))
    return moved, width, (ids[j] if d[j] <= MOVE_WIDTHS * width else None)


def _judge(k, lid, table, starts, start_fwhm, params, widths, merges, err_scale):
    """(removal reasons [(rule, reason, merged_into)], hold or None, hold text) for line
    ``k``: a hold is ``{"start", "position", "width_max"}`` for the repeated fit."""
    pos, area, err = (float(table[c].iloc[k]) for c in ("position", "area", "area_err"))
    s0, f0 = float(starts[k]), float(start_fwhm[k])
    out, hold, why = [], None, ""
    err = err * err_scale
    weak = bool(np.isfinite(err) and err > 0 and abs(area) < AREA_SIGMAS * err)
    weak_text = f"area {area:.3g} is below {AREA_SIGMAS:g} standard errors ({err:.3g})"
    if lid in merges:
        keep, d, f = merges[lid]
        out.append(("merged", f"collapsed onto line {keep} ({d:.3g} cm-1 apart, FWHM "
                              f"{f:.3g})", keep))
    bound = _width_at_bound(params, line_prefix(lid), widths)
    if bound is not None and bound[0] == "low":
        out.append(("width_at_bound", bound[1], None))
    move = None if lid in merges else _moved(
        k, table["line_id"].tolist(), table["position"].to_numpy(dtype=float),
        table["fwhm"].to_numpy(dtype=float), starts, start_fwhm)
    if move is not None:
        dist, width, taken_by = move
        text = (f"its centre moved {dist:.3g} cm-1 from {s0:.6g}, more than its width "
                f"({width:.3g})")
        if taken_by is not None:
            out.append(("moved", f"{text}, and line {taken_by} is there now", None))
        elif weak:
            out.append(("insignificant", f"{weak_text}; {text}", None))
        else:
            others = np.delete(np.asarray(starts, dtype=float), k)
            if others.size and np.min(np.abs(others - pos)) <= MOVE_WIDTHS * width:
                hold, why = {"start": pos}, f"{text}: it took the place of a line that left"
            else:
                hold = {"start": s0, "position": (s0 - width, s0 + width)}
                why = f"{text}: held within {width:.3g} cm-1 of its start"
    if bound is not None and bound[0] == "high" and not out:
        reach = HOLD_WIDTHS * f0
        hold = dict(hold or {"start": s0, "position": (s0 - reach, s0 + reach)},
                    width_max=reach)
        why = "; ".join(filter(None, [why, f"{bound[1]}: held below {HOLD_WIDTHS:g} x its "
                                             f"starting FWHM ({HOLD_WIDTHS * f0:.3g})"]))
    if hold is None and weak and not any(r == "insignificant" for r, _, _ in out):
        out.append(("insignificant", weak_text, None))
    return out, (None if out else hold), why


def _spare_next_to_holds(removals, restarts, ids, starts, start_fwhm, flags):
    """Keep the lines removed only for their area that overlap a held line: their area
    was shared with a line that ran away, and is judged again after the hold."""
    held = [ids.index(i) for i in restarts]
    if not held:
        return removals
    starts, start_fwhm = np.asarray(starts, dtype=float), np.asarray(start_fwhm, dtype=float)
    out = []
    for r in removals:
        k = ids.index(r.line_id)
        near = any(abs(starts[k] - starts[j]) < NEAR_WIDTHS * max(start_fwhm[k], start_fwhm[j])
                   for j in held)
        if r.rule == "insignificant" and near:
            flags.setdefault(r.line_id, []).append(f"kept although {r.reason}: next to a "
                                                   "held line")
        else:
            out.append(r)
    return out


def find_unsupported(table: pd.DataFrame, params, widths: tuple, starts, start_fwhm,
                     protected: set, err_scale: float = 1.0) -> tuple[list[Removal], dict,
                                                                      dict]:
    """The lines to remove, the flags of lines kept or held, and the holds.

    Parameters
    ----------
    table : DataFrame
        The fitted line table (``line_id, position, area, area_err, fwhm``).
    params : lmfit.Parameters
        The fitted parameters (for the widths' bounds).
    widths : tuple of str
        The shape's width parameter names.
    starts, start_fwhm : ndarray
        Starting positions and FWHM, in table order.
    protected : set
        Line ids never removed nor held.
    err_scale : float
        Factor on the areas' standard errors for the significance test: the noise
        over the residual's spread, where the residual is wider than the noise (errors
        scaled by the reduced chi-square grow with what the model misses, a baseline
        fringe say; significance is judged against the noise).

    Returns
    -------
    removals : list of Removal
        In table order; one per removed line, its first failed test as the rule and
        every failed test in the reason.
    flags : dict
        line id -> [text] for lines kept although they failed a test, and held lines.
    restarts : dict
        line id -> ``{"start": x, "position": (lo, hi), "width_max": w}`` (the last two
        optional) for the repeated fit. A hold alone asks for the fit to be repeated.
    """
    ids = table["line_id"].tolist()
    pos, fwhm, area = (table[c].to_numpy(dtype=float) for c in ("position", "fwhm", "area"))
    merges = _merges(ids, pos, fwhm, area, protected)
    removals, flags, restarts = [], {}, {}
    for k, lid in enumerate(ids):
        found, hold, why = _judge(k, lid, table, starts, start_fwhm, params, widths, merges,
                                  err_scale)
        if hold is not None:
            if lid in protected:
                flags.setdefault(lid, []).append(f"kept although {why}")
            else:
                flags.setdefault(lid, []).append(why + " in the repeated fit")
                restarts[lid] = hold
        if not found:
            continue
        reason = "; ".join(r for _, r, _ in found)
        if lid in protected:
            flags.setdefault(lid, []).append(f"kept although {reason}")
            continue
        rule, _, into = found[0]
        removals.append(Removal(lid, rule, reason, into, float(starts[k]), float(pos[k]),
                                float(area[k]), float(table["area_err"].iloc[k]),
                                float(fwhm[k])))
    removals = _spare_next_to_holds(removals, restarts, ids, starts, start_fwhm, flags)
    if len(removals) == len(ids):
        return [], {"fit": ["every line failed a test of what the data can support; none "
                            "was removed"]}, {}
    return removals, flags, restarts


def not_judged(sol) -> str | None:
    """Why the lines of a first fit cannot be judged for pruning, or None."""
    if sol.stopped == "failed":
        return "not pruned: the fit failed"
    if not sol.converged and not sol.crit < PRUNE_CRIT:
        return (f"not pruned: the fit stopped {sol.crit:.3g} reduced chi-squares short of its "
                "minimum, too far to judge its lines")
    return None


def noise_scale(prob, sol) -> float:
    """Noise over the residual spread (at most 1): areas' errors scaled by the reduced
    chi-square are judged against the noise instead (:func:`.prune.find_unsupported`)."""
    redchi = float(getattr(sol.result, "redchi", np.nan))
    if prob.ws is not None or not prob.noise > 0 or not np.isfinite(redchi) or redchi <= 0:
        return 1.0
    return float(min(1.0, prob.noise / np.sqrt(redchi)))


def worse_without(first, second, prob_first, prob_second) -> str | None:
    """Why the repeated fit is rejected, or None: its chi-square rose by more than the
    removed and held parameters can explain (the rise, in reduced chi-squares of the
    first fit, above their number plus three standard deviations of a chi-square with
    that many degrees of freedom): the data supported what pruning took away."""
    r1, r2 = first.result, second.result
    if not (np.isfinite(r1.chisqr) and np.isfinite(r2.chisqr) and r1.redchi > 0):
        return None
    k = max(len(prob_first.tmap.var_names) - len(prob_second.tmap.var_names), 1)
    rise = (float(r2.chisqr) - float(r1.chisqr)) / float(r1.redchi)
    allowed = k + 3.0 * np.sqrt(2.0 * k)
    if rise <= allowed:
        return None
    return (f"pruning undone: without the lines it would remove chi-square rose by "
            f"{rise:.3g} reduced chi-squares, more than the {allowed:.3g} that {k} fewer "
            "parameters explain")


def subset_args(keep: list, ids: list, arrays: dict, shared_width):
    """Arguments of the repeated fit: the kept lines only (``arrays`` of per-line starts)."""
    mask = np.isin(np.array(ids, dtype=object), np.array(keep, dtype=object))
    out = {k: (None if v is None else [a for a, m in zip(np.asarray(v, dtype=float).tolist(),
                                                            mask) if m])
           for k, v in arrays.items()}
    if isinstance(shared_width, Mapping):
        groups = {g: [i for i in members if i in keep] for g, members in shared_width.items()}
        shared_width = {g: m for g, m in groups.items() if m}
    return mask, out, shared_width
