"""Step kinds for level assignment (the line fit is in :mod:`.kinds_lines`, the locks in
:mod:`.kinds_locks`).

Their results hold a full record of the result object (``result["record"]``,
see :mod:`widgetkit.session.records`), so reopening a session rebuilds the
assignment from the record (``restore``) instead of assigning again.
"""

from __future__ import annotations

import numpy as np

from ..errors import AssignmentError, SessionStateError
from ..formatting import plural
from .params import Param, ParamProblem, show
from .records import (
    RESULT_TYPES,
    Restored,
    decode,
    encode,
    encode_fields,
    table_from_json,
    table_kinds,
)
from .steps import RecordMismatch, State, StepKind, register_step, table_to_json

__all__ = ["AssignBand", "molecule_from_param"]

def molecule_from_param(value, kind: str = "rovibrational"):
    """A molecule from a step parameter: a molecule's ``to_dict()`` (``{"atoms": [...], ...}``;
    ``"kind": "linear"`` for a :class:`~widgetkit.Linear`) or a formula string (a Diatomic for
    the diatomic kinds, a Linear, atoms along the axis, for the linear and Raman kinds)."""
    from ..levels import Diatomic, Linear

    linear_kind = kind in LINEAR_KINDS
    if isinstance(value, str):
        return Linear(value) if linear_kind else Diatomic.parse(value)
    if isinstance(value, dict) and "atoms" in value:
        if value.get("kind") == "linear" or (linear_kind and len(value["atoms"]) != 2):
            return Linear.from_dict(value)
        return Diatomic.from_dict(value)
    raise AssignmentError(
        f"molecule must be a Diatomic, a Linear, a formula such as 'HCl' or 'OCO', or "
        f"{{'atoms': ['H', 'Cl']}}; got {value!r}")


#: kinds assigned by :func:`widgetkit.levels.assign_linear`, and the options they take
LINEAR_KINDS = ("parallel", "perpendicular", "raman_rotational", "raman_vibrational")
_LINEAR_OPTIONS = ("temperature", "outlier_sigma", "match_fraction", "centrifugal", "hot_bands",
                   "detector", "band_labels", "excitation_wavenumber", "resolution", "technique",
                   "sample_state")


def _assign_linear(state: State, fit, opts: dict, molecule, kind: str, locks: dict, context: dict):
    from ..levels.linear_assign import assign_linear
    from ..levels.plausibility import refuse_unsuitable_spectrum

    _only(opts, frozenset(_LINEAR_OPTIONS), kind)
    technique = opts.pop("technique", None) or context["technique"]
    sample_state = opts.pop("sample_state", None) or context["sample_state"]
    opts.pop("resolution", None)
    if kind.startswith("raman"):
        if technique == "infrared":
            raise AssignmentError(
                f"assign_band(kind={kind!r}) labels Raman lines (O, Q, S branches), but the "
                "spectrum's metadata say it is an infrared spectrum; use kind='parallel', "
                "'perpendicular' or 'rovibrational'")
        refuse_unsuitable_spectrum(technique=None, sample_state=sample_state, kind=kind)
    else:
        refuse_unsuitable_spectrum(technique=technique, sample_state=sample_state, kind=kind,
                                   molecule=molecule if molecule.diatomic else None)
    kw = {k: v for k, v in opts.items() if v is not None or k == "temperature"}
    if kw.get("excitation_wavenumber") is None:
        kw["excitation_wavenumber"] = state.require_spectrum().meta.get("excitation_wavenumber")
    if kw.get("band_labels") is not None:
        kw["band_labels"] = tuple(kw["band_labels"])
    return assign_linear(fit.table, molecule, kind=kind, locks=locks, **kw)


def _assign(state: State, spec: dict, locks: dict):
    from .. import levels
    from ..levels.plausibility import UnresolvedLines, spectrum_context

    fit = state.line_fit
    if fit is None:
        raise SessionStateError("assign_band: there are no fitted lines; run fit_lines() first")
    opts = dict(spec)
    kind = opts.pop("kind", "rovibrational")
    molecule = molecule_from_param(opts.pop("molecule"), kind)
    # what the file says about the measurement (resolution, Raman, sample state); options given
    # to assign_band win
    context = spectrum_context(state.require_spectrum().meta)
    if kind in LINEAR_KINDS:
        return _assign_linear(state, fit, opts, molecule, kind, locks, context)
    if kind == "rovibrational":
        _only(opts, _ROVIB_OPTIONS, kind)
        # the function's defaults are on; a record without the key was made before it existed
        opts["exclude_hidden"] = bool(opts.get("exclude_hidden", False))
        opts["hot_bands"] = bool(opts.get("hot_bands", False))
        try:
            out = levels.assign_rovibrational(fit.table, molecule, locks=locks, **{**context, **opts})
        except UnresolvedLines as exc:
            from ..bandmodel.quick import quick_estimate_text

            sp = state.require_spectrum()
            raise UnresolvedLines(f"{exc}. " + quick_estimate_text(
                sp.x, sp.y, y_kind=sp.y_kind, temperature=opts.get("temperature"),
                resolution=opts.get("resolution") or context.get("resolution"))) from None
    elif kind == "progression":
        _only({k: v for k, v in opts.items() if k not in context}, _PROGRESSION_OPTIONS, kind)
        opts = {k: v for k, v in opts.items() if k not in context}  # no rotation needed
        out = levels.assign_progression(fit.table, molecule, locks=locks, **opts)
    else:
        raise AssignmentError(f"kind must be one of {', '.join(ASSIGNMENT_KINDS)}, got {kind!r}")
    return out


