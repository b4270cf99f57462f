"""How the constants were obtained, per ``method``: the joint isotopologue fit of an
assignment (facts from :mod:`widgetkit.session.joint_view`) and the band-model fit (private
to :mod:`widgetkit.report`).

The joint paragraph names the isotope relations used (those of the Dunham expansion,
ρᵢ = (μ_ref/μᵢ)^½), the isotopologues fitted together, the reference and how the
centrifugal distortion was treated; the band-model paragraph names the instrument, the
resolution and where it came from, the temperature, and every parameter that was fixed by
the user, kept at a default, or held by the fit. Everything is read from the session's
recorded steps and results (also for a session reopened from its file).
"""

from __future__ import annotations

import pandas as pd

from ..formatting import display_isotopologue, plural
from ..session.joint_view import JOINT_KEY, JointFacts, joint_facts
from .flags import known
from .phrases import join_and as _and
from .phrases import number_text as _num

__all__ = ["JointFacts", "joint_facts", "joint_sentences", "band_model_paragraph",
           "JOINT_KEY", "JOINT_RELATIONS"]

#: the isotope relations of the joint fit, as a sentence writes them
JOINT_RELATIONS = ("ωe × ρ, ωexe × ρ², Be × ρ², αe × ρ³ and D × ρ⁴, with ρ = √(μ_ref/μ) and μ "
                   "the isotopologue's reduced mass")
_CENTRIFUGAL = {"separate": "D′ and D″ fitted separately", "shared": "one D for both levels",
                "none": "no centrifugal distortion"}
_INSTRUMENT_NAMES = {"gaussian": "a Gaussian instrument function (FWHM = resolution)",
                     "triangular": "triangular apodisation (sinc² instrument function)",
                     "sinc2": "triangular apodisation (sinc² instrument function)",
                     "boxcar": "no apodisation (boxcar, sinc instrument function)",
                     "sinc": "no apodisation (boxcar, sinc instrument function)"}


def joint_sentences(facts: JointFacts) -> list[str]:
    """The sentences of the methods paragraph that describe a joint isotopologue fit."""
    isos = _and([display_isotopologue(i) for i in facts.isotopologues])
    ref = display_isotopologue(facts.reference)
    lines = f" ({plural(facts.n_lines, 'line')})" if facts.n_lines else ""
    out = [f"The constants of {isos} come from one joint fit of all their assigned lines"
           f"{lines} with one set of mass-independent constants: the equilibrium constants of "
           f"the reference {ref} (ωe, ωexe, Be, αe and D), scaled to each isotopologue by the "
           f"isotope relations of the Dunham expansion, {JOINT_RELATIONS}."]
    if facts.centrifugal in _CENTRIFUGAL:
        out.append(f"Centrifugal distortion: {_CENTRIFUGAL[facts.centrifugal]}.")
    out.append("The band and equilibrium constants of each isotopologue in the table are derived "
               "from that set, their standard errors from its covariance; the rows of "
               f"“{JOINT_KEY}” are the mass-reduced Dunham coefficients "
               "(U₁₀ = ωe √μ, U₂₀ = −ωexe μ, U₀₁ = Be μ, U₁₁ = −αe μ √μ, μ in u, of the "
               "reference) and r_e.")
    if facts.scatter:
        out.append(f"Joint fit: {facts.scatter}.")
    return out


def _resolution_text(params: dict, fit, spectrum_meta: dict) -> str:
    ptab = known(fit, "parameters")
    row = None
    if isinstance(ptab, pd.DataFrame) and "name" in ptab:
        sel = ptab[ptab["name"] == "resolution"]
        row = sel.iloc[0] if len(sel) else None
    if params.get("resolution"):
        return f"resolution {_num(params['resolution'])} cm⁻¹ (given)"
    if isinstance(spectrum_meta.get("resolution"), (int, float)):
        return f"resolution {_num(spectrum_meta['resolution'])} cm⁻¹ (stated in the file)"
    if row is not None:
        how = {"free": "fitted", "held": "estimated and held", "fixed": "fixed"}.get(
            str(row.get("status")), str(row.get("status")))
        src = f", {row['source']}" if isinstance(row.get("source"), str) and row["source"] else ""
        return f"resolution {_num(row['value'])} cm⁻¹ ({how}{src})"
    return "resolution not stated"


