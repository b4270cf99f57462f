"""The methods paragraphs of a report: how every number was obtained.

:func:`describe_methods` reads a session's steps and the results held in its
latest state and writes, in plain sentences, what a referee needs to judge the
numbers: the data and each processing step (steps numbered from 0, the load
being step 0), how the lines were fitted (profile, baseline, which parameters
were free, fixed or tied, what the weights were, how the standard errors were
obtained), how the constants were fitted (model, weights, free and fixed
constants, covariance scaling, outlier rule, locks) and, when present, a
band-model fit (with :mod:`.constant_methods`: the joint isotopologue fit, the instrument and
what was fixed or held). Only what the session holds is stated; a result another part
of widgetkit adds later is described from its step when its details are unknown.

Text is plain Unicode (cm⁻¹, σ, ν₀); the renderers escape it for their format.
"""

from __future__ import annotations

import inspect
import os
import re

import numpy as np
import pandas as pd

from ..formatting import (
    article,
    display_isotopologue,
    plural,
    summary_text,
    tidy_text,
)
from .constant_methods import JOINT_KEY, band_model_paragraph, joint_facts, joint_sentences
from .fit_methods import line_fit_paragraph
from .flags import known
from .phrases import join_and as _and
from .phrases import latest_step as _latest
from .phrases import number_text as _num

__all__ = ["describe_methods", "describe_step", "free_constants", "latest_constants"]

_CONSTANT_NAMES = {"band_origin": "ν₀", "B_upper": "B′", "B_lower": "B″", "D_upper": "D′",
                   "D_lower": "D″", "omega_e": "ωe", "omega_e_x_e": "ωexe", "omega_e_y_e": "ωeye"}


def _source_sentence(session) -> str:
    sp = session.source_spectrum
    src = session.sources[0] if session.sources else {}
    name = os.path.basename(str(src.get("path") or "")) or "a spectrum given in memory"
    fmt = f" ({src['format']})" if src.get("format") else ""
    axis = "Raman shifts" if (sp.meta or {}).get("x_axis") == "raman_shift" else "wavenumbers"
    text = (f"The data are {name}{fmt}: {plural(int(sp.x.size), 'point')} at {axis} from "
            f"{_num(sp.x[0], 6)} to {_num(sp.x[-1], 6)} cm⁻¹, read as {sp.y_kind} (step 0).")
    meta = sp.meta or {}
    extra = []
    if isinstance(meta.get("resolution"), (int, float)):
        extra.append(f"resolution {_num(meta['resolution'])} cm⁻¹")
    if meta.get("sample_state"):
        extra.append(f"sample state {meta['sample_state']}")
    if meta.get("technique"):
        extra.append(f"technique {meta['technique']}")
    if extra:
        text += " The file states " + ", ".join(extra) + "."
    return text


def describe_step(index: int, step) -> str:
    """One sentence for a processing step (the fits have paragraphs of their own)."""
    p, r = step.params, step.result or {}
    k = step.kind
    if k == "crop":
        return f"Step {index} kept {_num(p['lo'], 6)}–{_num(p['hi'], 6)} cm⁻¹."
    if k == "to_absorbance":
        return f"Step {index} converted transmittance T to absorbance A = −log₁₀ T."
    if k == "subtract_baseline":
        method = p.get("method", "poly")
        if method == "als":
            what = (f"{article('ALS')} (asymmetric least squares) baseline with smoothness "
                    f"λ = {_num(p.get('lam', 'default'))} and asymmetry p = {_num(p.get('p', 'default'))}")
        elif method == "poly":
            deg = p.get("degree")
            what = ("a polynomial baseline" + (f" of degree {deg}" if deg is not None else "")
                    + ", fitted with the peaks masked iteratively")
        else:
            what = article(f"{method} baseline")
        return f"Step {index} subtracted {what}."
    if k == "find_peaks":
        n = len((r.get("peaks") or {}).get("peak_id", []))
        noise = r.get("noise")
        sep = p.get("min_separation")
        return (f"Step {index} found {plural(n, 'peak')} whose height above the local baseline "
                f"exceeds {_num(p.get('min_snr'))} times the noise σ"
                + (f" = {_num(noise, 3)} (estimated from the data)" if noise is not None else "")
                + (f", at least {_num(sep)} cm⁻¹ apart" if sep else "") + ".")
    if k == "add_peak":
        return (f"Step {index} added peak {r.get('peak_id')} by hand at "
                f"{_num(r.get('position', p.get('position')), 8)} cm⁻¹"
                + (" (moved to the nearest maximum)" if p.get("snap", True) else "") + ".")
    if k == "remove_peak":
        return f"Step {index} removed peak {p.get('peak_id')} by hand."
    if k == "note":
        return f"Step {index} is a note: “{' '.join(str(p.get('text', '')).split())}”."
    if k == "fit_lines":
        return f"Step {index} fitted the lines (see Line fit)."
    if k == "assign_band":
        return f"Step {index} assigned the lines and fitted the constants (see Assignment)."
    if k == "set_assignment":
        locks = p.get("assignments") or {p.get("line_id"): p.get("labels") or {}}
        return (f"Step {index} locked by hand " + "; ".join(
            f"line {lid} {_lock_text(lab)}" for lid, lab in locks.items()) + ".")
    if k == "clear_assignment":
        return f"Step {index} left line {p.get('line_id')} unassigned by hand (locked so)."
    return f"Step {index} ({k}): {summary_text(step.summary)}."


