"""Step kinds that lock lines to labels (or to none) and run the assignment again.

A lock is an observation that wins (see :mod:`widgetkit.levels._rovib_locks`); each of these
steps records how the constants moved, in units of their previous standard errors
(:func:`constant_shifts`), and warns above :data:`SHIFT_WARNING_SIGMA`.
"""

from __future__ import annotations

import math

from ..errors import AssignmentError, SessionStateError
from .kinds_analysis import _assign, _assignment_result, _restored_assignment
from .params import Param, ParamProblem, show
from .steps import State, StepKind, register_step

__all__ = ["SetAssignment", "ClearAssignment", "UnlockAssignment", "constant_shifts",
           "SHIFT_WARNING_SIGMA"]

#: a constant that moves more than this many of its previous standard errors is warned about
SHIFT_WARNING_SIGMA = 3.0


def constant_shifts(before, after) -> list[dict]:
    """How each constant moved between two assignment results, in its previous standard errors.

    Returns one dict per constant present in both with a finite, positive previous standard
    error: ``isotopologue, name, before, after, stderr`` (the previous one) and
    ``shift_sigma`` = (after − before)/stderr; largest |shift_sigma| first.
    """
    if before is None or after is None:
        return []
    key = lambda r: (str(r["isotopologue"]), str(r["name"]))  # noqa: E731
    old = {key(r): r for r in before.constants.to_dict("records")}
    out = []
    for r in after.constants.to_dict("records"):
        o = old.get(key(r))
        if o is None:
            continue
        e, v0, v1 = float(o["stderr"]), float(o["value"]), float(r["value"])
        if not (math.isfinite(e) and e > 0 and math.isfinite(v0) and math.isfinite(v1)):
            continue
        out.append({"isotopologue": key(r)[0], "name": key(r)[1], "before": v0, "after": v1,
                    "stderr": e, "shift_sigma": (v1 - v0) / e})
    out.sort(key=lambda d: -abs(d["shift_sigma"]))
    return out


def _shift_text(shifts: list[dict]) -> str:
    if not shifts:
        return "no constants to compare"
    top = shifts[0]
    big = [d for d in shifts if abs(d["shift_sigma"]) > SHIFT_WARNING_SIGMA]
    name = f"{top['name']} of {top['isotopologue']}" if top["isotopologue"] else top["name"]
    text = f"constants moved by at most {abs(top['shift_sigma']):.1f}σ ({name})"
    if big:
        text = (f"WARNING: {len(big)} constant{'s' if len(big) > 1 else ''} moved more than "
                f"{SHIFT_WARNING_SIGMA:g}σ, {name} by {top['shift_sigma']:+.3g}σ")
    return text



def _line_ids(state: State) -> set[int]:
    fit = state.line_fit
    return set() if fit is None else {int(i) for i in fit.table["line_id"]}


def _new_locks(state: State, changes: dict[int, dict | None], what: str) -> tuple[State, dict]:
    """The state with lock changes applied (line_id -> labels; empty labels = locked as
    unassigned; None = no lock any more), and the result entry listing them (a label without
    its isotopologue names the one isotopologue of the current assignment, when it holds one)."""
    known_ids = _line_ids(state)
    for line_id in changes:
        if line_id not in known_ids:
            known = ", ".join(str(i) for i in sorted(known_ids)[:30]) or "none (fit lines first)"
            raise SessionStateError(f"{what}: no line with line_id {line_id}; line ids are {known}")
    changes = {int(k): _name_isotopologue(state, v) for k, v in changes.items()}
    locks = {int(k): dict(v) for k, v in state.locks.items()}
    for k, v in changes.items():
        if v is None:
            locks.pop(k, None)
        else:
            locks[k] = dict(v)
    return state.evolve(locks=locks), {"locks": {str(k): locks.get(k) for k in sorted(changes)}}


def _name_isotopologue(state: State, labels: dict | None) -> dict | None:
    """A lock with a label but no isotopologue names the one isotopologue of the current
    assignment, when it holds exactly one (otherwise the assignment refuses the ambiguous lock)."""
    if not labels or labels.get("isotopologue") is not None:
        return labels
    if not any(labels.get(k) is not None for k in ("label", "J_upper", "J_lower")):
        return labels
    a = state.assignment
    table = None if a is None else a.assignments
    if table is None or "isotopologue" not in table.columns:
        return labels
    isos = {str(v) for v in table["isotopologue"].dropna()}
    return {**labels, "isotopologue": isos.pop()} if len(isos) == 1 else labels


def _relock(state: State, changes: dict[int, dict | None], what: str):
    """Apply lock changes and re-run the last assignment with them; nothing changes when
    that fails.

    Returns the new state, the result (the locks as applied, the assignment tables, status,
    reasons and ``constant_shifts``, see :func:`constant_shifts`) and a text saying how the
    constants moved (a WARNING above :data:`SHIFT_WARNING_SIGMA`)."""
    new, result = _new_locks(state, changes, what)
    if state.assign_spec is None:
        return new, result, ""
    out = _assign(state, state.assign_spec, dict(new.locks))
    shifts = constant_shifts(state.assignment, out)
    text = _shift_text(shifts) + ("; the assignment is DOUBTFUL"
                                  if getattr(out, "status", "ok") != "ok" else "")
    return (new.evolve(assignment=out),
            {**result, **_assignment_result(out), "constant_shifts": shifts}, text)