def _parameter_roles(fit) -> tuple[list[str], list[str], list[str]]:
    """(fixed by the user, kept at defaults, held by the fit) of a band-model fit."""
    ptab = known(fit, "parameters")
    user, default, held = [], [], []
    if not isinstance(ptab, pd.DataFrame) or not {"name", "status"} <= set(ptab.columns):
        return user, default, held
    for r in ptab.to_dict("records"):
        unit = r.get("unit") if isinstance(r.get("unit"), str) else ""
        unit = {"cm-1": " cm⁻¹", "K": " K", "1": ""}.get(unit, f" {unit}" if unit else "")
        text = f"{r['name']} = {_num(r['value'], 6)}{unit}"
        source = str(r.get("source") or "")
        if r["name"] == "resolution":
            continue  # the instrument sentence says it
        if r["status"] == "fixed":
            (user if source == "fixed" else default).append(
                text + (f" ({source})" if source not in ("fixed", "default", "") else ""))
        elif r["status"] == "held":
            note = str(r.get("note") or "")
            held.append(text + (f" ({note})" if note else ""))
    return user, default, held


def band_model_paragraph(session, state, consts: pd.DataFrame) -> str | None:
    """The band-model paragraph (constants of ``method`` "band model" in ``consts``)."""
    if "method" not in consts or not (consts["method"] == "band model").any():
        return None
    i = next((j for j in range(len(session.history) - 1, -1, -1)
              if "band_model" in session.history[j].kind), None)
    p = session.history[i].params if i is not None else {}
    fit = getattr(state, "band_model", None)
    bm = consts[consts["method"] == "band model"]
    free = bm[bm["stderr"].notna()]["name"].tolist()
    where = f" (step {i})" if i is not None else ""
    out = [f"Band model{where}. The spectrum was fitted with a band simulated from the term "
           "values (line intensities from Hönl–London factors and Boltzmann populations, "
           "convolved with the instrument function) by non-linear least squares; standard errors "
           "from the covariance matrix of the fit scaled by the reduced chi-square."]
    if i is not None:
        meta = session.source_spectrum.meta
        inst = _INSTRUMENT_NAMES.get(p.get("instrument", "gaussian"), str(p.get("instrument")))
        out.append(f"Instrument: {inst}, {_resolution_text(p, fit, meta or {})}.")
        if p.get("joint", True):
            out.append("One set of mass-independent constants for all isotopologues (isotope "
                       f"relations of the Dunham expansion, {JOINT_RELATIONS}).")
    out.append("Free: " + (", ".join(dict.fromkeys(free)) or "none") + ".")
    user, default, held = _parameter_roles(fit)
    fix = p.get("fix") or {}
    if not user and isinstance(fix, dict) and fix:  # a result that does not list its parameters
        user = [f"{k} = {v}" for k, v in fix.items()]
    out.append("Fixed by the user: " + ("; ".join(user) if user else "none") + ".")
    if default:
        out.append("Kept at their default values: " + "; ".join(default) + ".")
    if held:
        out.append("Held by the fit (the data do not determine them): " + "; ".join(held) + ".")
    marked = bm[bm["note"].astype(str) != ""]["name"].tolist() if "note" in bm else []
    if marked:
        out.append(f"{_and(list(dict.fromkeys(marked)))} {'is' if len(set(marked)) == 1 else 'are'}"
                   " therefore no measurement: the table gives no standard error and says so in "
                   "its note column.")
    return " ".join(out)
