"""What a referee should look at twice: the flags of a report.

:func:`collect_flags` gathers, from a session's latest state, every parameter of
the line fit that ended on a bound (its value is a limit, its standard error
not meaningful), the fit's own warnings (lines below the noise, widths below the
sampling step, areas not significant, a χ² far above the noise), lines the fit
pruned, a fit that did not converge, outliers and unassigned lines of the
assignment, and any result whose status is "doubtful" with its reasons.
Parameter names are written as the trade says them ("line 12 Gaussian σ").
"""

from __future__ import annotations

import dataclasses
import math
import re

import pandas as pd

from ..formatting import display_isotopologue, fit_verdict, format_value, plural, tidy_text

__all__ = ["collect_flags", "parameter_label", "bound_parameters", "assignment_flags", "Flags",
           "known", "parameter_text"]

_WIDTHS = {"sigma": "Gaussian σ", "gamma": "Lorentzian γ (HWHM)", "area": "area",
           "position": "position"}
_LINE_PARAM = re.compile(r"^l(\w+?)_(area|position|sigma|gamma)$")
_GROUP_PARAM = re.compile(r"^(\w+)_(sigma|gamma)$")
_NAME_IN_TEXT = re.compile(r"\b(l\w+?_(?:area|position|sigma|gamma)|\w+_(?:sigma|gamma))\b")


@dataclasses.dataclass(frozen=True)
class Flags:
    """The flags of a report.

    Attributes
    ----------
    items : list of str
        One sentence per flag (plain Unicode).
    at_bound : frozenset of (line_id, column)
        Cells of the line table whose parameter ended on a bound (reports mark them).
    """

    items: list
    at_bound: frozenset


def parameter_label(name: str) -> str:
    """``"l12_sigma"`` -> ``"line 12 Gaussian σ"``; ``"shared_gamma"`` -> ``"shared Lorentzian γ
    (HWHM)"``; other names (baseline coefficients) unchanged."""
    m = _LINE_PARAM.match(name)
    if m:
        return f"line {m[1]} {_WIDTHS[m[2]]}"
    m = _GROUP_PARAM.match(name)
    if m and m[1] != "bl":
        return f"{'shared' if m[1] == 'shared' else 'width group ' + m[1]} {_WIDTHS[m[2]]}"
    return name


def known(obj, name: str, default=None):
    """``obj.name`` when the result holds it without recomputing anything: a result restored
    from the saved record (``restored`` True) answers only for what it recorded, so a report of
    a reopened session never refits; ``default`` otherwise."""
    if obj is None:
        return default
    if getattr(obj, "restored", False) is True and name not in dir(obj):
        return default
    return getattr(obj, name, default)


_AT_BOUND = re.compile(r"^(\S+) ended at its bound$")


def bound_parameters(fit) -> list[tuple[str, object, str | None, float | None, float | None]]:
    """Parameters the line fit held on a bound of their allowed range (the fit's own
    convergence test says so in its ``flags``, which the session records):
    ``(name, line_id or None, table column or None, value, stderr)``, value and stderr from
    the line table when the parameter is a line's."""
    table = known(fit, "table")
    out = []
    for texts in (known(fit, "flags") or {}).values():
        for text in texts:
            m = _AT_BOUND.match(str(text))
            if m is None:
                continue
            name = m[1]
            lm = _LINE_PARAM.match(name)
            lid = col = value = err = None
            if lm:
                lid = int(lm[1]) if lm[1].isdigit() else lm[1]
                col = lm[2]
                if isinstance(table, pd.DataFrame) and col in table and "line_id" in table:
                    row = table[table["line_id"].astype(str) == str(lm[1])]
                    if len(row):
                        value = float(row[col].iloc[0])
                        e = row[col + "_err"].iloc[0] if col + "_err" in row else None
                        err = float(e) if e is not None and pd.notna(e) else None
            out.append((name, lid, col, value, err))
    return out


def parameter_text(text: str) -> str:
    """Every parameter name inside ``text`` (a message, a tie expression) written as the trade
    says it: ``"l5_gamma = l7_gamma"`` -> ``"line 5 Lorentzian γ (HWHM) = line 7 ..."``."""
    return _NAME_IN_TEXT.sub(lambda m: parameter_label(m.group(0)), str(text))


def _rename(text: str) -> str:
    return tidy_text(parameter_text(text))


