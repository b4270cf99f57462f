"""Lines the data cannot support: which fitted lines to remove before fitting again.

After a fit, a line is removed when

* its area is below :data:`AREA_SIGMAS` of its standard errors (``"insignificant"``);
* its FWHM sits on a bound: every width at the lower bound (narrower than the sampling
  allows: a spike) or a width at the upper bound (it spread over a blend or the
  baseline) (``"width_at_bound"``);
* its centre left its window: it moved more than :data:`MOVE_WIDTHS` times its width
  (the larger of its fitted and starting FWHM) from where it started, and another line
  now sits where it started (``"moved"``: that line does its work). A line that moved
  as far to a place of its own, with a significant area, found a feature no other line
  describes: it is kept, flagged, and started where it ended when the fit is repeated;
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

__all__ = ["Removal", "find_unsupported", "removed_table", "protected_by_constraints",
           "AREA_SIGMAS", "MOVE_WIDTHS", "MERGE_WIDTHS", "REMOVED_COLUMNS"]

#: an area below this many standard errors is not supported by the data
AREA_SIGMAS = 3.0
#: a centre that moved more than this many FWHM from its start left its window
MOVE_WIDTHS = 1.0
#: two centres closer than this many FWHM (the smaller) are one line
MERGE_WIDTHS = 0.25
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


def _width_at_bound(params, prefix: str, widths: tuple) -> str | None:
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
        return f"its width {high[0].split('_', 1)[1]} ran to its upper bound"
    if all(at(p, "lo") for p in own):
        return "its width sits on the lower bound (narrower than the sampling allows)"
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


def _reasons(k, lid, table, starts, start_fwhm, params, widths, merges, moved_to):
    """[(rule, reason, merged_into)] for line ``k`` of the table; a line that moved to a
    place of its own goes into ``moved_to`` (id -> position)."""
    pos, area, err, fwhm = (float(table[c].iloc[k]) for c in ("position", "area", "area_err",
                                                                "fwhm"))
    out = []
    if lid in merges:
        keep, d, f = merges[lid]
        out.append(("merged", f"collapsed onto line {keep} ({d:.3g} cm-1 apart, FWHM "
                              f"{f:.3g})", keep))
    if np.isfinite(err) and err > 0 and abs(area) < AREA_SIGMAS * err:
        out.append(("insignificant", f"area {area:.3g} is below {AREA_SIGMAS:g} standard "
                                     f"errors ({err:.3g})", None))
    why = _width_at_bound(params, line_prefix(lid), widths)
    if why:
        out.append(("width_at_bound", why, None))
    ids = table["line_id"].tolist()
    move = _moved(k, ids, table["position"].to_numpy(dtype=float),
                  table["fwhm"].to_numpy(dtype=float), starts, start_fwhm)
    if move is not None and lid not in merges:
        dist, width, taken_by = move
        text = (f"its centre moved {dist:.3g} cm-1 from {float(starts[k]):.6g}, more than "
                f"its width ({width:.3g})")
        if taken_by is not None:
            out.append(("moved", f"{text}, and line {taken_by} is there now", None))
        elif not out:
            moved_to[lid] = (pos, text)
    return out


def find_unsupported(table: pd.DataFrame, params, widths: tuple, starts, start_fwhm,
                     protected: set) -> tuple[list[Removal], dict, dict]:
    """The lines to remove and the flags of protected lines that failed a test.

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
        Line ids never removed.

    Returns
    -------
    removals : list of Removal
        In table order; one per removed line, its first failed test as the rule and
        every failed test in the reason.
    flags : dict
        line id -> [text] for protected lines that failed a test and for lines kept
        although they moved.
    restarts : dict
        line id -> fitted position, for the lines that moved to a place of their own
        (where the repeated fit starts them).
    """
    ids = table["line_id"].tolist()
    pos, fwhm, area = (table[c].to_numpy(dtype=float) for c in ("position", "fwhm", "area"))
    merges = _merges(ids, pos, fwhm, area, protected)
    removals, flags, moved_to = [], {}, {}
    for k, lid in enumerate(ids):
        found = _reasons(k, lid, table, starts, start_fwhm, params, widths, merges, moved_to)
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
    for lid, (_, text) in moved_to.items():
        flags.setdefault(lid, []).append(f"kept although {text}: no other line is there")
    if len(removals) == len(ids):
        return [], {"fit": ["every line failed a test of what the data can support; none "
                            "was removed"]}, {}
    return removals, flags, {lid: p for lid, (p, _) in moved_to.items()}