def _restore_relock(state: State, result: dict, changes: dict[int, dict], what: str) -> State:
    """The state after a lock change, its assignment rebuilt from the record."""
    new, _ = _new_locks(state, changes, what)
    if state.assign_spec is None:
        return new
    return new.evolve(assignment=_restored_assignment(state, result, what))


_LABEL_KEYS = {"label": "string", "isotopologue": "string", "v_upper": "integer",
               "v_lower": "integer", "J_upper": "integer", "J_lower": "integer"}


def _check_labels_param(labels, field: str) -> None:
    if not isinstance(labels, dict):
        raise ParamProblem(field, f"must be a mapping of labels, got {show(labels)}")
    for key, value in labels.items():
        kind = _LABEL_KEYS.get(key)
        if kind is None:
            raise ParamProblem(f"{field}.{key}", "is not a label; use "
                                                 f"{', '.join(_LABEL_KEYS)}")
        Param(key, kind, nullable=True, minimum=0 if kind == "integer" else None,
              maximum=1000 if kind == "integer" else None).check(value, f"{field}.{key}")


def _check_labels(line_id, labels) -> dict:
    labels = dict(labels or {})
    if not labels:
        raise AssignmentError(f"set_assignment of line {line_id} needs labels, e.g. label='R(0)' "
                              "or v_upper=1, v_lower=0, J_upper=1, J_lower=0")
    return labels


def _lock_changes(params: dict) -> dict[int, dict]:
    # one line (line_id, labels) or several at once (assignments: {line_id: labels})
    if "assignments" in params:
        return {int(k): _check_labels(k, v) for k, v in params["assignments"].items()}
    return {int(params["line_id"]): _check_labels(params["line_id"], params["labels"])}


@register_step
class SetAssignment(StepKind):
    kind = "set_assignment"
    tolerance = 1e-6
    parameters = (
        Param("line_id", "integer", None, minimum=1, doc="the line locked (with labels)"),
        Param("labels", "mapping", None, doc="label=, isotopologue=, v_upper=, ..."),
        Param("assignments", "mapping", None, doc="several locks: {line_id: labels}"),
    )
    argument_error = AssignmentError

    def check_params(self, params):
        out = super().check_params(params)
        if ("assignments" in out) == ("line_id" in out or "labels" in out):
            raise ParamProblem("line_id", "give either line_id and labels, or assignments")
        if "assignments" in out:
            for key, labels in out["assignments"].items():
                Param("line_id", "integer", minimum=1).check(
                    int(key) if key.isdigit() else key, f"assignments.{key}")
                _check_labels_param(labels, f"assignments.{key}")
        else:
            if "line_id" not in out or "labels" not in out:
                raise ParamProblem("labels" if "line_id" in out else "line_id", "is required")
            _check_labels_param(out["labels"], "labels")
        return out

    def apply(self, state, params, ctx):
        new, result, moved = _relock(state, _lock_changes(params), "set_assignment")
        text = "; ".join(f"line {k}: " + ", ".join(f"{a}={b}" for a, b in v.items())
                         for k, v in result["locks"].items())
        return new, result, f"locked {text}" + (f"; {moved}" if moved else "")

    def restore(self, state, params, result, ctx):
        return _restore_relock(state, result, _lock_changes(params), "set_assignment")


class _OneLine(StepKind):
    """A lock change of one line (``line_id``) followed by the assignment run again."""

    tolerance = 1e-6
    argument_error = AssignmentError
    #: the summary, with ``{lid}`` for the line
    done = ""

    def _changes(self, state, params) -> dict:
        raise NotImplementedError

    def apply(self, state, params, ctx):
        new, result, moved = _relock(state, self._changes(state, params), self.kind)
        text = self.done.format(lid=int(params["line_id"]))
        return new, result, text + (f"; {moved}" if moved else "")

    def restore(self, state, params, result, ctx):
        return _restore_relock(state, result, self._changes(state, params), self.kind)


@register_step
class ClearAssignment(_OneLine):
    kind = "clear_assignment"
    parameters = (Param("line_id", "integer", minimum=1, doc="the line left unassigned"),)
    done = "line {lid} left unassigned (locked)"

    def _changes(self, state, params) -> dict:
        return {int(params["line_id"]): {}}


@register_step
class UnlockAssignment(_OneLine):
    kind = "unlock_assignment"
    parameters = (Param("line_id", "integer", minimum=1, doc="the line unlocked"),)
    done = "line {lid} unlocked (assigned automatically again)"

    def _changes(self, state, params) -> dict:
        lid = int(params["line_id"])
        if lid not in state.locks:
            locked = ", ".join(str(k) for k in sorted(state.locks)[:30]) or "none"
            raise SessionStateError(f"unlock_assignment: line {lid} is not locked; locked lines: "
                                    f"{locked}")
        return {lid: None}
