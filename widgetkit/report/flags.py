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

from ..formatting import display_isotopologue, format_value, plural, tidy_text

__all__ = ["collect_flags", "parameter_label", "bound_parameters", "assignment_flags", "Flags"]

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


def _near(v: float, b: float, scale: float) -> bool:
    return math.isfinite(b) and abs(v - b) <= 1e-6 * max(abs(b), scale, 1e-300)


def bound_parameters(fit) -> list[tuple[str, str, float, float, float | None]]:
    """Free parameters of a line fit that ended on a bound:
    ``(name, "lower"/"upper", value, bound, stderr)``; empty when the fit holds no parameters."""
    params = getattr(fit, "params", None)
    out = []
    for name, par in (params or {}).items():
        if not par.vary or par.expr is not None or par.value is None:
            continue
        v = float(par.value)
        err = None if par.stderr is None or not math.isfinite(par.stderr) else float(par.stderr)
        scale = 1e-3 * (err or 0.0)
        for side, b in (("lower", par.min), ("upper", par.max)):
            if b is not None and _near(v, float(b), scale):
                out.append((name, side, v, float(b), err))
                break
    return out


def _rename(text: str) -> str:
    return tidy_text(_NAME_IN_TEXT.sub(lambda m: parameter_label(m.group(0)), str(text)))


def _line_fit_flags(fit) -> tuple[list[str], set]:
    items, cells = [], set()
    if fit is None:
        return items, cells
    if getattr(fit, "converged", True) is False:
        items.append("The line fit did NOT converge: " + _rename(getattr(fit, "message", "")))
    named = set()
    for name, side, v, b, err in bound_parameters(fit):
        named.add(name)
        m = _LINE_PARAM.match(name)
        if m:
            key = int(m[1]) if m[1].isdigit() else m[1]
            cells.add((key, m[2]))
        unit = " cm⁻¹" if name.endswith(("sigma", "gamma", "position")) else ""
        label = parameter_label(name)
        items.append(f"{label[:1].upper()}{label[1:]} = {format_value(v, 4)}{unit} ends on its {side} "
                     f"bound ({format_value(b, 4)}{unit}): the value is a limit, not a measurement"
                     + (f", and its standard error ({format_value(err, 2)}) is not meaningful"
                        if err is not None else "") + ".")
    for key, texts in (getattr(fit, "flags", None) or {}).items():
        where = "Line fit" if key == "fit" else f"Line {key}"
        for t in texts:
            m = re.match(r"^(\S+) ended at its bound$", str(t))
            if m and m[1] in named:
                continue
            items.append(f"{where}: {_rename(t)}.")
    pruned = getattr(fit, "pruned", None)
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
    status = getattr(asg, "status", None)
    reasons = [str(r) for r in (getattr(asg, "reasons", None) or [])]
    if status == "doubtful":
        items.append("The assignment is DOUBTFUL" + (": " + "; ".join(_rename(r) for r in reasons)
                                                     if reasons else "") + ".")
    elif status is None:
        items += [_rename(m) for m in (getattr(asg, "messages", None) or [])
                  if str(m).startswith("DOUBTFUL")]
    a = getattr(asg, "assignments", None)
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
        if getattr(obj, "status", None) == "doubtful":
            reasons = "; ".join(_rename(r) for r in (getattr(obj, "reasons", None) or []))
            items.append(f"The {f.name.replace('_', ' ')} result is DOUBTFUL"
                         + (f": {reasons}" if reasons else "") + ".")
        if getattr(obj, "converged", True) is False:
            items.append(f"The {f.name.replace('_', ' ')} did NOT converge.")
    return items


def collect_flags(session) -> Flags:
    """The flags of ``session``'s latest state (see the module docstring)."""
    state = session.state_at(len(session.history) - 1)
    items, cells = _line_fit_flags(state.line_fit)
    items += assignment_flags(state.assignment)
    items += _other_results(state)
    return Flags(items=items, at_bound=frozenset(cells))
