"""What the Levels panel computes and writes apart from widgets: the running number of the
Fortrat plot, the verdict above the plots, the lines cut by the edge of the data, the
isotopologues a joint fit could use and the heading of the mass-independent constants."""

from __future__ import annotations

import html
import re

import numpy as np
import pandas as pd

from ..session.joint_view import JOINT_KEY

__all__ = ["fortrat_m", "edge_lines", "verdict_html", "assigned_isotopologues", "joint_offer",
           "joint_heading",
           "JOINT_KEY"]


def fortrat_m(J_upper, J_lower) -> np.ndarray:
    """The running number m of a ¹Σ–¹Σ band: m = J″ + 1 for R lines (J′ = J″ + 1),
    m = −J″ for P lines (J′ = J″ − 1); NaN otherwise (Q lines, unassigned)."""
    ju = pd.to_numeric(pd.Series(J_upper), errors="coerce").to_numpy(float)
    jl = pd.to_numeric(pd.Series(J_lower), errors="coerce").to_numpy(float)
    return np.where(ju == jl + 1, jl + 1, np.where(ju == jl - 1, -jl, np.nan))


_POSITION_AT_BOUND = re.compile(r"^l(\d+)_position ended at its bound$")


def edge_lines(fit) -> set[int]:
    """Ids of the lines whose fitted position ended on a bound of the fitted range (the line
    fit's ``flags``): a line cut by the edge of the data, e.g. by a crop through it. Its
    position, and so its obs − calc, measures nothing. A reopened fit answers from its record
    (nothing is fitted again)."""
    if fit is None or (getattr(fit, "restored", False) is True and "flags" not in dir(fit)):
        return set()
    out = set()
    for texts in (getattr(fit, "flags", None) or {}).values():
        for text in texts:
            m = _POSITION_AT_BOUND.match(str(text))
            if m:
                out.add(int(m[1]))
    return out


def verdict_html(assignment, edge: pd.DataFrame | None = None) -> str:
    """The assignment's status: nothing when ok, else "doubtful" and its reasons; and the
    assigned lines cut by the edge of the data (``edge``: their rows of the assignment table)."""
    out = ""
    if assignment is not None and getattr(assignment, "status", "ok") != "ok":
        items = "".join(f"<li>{html.escape(str(r))}</li>"
                        for r in getattr(assignment, "reasons", []))
        out = ('<div class="wk-doubtful" style="color:#8a5300"><b>Doubtful result</b>: check '
               f"before using these constants<ul>{items}</ul></div>")
    if edge is not None and len(edge):
        items = "".join(
            f"<li>line {int(r.line_id)} at {r.position:.3f} cm⁻¹ ({html.escape(str(r.label))}): "
            f"obs − calc {r.obs_minus_calc:+.3f} cm⁻¹ is no measurement</li>"
            for r in edge.itertuples())
        out += ('<div class="wk-edge" style="color:#b03a2e"><b>Cut by the edge of the data</b>: '
                "the fitted position of these lines ended at the end of the fitted range, so "
                "they are marked in red; crop wider (or remove the peak) and fit again"
                f"<ul>{items}</ul></div>")
    return out


def assigned_isotopologues(assignments: pd.DataFrame) -> list[str]:
    """The isotopologues with assigned lines in an assignment table, in order of appearance
    (a joint isotopologue fit needs two or more)."""
    if not {"isotopologue", "label"} <= set(assignments.columns):
        return []
    a = assignments[assignments["label"].notna() & assignments["isotopologue"].notna()]
    return [str(i) for i in dict.fromkeys(a["isotopologue"].tolist()) if str(i) != JOINT_KEY]


def joint_offer(kind: str, assignments: pd.DataFrame | None) -> tuple[str, list[str]]:
    """(why a joint isotopologue fit is not offered, "" when it is; the assigned
    isotopologues): it is for a rovibrational band whose assignment has lines of two or more."""
    isos = assigned_isotopologues(assignments) if assignments is not None else []
    if kind != "rovibrational":
        return "only for a rovibrational band", isos
    if len(isos) < 2:
        return ("needs lines of two or more isotopologues in the assignment "
                f"(now {len(isos)}): press Assign first"), isos
    return "", isos


def joint_heading(facts, show) -> str:
    """The heading of the mass-independent constants: which isotopologues were fitted together
    and the reference (``facts``: :class:`widgetkit.session.joint_view.JointFacts`;
    ``show``: how an isotopologue key is written)."""
    isos = ", ".join(show(i) for i in facts.isotopologues)
    scatter = f"; {facts.scatter}" if facts.scatter else ""
    return ('<div class="wk-joint-heading"><b>Mass-independent constants</b> (joint fit of '
            f"{html.escape(isos)}, reference {html.escape(show(facts.reference))}{html.escape(scatter)}):"
            " mass-reduced Dunham coefficients U<sub>kl</sub> and r<sub>e</sub>; the constants "
            "of each isotopologue above are derived from them</div>")