def free_constants(assignment) -> dict[str, list[str]]:
    """Isotopologue -> names of the constants that were fitted (free), from the covariance
    the assignment result holds (one matrix per isotopologue, or one for a progression)."""
    cov = known(assignment, "covariance")
    if isinstance(cov, pd.DataFrame):
        iso = ""
        consts = known(assignment, "constants")
        if isinstance(consts, pd.DataFrame) and "isotopologue" in consts and len(consts):
            iso = str(consts["isotopologue"].iloc[0])
        return {iso: [str(c) for c in cov.columns]}
    if isinstance(cov, dict):
        return {str(k): [str(c) for c in v.columns] for k, v in cov.items()
                if isinstance(v, pd.DataFrame)}
    return {}


def _default(func_name: str, arg: str, fallback):
    from .. import levels

    try:
        return inspect.signature(getattr(levels, func_name)).parameters[arg].default
    except (AttributeError, KeyError, TypeError, ValueError):  # pragma: no cover
        return fallback


def _hot_band_key(key: str) -> tuple[str, tuple[int, int] | None]:
    """(isotopologue, band) of a covariance key: "12C-16O 2-1" is the hot band 2-1 of 12C-16O
    (:func:`widgetkit.levels._rovib_hot_report.covariance_key`); other keys have no band."""
    m = _HOT_KEY.fullmatch(str(key))
    return (m.group(1), (int(m.group(2)), int(m.group(3)))) if m else (str(key), None)


_HOT_KEY = re.compile(r"(\S+) (\d+)-(\d+)")


def _chi2_text(a: pd.DataFrame, iso: str, n_free: int, band=None) -> str | None:
    if not {"weight", "obs_minus_calc"} <= set(a.columns):
        return None
    sel = a[(a["weight"] > 0) & a["obs_minus_calc"].notna()] if "isotopologue" not in a or not iso \
        else a[(a["isotopologue"] == iso) & (a["weight"] > 0) & a["obs_minus_calc"].notna()]
    if band is not None and {"v_upper", "v_lower"} <= set(sel.columns):
        sel = sel[(sel["v_upper"].fillna(-1).to_numpy(int) == band[0])
                  & (sel["v_lower"].fillna(-1).to_numpy(int) == band[1])]
    n = len(sel)
    dof = n - n_free
    if dof <= 0:
        return f"{plural(n, 'line')}, no degrees of freedom left"
    chi2 = float(np.sum(sel["weight"].to_numpy(float) * sel["obs_minus_calc"].to_numpy(float) ** 2))
    return f"{plural(n, 'line')}, χ²/ν = {_num(chi2 / dof, 3)}"