_ROVIB_OPTIONS = frozenset({"temperature", "outlier_sigma", "max_rounds", "min_rounds", "band",
                            "centrifugal", "match_fraction", "seed_fraction", "resolution",
                            "technique", "sample_state", "joint", "exclude_hidden", "hot_bands"})
_PROGRESSION_OPTIONS = frozenset({"temperature", "outlier_sigma", "isotopologue", "v_max",
                                  "hot_max", "max_anharmonicity", "n_terms", "max_labellings"})


def _only(opts: dict, allowed: frozenset, kind: str) -> None:
    extra = sorted(k for k, v in opts.items() if k not in allowed and v is not None)
    if extra:
        raise AssignmentError(f"assign_band(kind={kind!r}) does not take {', '.join(extra)}; "
                              f"its options are {', '.join(sorted(allowed))}")


#: the assignment kinds (dispatched in ``_assign``)
ASSIGNMENT_KINDS = ("rovibrational", "progression", "parallel", "perpendicular",
                    "raman_rotational", "raman_vibrational")


def _check_molecule(value) -> None:
    if isinstance(value, str):
        if not 0 < len(value) <= 64:
            raise ParamProblem("molecule", f"must be a formula such as 'HCl', got {show(value)}")
        return
    atoms = value.get("atoms")
    if not (isinstance(atoms, list) and 2 <= len(atoms) <= 32
            and all(isinstance(a, str) and 0 < len(a) <= 8 for a in atoms)):
        raise ParamProblem("molecule.atoms", f"must be a list of 2 to 32 atom symbols such as "
                                             f"['H', '35Cl'], got {show(atoms)}")
    if "min_abundance" in value:
        Param("min_abundance", "number", minimum=0.0, below=1.0).check(
            value["min_abundance"], "molecule.min_abundance")


def _assignment_result(out) -> dict:
    record = encode_fields(out, skip=("assignments", "constants", "joint"))
    joint = getattr(out, "joint", None)
    if joint is not None:  # what a joint isotopologue fit was made of, as plain values
        record["fields"]["joint"] = encode(joint.to_dict())
    return {"assignments": table_to_json(out.assignments), "constants": table_to_json(out.constants),
            "status": getattr(out, "status", "ok"), "reasons": list(getattr(out, "reasons", [])),
            "record": record
            | {"table_kinds": {"assignments": table_kinds(out.assignments),
                               "constants": table_kinds(out.constants)}}}


def _restored_assignment(state: State, result: dict, where: str):
    """The assignment rebuilt from a recorded result, checked against the state's line fit
    (:class:`RecordMismatch` when it lacks its record or does not fit)."""
    rec = result.get("record")
    if not isinstance(rec, dict) or rec.get("type") not in RESULT_TYPES:
        raise RecordMismatch(f"the record names result type {rec.get('type')!r}")
    kinds = rec.get("table_kinds") or {}
    fields = decode(rec.get("fields"), where=f"{where} result.record")
    for name in ("assignments", "constants"):
        fields[name] = table_from_json(result.get(name, {}), kinds.get(name),
                                       where=f"{where} result.{name}")
    fit = state.line_fit
    a = fields["assignments"]
    if fit is None or "line_id" not in a:
        raise RecordMismatch("the recorded assignment has no line fit to belong to")
    lines = fit.table.set_index("line_id")["position"]
    ids = a["line_id"].tolist()
    if not set(ids) <= set(lines.index.tolist()) or not np.array_equal(
            lines.loc[ids].to_numpy(dtype=float), a["position"].to_numpy(dtype=float)):
        raise RecordMismatch("the recorded assignment is not of the fitted lines")
    return Restored(rec["type"], fields)


def _n_assigned(out) -> int:
    labels = out.assignments["label"]
    return int(labels.notna().sum())


