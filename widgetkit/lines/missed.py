"""Lines the peak search missed, found in the residual of a fit.

A weak line on the flank of a strong one often has no maximum of its own: the strong line's
wing falls faster than the weak line rises, and a peak search, which looks for maxima, cannot
see it. Once the strong line is fitted, the weak one stands alone in the residual. A
spectroscopist looks at the residual for exactly this; :func:`find_missed` does the same:

1. The residual ``y − model`` is searched for peaks of the sign of the fitted lines with the
   peak search's own false-alarm threshold (:func:`widgetkit.processing.search_peaks`, the
   noise σ of the fit, the typical FWHM of the fitted lines as the known width), or with the
   threshold the peaks were found with when that was higher (``min_snr``: a user who asked
   for lines above 10 σ gets no 6 σ line from the residual).
2. A candidate closer than :data:`CLEAR` FWHM to a fitted line is not taken: there the
   residual is what a line shape that is not quite right leaves (symmetric lobes, a flat
   top), not a new line. Nor is one within :data:`EDGE` FWHM of either end of the data
   (what a crop through a line leaves).
3. The candidate must also stand :data:`LOCAL_SIGMAS` times above the scatter of the residual
   around it (:data:`AROUND` FWHM on each side, the candidate itself left out), so that where
   the model misses everywhere (a saturated band, a baseline it cannot follow) nothing is
   added.
4. Of candidates closer than :data:`CLEAR` FWHM to each other only the most significant is
   taken, and at most :data:`MAX_ADDED` (a fifth of the fitted lines, at least 3) are added,
   the most significant first.

The fit driver (:func:`~.fitting.fit`) fits again with the added lines, starting the old
ones where they ended, and keeps the result only if chi-square fell by more than the added
parameters explain (their number plus three standard deviations, in reduced chi-squares),
every added line's area is at least three of its standard errors, and the fit converged
when the one before it had (a converged fit is never traded for one cut short by the budget);
``LineFit.added`` lists what was added and why. ``add_missed=False`` turns this off.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

__all__ = ["Missed", "find_missed", "added_table", "ADDED_COLUMNS", "CLEAR", "LOCAL_SIGMAS",
           "AROUND"]

#: a candidate must lie further than this many FWHM from every fitted line
CLEAR = 1.5
#: ... and further than this many FWHM from the ends of the data
EDGE = 3.0
#: ... and stand this many times above the residual's local scatter
LOCAL_SIGMAS = 5.0
#: the local scatter is taken over this many FWHM on each side
AROUND = 8.0
#: most lines added, as a fraction of the fitted lines (at least 3)
MAX_ADDED = 0.2
#: columns of ``LineFit.added``
ADDED_COLUMNS = ("line_id", "position", "height", "snr", "reason")


@dataclass(frozen=True)
class Missed:
    """A line found in the residual: where, how high (y units, signed), its FWHM start,
    its significance (height / noise σ) and the reason in words."""

    position: float
    height: float
    fwhm: float
    snr: float
    reason: str


def added_table(added: list[tuple[object, Missed]]) -> pd.DataFrame:
    """``LineFit.added``: one row per added line (id, position, height, snr, reason)."""
    return pd.DataFrame({"line_id": [i for i, _ in added],
                         "position": [m.position for _, m in added],
                         "height": [m.height for _, m in added],
                         "snr": [m.snr for _, m in added],
                         "reason": [m.reason for _, m in added]},
                        columns=list(ADDED_COLUMNS))


def _local_scatter(r: np.ndarray, x: np.ndarray, at: float, fwhm: float) -> float:
    near = np.abs(x - at)
    use = (near <= AROUND * fwhm) & (near > fwhm)
    if use.sum() < 5:
        return 0.0
    return float(np.sqrt(np.mean(r[use] ** 2)))


def find_missed(x, residual, table: pd.DataFrame, noise: float,
                min_snr: float | None = None) -> list[Missed]:
    """Lines the fit lacks, from its residual (module docstring). ``table`` is the fit's
    line table (position, height, fwhm); ``noise`` its σ; ``min_snr`` the threshold the peaks
    were found with (None: the automatic one)."""
    from ..processing._common import ProcessingError
    from ..processing.peaks import search_peaks

    x, r = np.asarray(x, dtype=float), np.asarray(residual, dtype=float)
    pos = table["position"].to_numpy(dtype=float)
    fwhm = table["fwhm"].to_numpy(dtype=float)
    height = table["height"].to_numpy(dtype=float)
    ok = np.isfinite(pos) & np.isfinite(fwhm) & (fwhm > 0) & np.isfinite(height)
    if not ok.any() or not (noise > 0) or x.size < 10:
        return []
    typical = float(np.median(fwhm[ok]))
    sign = 1.0 if np.median(height[ok]) >= 0 else -1.0
    try:
        found = search_peaks(x, r, noise=float(noise), width=typical,
                             direction="up" if sign > 0 else "down").table
        if min_snr is not None and np.isfinite(min_snr):
            found = found[found["snr"] >= float(min_snr)]
    except ProcessingError:
        return []
    out = []
    for _, row in found.iterrows():
        p, h = float(row["position"]), float(row["height"])
        f = float(row["fwhm"]) if np.isfinite(row["fwhm"]) and row["fwhm"] > 0 else typical
        gap = np.abs(pos[ok] - p) / np.maximum(fwhm[ok], f)
        if np.min(gap) <= CLEAR or min(p - x[0], x[-1] - p) <= EDGE * max(f, typical):
            continue
        scatter = _local_scatter(r, x, p, max(f, typical))
        if abs(h) < LOCAL_SIGMAS * max(scatter, float(noise)):
            continue
        out.append(Missed(position=p, height=sign * abs(h), fwhm=min(f, 3.0 * typical),
                          snr=abs(h) / float(noise),
                          reason=f"found in the residual, {abs(h) / float(noise):.3g} σ high "
                                 f"and {np.min(gap):.3g} FWHM from the nearest line"))
    out.sort(key=lambda m: -m.snr)
    kept: list[Missed] = []
    for m in out:
        if all(abs(m.position - k.position) > CLEAR * max(m.fwhm, k.fwhm) for k in kept):
            kept.append(m)
    return kept[:max(3, int(MAX_ADDED * int(ok.sum())))]


def _new_ids(ids: list, n: int, first: int | None = None) -> list:
    """``n`` line ids not among ``ids``: integers from ``first`` (default the next after the
    largest) when the ids are integers."""
    if all(isinstance(i, (int, np.integer)) and not isinstance(i, bool) for i in ids):
        top = max((int(i) for i in ids), default=0)
        start = top + 1 if first is None else max(int(first), top + 1)
        return list(range(start, start + n))
    taken = {str(i) for i in ids}
    out, k = [], 1
    while len(out) < n:
        if f"r{k}" not in taken:
            out.append(f"r{k}")
        k += 1
    return out


@dataclass
class MissedStage:
    """What :func:`refit_with_missed` did: the solve it ran (None: nothing was found), the
    problem and fields to keep, the lines added (id, :class:`Missed`) and a flag text."""

    solution: object = None
    prob: object = None
    fields: dict | None = None
    added: list | None = None
    flag: str = ""


def refit_with_missed(prob, fields, sol, *, shared_width, holds, args, budget, max_passes,
                      first_id: int | None = None, min_snr: float | None = None
                      ) -> MissedStage:
    """Fit again with the lines :func:`find_missed` finds in ``fields``' residual; keep that
    fit only if chi-square fell by more than the added parameters explain. ``budget(text)``
    gives the solve's budget."""
    from ._assemble import assemble
    from ._setup import set_up
    from ._solve import solve

    cands = find_missed(prob.xs, fields["residual"], fields["table"], prob.noise, min_snr)
    if not cands:
        return MissedStage()
    t = fields["table"]
    new = _new_ids(list(prob.ids), len(cands), first_id)
    prob2 = set_up(prob.xs, prob.ys, np.r_[t["position"].to_numpy(float),
                                           [c.position for c in cands]],
                   shared_width=shared_width, line_ids=list(prob.ids) + new,
                   heights=np.r_[t["height"].to_numpy(float), [c.height for c in cands]],
                   widths=np.r_[t["fwhm"].to_numpy(float), [c.fwhm for c in cands]],
                   noise=prob.noise, holds=holds or None, background=prob.background,
                   **{**args, "region": None, "weights": prob.ws}, extra_spec={})
    sol2 = solve(prob2, budget(f"fitting again with {len(cands)} lines found in the residual"),
                 max_passes)
    r1, r2 = sol.result, sol2.result
    k = max(len(prob2.tmap.var_names) - len(prob.tmap.var_names), 1)
    need = k + 3.0 * np.sqrt(2.0 * k)
    fell = ((float(r1.chisqr) - float(r2.chisqr)) / float(r1.redchi)
            if np.isfinite(r2.chisqr) and r1.redchi > 0 else -np.inf)
    fields2 = assemble(prob2, sol2) if sol2.error is None else None
    weak = [] if fields2 is None else [
        i for i, a, e in zip(fields2["table"]["line_id"], fields2["table"]["area"],
                             fields2["table"]["area_err"]) if i in new and not abs(a) >= 3 * e]
    unfinished = sol.converged and not sol2.converged
    if fields2 is not None and fell > need and not weak and not unfinished:
        return MissedStage(sol2, prob2, fields2, list(zip(new, cands)))
    if unfinished:  # a converged fit is never traded for one that stopped short
        why = "the fit with them stopped before converging (" + sol2.stopped + ")"
    elif fields2 is not None and weak:
        why = f"line {weak[0]} among them was not significant"
    else:
        why = (f"with them chi-square fell by {fell:.3g} reduced chi-squares, not more than "
               f"the {need:.3g} that {k} more parameters explain")
    return MissedStage(sol2, flag=f"{len(cands)} lines found in the residual were not kept: "
                                  + why)