def _line_fit_flags(fit) -> tuple[list[str], set]:
    items, cells = [], set()
    if fit is None:
        return items, cells
    if known(fit, "converged", True) is False:
        items.append("The line fit " + _rename(fit_verdict(False, known(fit, "message", "")))
                     .replace("did not", "did NOT") + ".")
    for name, lid, col, v, err in bound_parameters(fit):
        if lid is not None:
            cells.add((lid, col))
        unit = " cm⁻¹" if name.endswith(("sigma", "gamma", "position")) else ""
        label = parameter_label(name)
        value = f" = {format_value(v, 3)}{unit}" if v is not None else ""
        items.append(f"{label[:1].upper()}{label[1:]}{value} ended on a bound of its allowed "
                     "range: the value is a limit, not a measurement"
                     + (f", and its standard error ({format_value(err, 2)}) is not meaningful"
                        if err is not None and math.isfinite(err) else "") + ".")
    for key, texts in (known(fit, "flags") or {}).items():
        where = "Line fit" if key == "fit" else f"Line {key}"
        for text in texts:
            if not _AT_BOUND.match(str(text)):
                items.append(f"{where}: {_rename(text)}.")
    pruned = known(fit, "pruned")
    if isinstance(pruned, dict):
        items += [f"Line {k} was pruned from the fit: {_rename(v)}." for k, v in pruned.items()]
    elif isinstance(pruned, (list, tuple)):
        for p in pruned:
            if isinstance(p, dict):
                lid = p.get("line_id", p.get("id", "?"))
                items.append(f"Line {lid} was pruned from the fit: {_rename(p.get('reason', ''))}.")
            else:
                items.append(f"Line {p} was pruned from the fit.")
    return items, cells


def assignment_flags(asg) -> list[str]:
    """The flags of an assignment result: its status "doubtful" with the reasons (or, for a
    result without a status, its own DOUBTFUL message), outliers, unassigned lines."""
    if asg is None:
        return []
    items = []
    status = known(asg, "status")
    reasons = [str(r) for r in (known(asg, "reasons") or [])]
    if status == "doubtful":
        items.append("The assignment is DOUBTFUL" + (": " + "; ".join(_rename(r) for r in reasons)
                                                     if reasons else "") + ".")
    elif status is None:
        items += [_rename(m) for m in (known(asg, "messages") or [])
                  if str(m).startswith("DOUBTFUL")]
    a = known(asg, "assignments")
    if isinstance(a, pd.DataFrame) and len(a):
        if "outlier" in a:
            for _, r in a[a["outlier"].astype(bool)].iterrows():
                iso = display_isotopologue(r.get("isotopologue")) if "isotopologue" in r else ""
                omc = r.get("obs_minus_calc")
                items.append(f"Line {r['line_id']} ({r.get('label')}{' of ' + iso if iso else ''}) "
                             "is an outlier" + (f", obs − calc = {format_value(omc, 2)} cm⁻¹"
                                                if pd.notna(omc) else "")
                             + ("; it is locked, so it stays in the fit" if r.get("locked") is True
                                else "; it was left out of the fit") + ".")
        if "label" in a:
            un = a[a["label"].isna()]
            if len(un):
                ids = ", ".join(str(i) for i in un["line_id"].tolist()[:20])
                items.append(f"{plural(len(un), 'line')} not assigned (line {ids}"
                             f"{', …' if len(un) > 20 else ''}).")
    return items


def _other_results(state) -> list[str]:
    """Doubtful results in state fields other than the line fit and the assignment."""
    items = []
    for f in dataclasses.fields(state):
        if f.name in ("line_fit", "assignment", "spectrum", "peaks", "baseline") or \
                f.name.startswith("_"):
            continue
        obj = getattr(state, f.name, None)
        if known(obj, "status") == "doubtful":
            reasons = "; ".join(_rename(r) for r in (known(obj, "reasons") or []))
            items.append(f"The {f.name.replace('_', ' ')} result is DOUBTFUL"
                         + (f": {reasons}" if reasons else "") + ".")
        if known(obj, "converged", True) is False:
            items.append(f"The {f.name.replace('_', ' ')} did NOT converge.")
    return items


def collect_flags(session) -> Flags:
    """The flags of ``session``'s latest state (see the module docstring)."""
    state = session.state_at(len(session.history) - 1)
    items, cells = _line_fit_flags(state.line_fit)
    items += assignment_flags(state.assignment)
    items += _other_results(state)
    return Flags(items=items, at_bound=frozenset(cells))