@register_step
class AssignBand(StepKind):
    kind = "assign_band"
    tolerance = 1e-6
    parameters = (
        Param("molecule", ("string", "mapping"),
              doc="a formula ('HCl') or a molecule's to_dict() ({'atoms': [...], ...})"),
        Param("kind", "choice", "rovibrational", choices=ASSIGNMENT_KINDS,
              doc="what to assign"),
        Param("temperature", "number", None, above=0, maximum=1e5, nullable=True, unit="K",
              doc="temperature of the sample"),
        # rovibrational options (widgetkit.levels.assign_rovibrational)
        Param("outlier_sigma", "number", 4.0, above=0, doc="outlier threshold, in sigmas"),
        Param("max_rounds", "integer", 20, minimum=1, maximum=1000, doc="refinement rounds"),
        Param("min_rounds", "integer", 1, minimum=0, maximum=1000, doc="refinement rounds"),
        Param("band", "json", [1, 0], doc="(v_upper, v_lower)"),
        Param("centrifugal", "choice", "separate", choices=("separate", "shared", "none"),
              doc="centrifugal distortion fitted"),
        Param("match_fraction", "number", 0.3, above=0, below=1, doc="matching tolerance"),
        Param("seed_fraction", "number", 0.25, above=0, below=1, doc="seeding tolerance"),
        Param("joint", "boolean", False,
              doc="fit all isotopologues with one set of mass-independent constants"),
        Param("exclude_hidden", "boolean", False,
              doc="leave lines that may hide another isotopologue's line out of T_rot and the "
                  "area ratios (absent in a record: off; Session.assign_band turns it on for "
                  "kind='rovibrational')"),
        # what the spectrum's metadata say unless given (widgetkit.levels.plausibility)
        Param("resolution", "number", None, above=0, maximum=1e4, nullable=True, unit="cm-1",
              doc="instrument resolution (default: the file's)"),
        Param("technique", "choice", None, choices=("infrared", "raman"), nullable=True,
              doc="infrared or raman (default: the file's)"),
        Param("sample_state", "choice", None, choices=("gas", "liquid", "solid"), nullable=True,
              doc="gas, liquid or solid (default: the file's)"),
        # progression options (widgetkit.levels.fit_progression)
        Param("isotopologue", "string", None, nullable=True, doc="the isotopologue assigned"),
        Param("v_max", "integer", 6, minimum=1, maximum=50, doc="highest upper level"),
        Param("hot_max", "integer", 3, minimum=0, maximum=20, doc="highest lower level"),
        Param("max_anharmonicity", "number", 0.05, above=0, below=1,
              doc="largest omega_e x_e / omega_e"),
        Param("n_terms", "integer", None, minimum=1, maximum=3, nullable=True,
              doc="terms of G(v)"),
        Param("max_labellings", "integer", 24, minimum=1, maximum=10_000,
              doc="labellings compared"),
        # linear-molecule and Raman options (widgetkit.levels.assign_linear)
        Param("hot_bands", "boolean", True,
              doc="look for a hot band beside a parallel band, or (kind='rovibrational') the "
                  "band (v'+1)-(v''+1) beside a diatomic's band (absent in a rovibrational "
                  "record: off; Session.assign_band turns it on)"),
        Param("detector", "choice", None, choices=("energy", "photon_counting"), nullable=True,
              doc="Raman detector: frequency factor nu^4 (energy) or nu^3 (photon counting)"),
        Param("band_labels", "json", None, nullable=True, doc="(upper, lower) level names"),
        Param("excitation_wavenumber", "number", None, above=0, nullable=True, unit="cm-1",
              doc="laser line (vacuum); default from the spectrum"),
    )
    argument_error = AssignmentError

    def check_params(self, params):
        out = super().check_params(params)
        _check_molecule(out["molecule"])
        band = out.get("band")
        if "band" in out and not (isinstance(band, list) and len(band) == 2 and all(
                isinstance(v, int) and 0 <= v <= 100 for v in band) and band[0] != band[1]):
            raise ParamProblem("band", f"must be (v_upper, v_lower), two different whole numbers "
                                       f"from 0 to 100, got {show(band)}")
        return out

    def apply(self, state, params, ctx):
        out = _assign(state, params, dict(state.locks))
        summary = (f"assigned {_n_assigned(out)} of {plural(len(out.assignments), 'line')} "
                   f"({params.get('kind', 'rovibrational')})"
                   + ("; DOUBTFUL" if getattr(out, "status", "ok") != "ok" else ""))
        return (state.evolve(assignment=out, assign_spec=dict(params)), _assignment_result(out),
                summary)

    def restore(self, state, params, result, ctx):
        restored = _restored_assignment(state, result, self.kind)
        return state.evolve(assignment=restored, assign_spec=dict(params))
