"""The joint isotopologue fit inside the rovibrational assignment (private).

After every sub-band has been assigned and fitted on its own, the lines used
in those fits (not outliers, not blends) are fitted together with one set of
mass-independent constants (:func:`.joint.fit_joint`). The band and
equilibrium constants of each isotopologue in the table are then the ones
derived from that set, with errors from its covariance; the mass-reduced
coefficients form the rows of isotopologue :data:`.joint.JOINT_KEY`; calc and
obs − calc of the lines follow the joint fit. What the separate fits gave is
kept in the messages, with the shift in standard errors.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import AssignmentError
from .joint import JOINT_KEY, JointSummary, TooFewIsotopologues, fit_joint

__all__ = ["joint_constants", "JOINT_NAMES"]

#: the per-isotopologue constants replaced by the values derived from the joint set
JOINT_NAMES = ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower", "omega_e",
               "omega_e_x_e", "B_e", "alpha_e", "r_e")


def _fit(st, sel, data, rho, masses, reference, opts, msgs):
    modes = {"separate": ["separate", "shared", "none"], "shared": ["shared", "none"]}.get(
        opts["centrifugal"], ["none"])
    sig = None if data.sigma is None else data.sigma[sel]
    err = None
    for mode in modes:
        try:
            jf = fit_joint(st.iso[sel], st.Ju[sel], st.Jl[sel], data.x[sel], sig, rho=rho,
                           masses=masses, reference=reference, band=opts["band"], centrifugal=mode)
        except TooFewIsotopologues:
            raise
        except AssignmentError as exc:
            err = err or exc
            continue
        if mode != opts["centrifugal"]:
            msgs.append(f"joint isotopologue fit: too few lines for centrifugal="
                        f"{opts['centrifugal']!r}, fitted with centrifugal={mode!r}")
        return jf
    raise err


def joint_constants(data, st, good, table: pd.DataFrame, consts: list, covs: dict, msgs: list,
                    reasons: list, opts: dict, order: list) -> JointSummary:
    """Replace the per-isotopologue constants by those of the joint fit (module docstring);
    returns what the joint fit was made of."""
    molecule = opts["molecule"]
    sel = np.nonzero(good & (st.iso != None))[0]  # noqa: E711
    reference = order[0]
    mu0 = molecule.isotopologue(reference).reduced_mass
    masses = {n: molecule.isotopologue(n).reduced_mass for n in order}
    rho = {n: float(np.sqrt(mu0 / m)) for n, m in masses.items()}
    jf = _fit(st, sel, data, rho, masses, reference, opts, msgs)
    separate = {(c["isotopologue"], c["name"]): c for c in consts}
    consts[:] = [c for c in consts if not (c["isotopologue"] in jf.rho and c["name"] in JOINT_NAMES)]
    for name in (n for n in order if n in jf.rho):
        for nm, v, e, u in jf.constants(name):
            consts.append({"isotopologue": name, "name": nm, "value": float(v), "stderr": float(e),
                           "unit": u})
            old = separate.get((name, nm))
            if old is not None and np.isfinite(old["stderr"]) and old["stderr"] > 0 and \
                    nm in ("band_origin", "B_lower", "B_upper"):
                msgs.append(f"{name}: {nm} joint {v:.6g} ± {e:.2g}, separate fit "
                            f"{old['value']:.6g} ± {old['stderr']:.2g} "
                            f"({(v - old['value']) / old['stderr']:+.1f} separate σ)")
    for nm, v, e, u in jf.mass_independent():
        consts.append({"isotopologue": JOINT_KEY, "name": nm, "value": float(v), "stderr": float(e),
                       "unit": u})
    covs[JOINT_KEY] = pd.DataFrame(jf.fit.cov, index=list(jf.names), columns=list(jf.names))
    # calc and obs − calc of every assigned line of a jointly fitted isotopologue
    rows = np.nonzero(np.isin(st.iso.astype(object), list(jf.rho)))[0]
    calc, cerr = jf.predict(st.iso[rows], st.Ju[rows], st.Jl[rows])
    birge = float(np.sqrt(jf.fit.reduced_chi2)) if jf.fit.dof > 0 else np.nan
    scatter = max(1.0, birge) if data.sigma is not None and np.isfinite(birge) else \
        (birge if np.isfinite(birge) else 1.0)
    table.loc[rows, "calc"] = calc
    table.loc[rows, "calc_err"] = cerr
    table.loc[rows, "obs_minus_calc"] = data.x[rows] - calc
    s = data.sigma[rows] if data.sigma is not None else 1.0
    table.loc[rows, "normalised_residual"] = (data.x[rows] - calc) / (s * scatter)
    what = "Birge ratio" if data.sigma is not None else "rms residual (cm-1)"
    summary = JointSummary(tuple(jf.rho), reference, jf.centrifugal, int(len(sel)), birge, what)
    msgs.append(f"joint isotopologue fit of {len(sel)} lines of {', '.join(jf.rho)} "
                f"(reference {reference}, centrifugal={jf.centrifugal!r}): {what} {birge:.3g}")
    if data.sigma is not None and np.isfinite(birge) and birge > 3.0:
        reasons.append(f"the joint isotopologue fit scatters {birge:.1f} times the stated position "
                       "errors (more than 3): the sub-bands do not follow one set of mass-scaled "
                       "constants (labels, or a breakdown of the mass scaling); compare joint=False")
    return summary
