"""Step kinds for line fitting and level assignment."""

from __future__ import annotations

from ..errors import AssignmentError, FitError, SessionStateError
from .steps import State, StepKind, register_step, table_to_json

__all__ = ["FitLines", "AssignBand", "SetAssignment", "ClearAssignment", "molecule_from_param"]


@register_step
class FitLines(StepKind):
    kind = "fit_lines"
    # an iterative solver: identical on one machine, tiny differences across BLAS builds
    tolerance = 1e-6

    def apply(self, state: State, params: dict, ctx):
        from .. import lines

        sp = state.require_spectrum()
        peaks = state.peaks
        opts = dict(params)
        region = opts.get("region")
        if region is not None:
            lo, hi = sorted(float(v) for v in region)
            peaks = peaks[(peaks["position"] >= lo) & (peaks["position"] <= hi)]
        if len(peaks) == 0:
            where = "" if region is None else f" inside the region {region}"
            raise SessionStateError(
                f"fit_lines: there are no peaks{where} to fit; run find_peaks() or add_peak() first")
        fit = lines.fit(sp.x, sp.y, peaks["position"].to_numpy(dtype=float),
                        line_ids=[int(i) for i in peaks["peak_id"]], **opts)
        if not fit.converged:
            err = FitError(f"the line fit did not converge ({fit.message}); the previous lines "
                           "are kept. Try fewer lines, a region, or different starting peaks")
            err.fit = fit
            raise err
        result = {"lines": table_to_json(fit.table), "chisqr": float(fit.chisqr),
                  "redchi": float(fit.redchi), "converged": True}
        summary = (f"fitted {len(fit.table)} {opts.get('shape', 'voigt')} lines, "
                   f"reduced chi-square {fit.redchi:.3g}")
        return state.evolve(line_fit=fit, assignment=None), result, summary


def molecule_from_param(value):
    """A Diatomic from a step parameter: ``{"atoms": [a, b], ...}`` or a formula string."""
    from ..levels import Diatomic

    if isinstance(value, str):
        return Diatomic.parse(value)
    if isinstance(value, dict) and "atoms" in value:
        return Diatomic.from_dict(value)
    raise AssignmentError(
        f"molecule must be a Diatomic, a formula such as 'HCl', or {{'atoms': ['H', 'Cl']}}; "
        f"got {value!r}")


def _assign(state: State, spec: dict, locks: dict):
    from .. import levels

    fit = state.line_fit
    if fit is None:
        raise SessionStateError("assign_band: there are no fitted lines; run fit_lines() first")
    opts = dict(spec)
    molecule = molecule_from_param(opts.pop("molecule"))
    kind = opts.pop("kind", "rovibrational")
    if kind == "rovibrational":
        out = levels.assign_rovibrational(fit.table, molecule, locks=locks, **opts)
    elif kind == "progression":
        opts.pop("temperature", None)
        out = levels.assign_progression(fit.table, molecule, locks=locks, **opts)
    else:
        raise AssignmentError(f"kind must be 'rovibrational' or 'progression', got {kind!r}")
    return out


def _assignment_result(out) -> dict:
    return {"assignments": table_to_json(out.assignments), "constants": table_to_json(out.constants)}


def _n_assigned(out) -> int:
    labels = out.assignments["label"]
    return int(labels.notna().sum())


@register_step
class AssignBand(StepKind):
    kind = "assign_band"
    tolerance = 1e-6

    def apply(self, state, params, ctx):
        out = _assign(state, params, dict(state.locks))
        summary = (f"assigned {_n_assigned(out)} of {len(out.assignments)} lines "
                   f"({params.get('kind', 'rovibrational')})")
        return (state.evolve(assignment=out, assign_spec=dict(params)), _assignment_result(out),
                summary)


def _line_ids(state: State) -> set[int]:
    fit = state.line_fit
    return set() if fit is None else {int(i) for i in fit.table["line_id"]}


def _relock(state: State, changes: dict[int, dict], what: str):
    """Apply lock changes (line_id -> labels; empty labels = locked as unassigned) and re-run
    the last assignment with them; nothing changes when that fails."""
    known_ids = _line_ids(state)
    for line_id in changes:
        if line_id not in known_ids:
            known = ", ".join(str(i) for i in sorted(known_ids)[:30]) or "none (fit lines first)"
            raise SessionStateError(f"{what}: no line with line_id {line_id}; line ids are {known}")
    locks = {int(k): dict(v) for k, v in state.locks.items()}
    locks.update({int(k): dict(v) for k, v in changes.items()})
    new = state.evolve(locks=locks)
    result = {"locks": {str(k): locks[k] for k in sorted(changes)}}
    if state.assign_spec is None:
        return new, result
    out = _assign(state, state.assign_spec, locks)
    return new.evolve(assignment=out), {**result, **_assignment_result(out)}


def _check_labels(line_id, labels) -> dict:
    labels = dict(labels or {})
    if not labels:
        raise AssignmentError(f"set_assignment of line {line_id} needs labels, e.g. label='R(0)' "
                              "or v_upper=1, v_lower=0, J_upper=1, J_lower=0")
    return labels


@register_step
class SetAssignment(StepKind):
    kind = "set_assignment"
    tolerance = 1e-6

    def apply(self, state, params, ctx):
        # one line (line_id, labels) or several at once (assignments: {line_id: labels})
        if "assignments" in params:
            changes = {int(k): _check_labels(k, v) for k, v in params["assignments"].items()}
        else:
            changes = {int(params["line_id"]): _check_labels(params["line_id"], params["labels"])}
        new, result = _relock(state, changes, "set_assignment")
        text = "; ".join(f"line {k}: " + ", ".join(f"{a}={b}" for a, b in v.items())
                         for k, v in changes.items())
        return new, result, f"locked {text}"


@register_step
class ClearAssignment(StepKind):
    kind = "clear_assignment"
    tolerance = 1e-6

    def apply(self, state, params, ctx):
        lid = int(params["line_id"])
        new, result = _relock(state, {lid: {}}, "clear_assignment")
        return new, result, f"line {lid} left unassigned (locked)"