def _assignment_paragraph(session, state) -> str | None:
    asg = state.assignment
    found = _latest(session, asg, "assign_band")
    if found is None:
        return None
    i, p = found
    kind = p.get("kind", "rovibrational")
    a = asg.assignments
    free = free_constants(asg)
    hot = {k: _hot_band_key(k) for k in free if _hot_band_key(k)[1] is not None}
    isos = [k for k in free if k != JOINT_KEY and k not in hot] or sorted(
        {str(v) for v in a.get("isotopologue", []) if pd.notna(v)})
    names = _and([display_isotopologue(k) for k in isos if k]) or "the molecule"
    has_err = "position_err" in a and a["position_err"].notna().any()
    if kind == "rovibrational":
        band = known(asg, "band", (1, 0))
        model = (f"Assignment (step {i}). The lines were assigned to the P and R branches of the "
                 f"{band[0]}–{band[1]} band of {names}, and for each isotopologue "
                 "ν = ν₀ + F′(J′) − F″(J″) with F(J) = B J(J+1) − D J²(J+1)² was fitted to the "
                 "assigned line positions by weighted linear least squares.")
        if hot:
            model += (" Beside it, the hot band " + _and(
                [f"{b[0]}–{b[1]} of {display_isotopologue(k)}" for k, b in hot.values()])
                + " was predicted from the band's constants (its lower level is the band's "
                "upper level), assigned among the lines the band left and fitted the same way.")
        rule = _default("assign_rovibrational", "outlier_sigma", 4.0)
    elif kind == "progression":
        model = (f"Assignment (step {i}). The band centres were assigned to vibrational "
                 "transitions v′–v″ and G(v) = ωe(v+½) − ωexe(v+½)² (+ ωeye(v+½)³) fitted to them "
                 "by weighted linear least squares.")
        rule = None
    else:
        model = (f"Assignment (step {i}, kind {kind}). The lines were assigned and the constants "
                 "fitted to their positions by weighted linear least squares.")
        rule = None
    out = [model]
    facts = joint_facts(asg) if kind == "rovibrational" else None
    if facts is not None:
        out += joint_sentences(facts)
    if has_err:
        out.append("The weights are w = 1/σ², σ the standard error of each line position from the "
                   "line fit (the weight column of the assignment table, in cm²; 0 for lines left "
                   "out).")
    else:
        out.append("No position errors were available: all weights are equal.")
    if has_err:
        out.append("The covariance matrix is (AᵀWA)⁻¹ multiplied by max(1, χ²/ν): the stated "
                   "errors are trusted unless the scatter shows them too small.")
    else:
        out.append("The covariance matrix is (AᵀA)⁻¹ multiplied by χ²/ν: the scatter of the "
                   "residuals sets the standard errors.")
    for iso, names_ in free.items():
        key_iso, kb = hot.get(iso, (iso, None))
        chi = _chi2_text(a, key_iso, len(names_), kb or (known(asg, "band", (1, 0)) if hot else None))
        label = display_isotopologue(key_iso) if key_iso else "all lines"
        if kb is not None:
            label = f"the hot band {kb[0]}–{kb[1]} of {label}"
        if facts is not None:  # the first, separate fits; then the joint one
            label = "the joint fit" if iso == JOINT_KEY else f"the separate fit of {label}"
            if iso == JOINT_KEY:
                chi = f"{plural(facts.n_lines, 'line')}" if facts.n_lines else None
        consts = ", ".join(f"{_CONSTANT_NAMES.get(c, c)} ({c})" if c in _CONSTANT_NAMES else c
                           for c in names_)
        out.append(f"Free for {label}: {consts}" + (f" ({chi})" if chi else "") + ".")
    held = [m for m in (known(asg, "messages") or []) if "held at" in str(m)]
    if not free:  # a result that does not say which constants it fitted
        out.append("Free: the constants given with a standard error in the table of constants.")
    out.append("Fixed: " + ("; ".join(tidy_text(m) for m in held) if held
                            else "none stated" if not free else "none") + ".")
    if rule is not None:
        rule = p.get("outlier_sigma", rule)
        out.append(f"Lines more than {_num(rule)} σ from the fit are flagged as outliers and left "
                   "out of it, as are blended lines; locked lines always stay in.")
    out.append("Derived constants (such as B_e, α_e, r_e, the force constant or T_rot) and their "
               "standard errors follow by linear propagation with the covariance matrix.")
    locks = state.locks or {}
    if locks:
        out.append(f"{plural(len(locks), 'line')} locked by hand: "
                   + "; ".join(f"line {k} " + (_lock_text(v) if v else "left unassigned")
                               for k, v in sorted(locks.items())) + ".")
    return " ".join(out)


def _lock_text(labels: dict) -> str:
    """``{"label": "R(0)", "isotopologue": "1H-35Cl"}`` -> ``"as R(0) of H³⁵Cl"``."""
    labels = dict(labels or {})
    rest = {k: v for k, v in labels.items() if k not in ("label", "isotopologue")}
    text = "as " + str(labels["label"]) if labels.get("label") else "with " + ", ".join(
        f"{k} = {v}" for k, v in rest.items())
    if labels.get("isotopologue"):
        text += f" of {display_isotopologue(labels['isotopologue'])}"
    return text


def latest_constants(session) -> pd.DataFrame:
    """The constants of the session's latest state, whichever step is being viewed (the
    session's own table, with every column other parts add, such as ``method``)."""
    if session.viewing == len(session.history) - 1:
        return session.constants
    from ..session.views import constants_table

    return constants_table(session.state_at(len(session.history) - 1))


def _band_model_paragraph(session, state) -> str | None:
    return band_model_paragraph(session, state, latest_constants(session))


def describe_methods(session) -> list[str]:
    """The methods paragraphs of ``session`` (its latest state), in report order.

    Returns
    -------
    list of str
        Plain Unicode paragraphs: data and processing, line fit, assignment, band
        model (each only when the session holds it).
    """
    history = session.history
    state = session.state_at(len(history) - 1)
    first = _source_sentence(session)
    steps = [describe_step(i, s) for i, s in enumerate(history) if i > 0]
    out = [" ".join([first, *steps])]
    for make in (line_fit_paragraph, _assignment_paragraph, _band_model_paragraph):
        text = make(session, state)
        if text:
            out.append(text)
    return out
