"""Result tables of the linear-molecule and Raman assignment: assignments, constants,
rotational and Stokes/anti-Stokes temperatures, the model in words, status and reasons."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._linear_search import (
    BandState,
    branch_balance,
    branch_counts,
    label_list,
    lower_energy,
    strength_factor,
)
from ._lsq import SingularDesign, weighted_lstsq
from .bandfit import equilibrium_constants
from .candidates import C2
from .raman import stokes_anti_stokes_temperature

__all__ = ["tables", "describe_model"]

_LEVEL_NAMES = {"parallel": ("upper", "ground"), "perpendicular": ("upper", "ground"),
                "raman_rotational": ("ground", "ground"), "raman_vibrational": ("v=1", "v=0")}


def describe_model(mol, kind: str, states: list[BandState]) -> str:
    """The model used, in words, for records and reports."""
    iso = mol.main
    st = iso.statistics
    if not st.centrosymmetric:
        spin = "no nuclear-spin alternation (no centre of symmetry)"
    elif st.n_antisymmetric == 0:
        spin = f"only half the rotational levels exist (spin weights {st.n_symmetric}:0)"
    else:
        spin = f"nuclear-spin weights {st.n_symmetric}:{st.n_antisymmetric} alternate with J"
    sym = {"parallel": "parallel band Σ–Σ (P, R; Hönl–London J″+1, J″)",
           "perpendicular": "perpendicular band Π–Σ (P, Q, R; Hönl–London (J″+2)/2, (2J″+1)/2, "
                            "(J″−1)/2; ℓ-type doubling q)",
           "raman_rotational": "pure rotational Raman S(J) lines, Stokes and anti-Stokes "
                               "(Placzek–Teller factors)",
           "raman_vibrational": "vibrational Raman band O, Q, S (Placzek–Teller factors; isotropic "
                                "Q)"}[kind]
    extra = " and a Π–Π hot band" if any(s.spec.name == "hot" for s in states) else ""
    return (f"linear molecule {iso.name} ({mol.electronic_state} ground state): {sym}{extra}; "
            f"{spin}; term values F = G + B[J(J+1) − ℓ²] − D[J(J+1) − ℓ²]² ± q J(J+1)/2; "
            "constants by weighted linear least squares of the line positions")


def _row_info(st: BandState, i: int, counts) -> dict:
    k = int(st.idx[i])
    rep = int(st.reps[k])
    t = st.t
    label = label_list(st.spec, t)[rep].replace(" aS", "")
    if counts is not None and counts[k] > 1:
        label = label[:-1] + "ef"
    br = str(t.branch[rep])
    Jl = int(t.J_lower[rep])
    m = {"R": Jl + 1, "P": -Jl, "O": -Jl}.get(br, Jl)
    side = None
    if st.spec.process == "raman":
        side = "Stokes" if t.sign[rep] > 0 else "anti-Stokes"
        m = m if t.sign[rep] > 0 else -m
    return {"J_upper": int(t.J_upper[rep]), "J_lower": Jl, "label": label, "branch": br,
            "side": side, "m": m, "comp_upper": str(t.comp_upper[rep]),
            "comp_lower": str(t.comp_lower[rep])}


def _assignment_table(data, mol, kind, states, band_labels, locks):
    n = data.n
    rows = []
    lock_ids = {k for k, v in (locks or {}).items() if v and v.get("label") is not None}
    up, lo = band_labels or _LEVEL_NAMES[kind]
    names = {"fundamental": (up, lo), "rotational": (lo, lo), "hot": (f"{up} + bend", "bend")}
    vnum = {"raman_vibrational": (1, 0), "raman_rotational": (0, 0)}.get(kind)
    for i in range(n):
        row = {"line_id": data.ids[i], "position": data.x[i],
               "position_err": data.sigma[i] if data.sigma is not None else np.nan,
               "isotopologue": None, "band": None, "upper": None, "lower": None,
               "v_upper": pd.NA, "v_lower": pd.NA, "J_upper": pd.NA, "J_lower": pd.NA,
               "label": None, "branch": None, "side": None, "m": pd.NA, "comp_upper": None,
               "comp_lower": None, "calc": np.nan, "calc_err": np.nan, "outlier": False,
               "blended": False, "blend_with": None, "locked": data.ids[i] in lock_ids,
               "weight": 0.0}
        for st in states:
            if st.idx[i] >= 0:
                counts = getattr(st, "count", None)
                row.update(_row_info(st, i, counts))
                row.update(isotopologue=mol.main.name, band=st.spec.name,
                           upper=names[st.spec.name][0], lower=names[st.spec.name][1],
                           calc=st.calc[i], calc_err=st.calc_err[i], outlier=bool(st.outlier[i]),
                           blended=bool(st.blended[i]), blend_with=st.blend_with[i])
                if vnum:
                    row.update(v_upper=vnum[0], v_lower=vnum[1])
                if not (st.outlier[i] or st.blended[i]):
                    row["weight"] = 1.0 / data.sigma[i] ** 2 if data.sigma is not None else 1.0
                break
        rows.append(row)
    table = pd.DataFrame(rows)
    for c in ("v_upper", "v_lower", "J_upper", "J_lower", "m"):
        table[c] = pd.array(table[c].tolist(), dtype="Int64")
    table.insert(table.columns.get_loc("calc") + 2, "obs_minus_calc", table["position"] - table["calc"])
    return table


def _rot_temperature(data, st: BandState):
    """T_rot (K, stderr) from ln(area/strength) = a − (c₂/T) E″ (stimulated emission neglected)."""
    good = np.nonzero(st.good() & np.isfinite(data.area) & (data.area > 0))[0]
    if len(good) < 5:
        return None
    reps = st.reps[st.idx[good]]
    t = st.t
    from ._linear_model import Template

    sub = Template(*(getattr(t, f)[reps] for f in Template.__dataclass_fields__))
    E = lower_energy(st.spec, sub, st.values)
    y = np.log(data.area[good] / strength_factor(st.spec, sub, data.x[good]))
    sig = None
    if data.area_err is not None:
        s = data.area_err[good] / data.area[good]
        sig = s if np.all(np.isfinite(s) & (s > 0)) else None
    try:
        f = weighted_lstsq(np.column_stack([np.ones(len(E)), E]), y, sig)
    except SingularDesign:
        return None
    k = -float(f.beta[1])
    if not k > 0:
        return None
    return C2 / k, C2 * float(f.stderr[1]) / k**2


def _constants(data, mol, kind, states, msgs):
    rows, covs = [], {}
    for st in states:
        name = st.spec.name

        def add(nm, v, e, unit="cm-1", name=name):
            rows.append({"isotopologue": mol.main.name, "band": name, "name": nm, "value": float(v),
                         "stderr": float(e), "unit": unit})

        fit = st.fit
        vals = fit.values
        for nm in st.spec.names:
            if nm in fit.fixed:
                continue
            add(nm, vals[nm], fit.stderr(nm))
        if "zero_offset" in fit.fixed:
            msgs.append(f"{name} band: lines on one side of the laser line only, so the zero of "
                        "the Raman-shift axis is taken as exact (not fitted)")
        elif fit.fixed:
            msgs.append(f"{name} band: {', '.join(fit.fixed)} not determined by the assigned lines; "
                        "held at 0" + ("; B_upper is then the e-level value B′ + q′/2"
                                       if "q_upper" in fit.fixed and st.spec.upper.l else ""))
        if st.spec.lower.l >= 1 and "q_lower" in fit.names and mol.main.statistics.ratio == 1.0:
            msgs.append(f"{name} band: P and R lines do not tell the e from the f component of a "
                        "level; the e component is taken as the upper one (q > 0)")
        covs[name] = pd.DataFrame(fit.fit.cov, index=list(fit.names), columns=list(fit.names))
        good = st.good()
        add("n_lines", int(good.sum()), np.nan, "1")
        r = data.x[good] - st.calc[good]
        add("rms", float(np.sqrt(np.mean(r**2))) if len(r) else np.nan, np.nan)
        tr = _rot_temperature(data, st)
        if tr is not None:
            add("T_rot", tr[0], tr[1], "K")
        if kind == "raman_vibrational" and mol.diatomic and name == "fundamental":
            for nm, v, e, u in equilibrium_constants(fit, 1, 0, mol.main.reduced_mass):
                add(nm, v, e, u)
        if kind == "raman_rotational" and mol.diatomic and vals["B"] > 0:
            from .bandfit import R_E_CONSTANT

            r0 = float(np.sqrt(R_E_CONSTANT / (mol.main.reduced_mass * vals["B"])))
            add("r_0", r0, 0.5 * r0 * fit.stderr("B") / vals["B"], "Å")
            msgs.append("r_0 is the bond length of the ground vibrational level (from B_0), not r_e")
    if not mol.diatomic:
        msgs.append(f"no bond length: {mol.main.name} has {len(mol.atoms) - 1} bond lengths and one "
                    "B gives one moment of inertia; the B of several isotopologues are needed "
                    "(a substitution structure)")
    return rows, covs


def _raman_temperature(data, kind, states, nu0, detector, rows, msgs, mol):
    if kind not in ("raman_rotational", "raman_vibrational"):
        return
    if nu0 is None or detector is None:
        msgs.append("no Stokes/anti-Stokes temperature: it needs the laser wavenumber (from "
                    "to_raman_shift or the file) and detector='energy' or 'photon_counting'")
        return
    st = states[0]
    pairs: dict = {}
    area_err = data.area_err
    for i in np.nonzero(st.good() & np.isfinite(data.area) & (data.area > 0))[0]:
        info = _row_info(st, i, None)
        if kind == "raman_rotational":
            pairs.setdefault(info["label"], {})[info["side"]] = i
    if kind == "raman_vibrational":
        q = np.nonzero((st.idx >= 0) & (data.x > 0))[0]
        q = [i for i in q if _row_info(st, i, None)["branch"] == "Q"]
        nu = st.values["band_origin"]
        tol = 3 * max(float(np.nanmedian(data.fwhm)) if data.fwhm is not None else 0.0, 1.0)
        anti = np.nonzero((st.idx < 0) & (np.abs(data.x + nu) <= tol))[0]
        if q and len(anti):
            pairs = {"Q": {"Stokes": q, "anti-Stokes": list(anti)}}
    keys = [k for k, v in pairs.items() if len(v) == 2]
    if not keys:
        msgs.append("no Stokes/anti-Stokes pairs of one transition were assigned: no temperature")
        return
    d, s, a, es, ea = [], [], [], [], []
    for k in keys:
        si, ai = np.atleast_1d(pairs[k]["Stokes"]), np.atleast_1d(pairs[k]["anti-Stokes"])
        d.append(st.values["band_origin"] if kind == "raman_vibrational"
                 else float(np.mean(np.abs(st.calc[np.r_[si, ai]] - st.values["zero_offset"]))))
        s.append(float(np.sum(data.area[si])))
        a.append(float(np.sum(data.area[ai])))
        if area_err is not None:
            es.append(float(np.sqrt(np.sum(area_err[si] ** 2))))
            ea.append(float(np.sqrt(np.sum(area_err[ai] ** 2))))
    try:
        res = stokes_anti_stokes_temperature(d, s, a, excitation_wavenumber=nu0, detector=detector,
                                             stokes_err=es or None, anti_stokes_err=ea or None)
    except Exception as exc:  # an AssignmentError: say why and keep the rest
        msgs.append(f"no Stokes/anti-Stokes temperature: {exc}")
        return
    rows.append({"isotopologue": mol.main.name, "band": st.spec.name, "name": "temperature",
                 "value": res.value, "stderr": res.stderr, "unit": "K"})
    msgs.append(f"temperature {res.value:.1f} ± {res.stderr:.1f} K from {res.n_pairs} Stokes/anti-"
                f"Stokes pair(s), {detector} detector (frequency factor ν^{res.exponent})")


def tables(data, mol, kind, states, msgs, *, temperature, excitation_wavenumber, detector,
           band_labels, locks, cls):
    """Build the :class:`~widgetkit.levels.linear_assign.LinearAssignment` of ``states``."""
    table = _assignment_table(data, mol, kind, states, band_labels, locks)
    rows, covs = _constants(data, mol, kind, states, msgs)
    _raman_temperature(data, kind, states, excitation_wavenumber, detector, rows, msgs, mol)
    consts = pd.DataFrame(rows, columns=["isotopologue", "band", "name", "value", "stderr", "unit"])
    reasons = []
    n = data.n
    good = int(sum(int(s.good().sum()) for s in states))
    main = states[0]
    if good < 0.6 * n:
        reasons.append(f"only {good} of {n} lines fit the model")
    if main.fit.fit.absolute and main.fit.fit.dof > 0 and np.sqrt(main.fit.fit.reduced_chi2) > 3:
        reasons.append(f"the {main.spec.name} band scatters {np.sqrt(main.fit.fit.reduced_chi2):.1f} "
                       "times its stated position errors")
    if int(main.good().sum()) < 8:
        reasons.append(f"only {int(main.good().sum())} lines define the {main.spec.name} band")
    if not main.spec.rotational and branch_balance(main) == 0:
        seen = ", ".join(sorted(branch_counts(main)))
        reasons.append(f"only the {seen} branch of the {main.spec.name} band is assigned (a partial "
                       "band): its J numbering rests on the line intensities alone")
    B = main.values.get("B", main.values.get("B_lower", 0.0))
    if not B > 0:
        reasons.append(f"B = {B:.4g} cm-1 is not positive")
    trot = consts[(consts["name"] == "T_rot") & (consts["band"] == main.spec.name)]
    if temperature is not None and len(trot):
        v, e = float(trot["value"].iloc[0]), float(trot["stderr"].iloc[0])
        if abs(v - temperature) > max(3 * e, 0.25 * temperature):
            reasons.append(f"the line areas give T_rot = {v:.0f} ± {e:.0f} K, not the "
                           f"{temperature:g} K given")
    left = table.loc[table["label"].isna(), "line_id"].tolist()
    if left:
        shown = ", ".join(map(str, left[:20])) + (", ..." if len(left) > 20 else "")
        msgs.append(f"{len(left)} {'line' if len(left) == 1 else 'lines'} left unassigned (other "
                    f"bands, isotopologues or impurities): line_id {shown}")
    for _, r in table[table["outlier"]].iterrows():
        msgs.append(f"line {r['line_id']} at {r['position']:.4f} cm-1 ({r['label']}, {r['band']}) is "
                    f"{r['obs_minus_calc']:+.4f} cm-1 from the fit: flagged as an outlier")
    msgs.append(f"{good} of {n} lines fitted ({', '.join(s.spec.name for s in states)} band"
                f"{'s' if len(states) > 1 else ''})")
    if reasons:
        msgs.append("DOUBTFUL: " + "; ".join(reasons))
    model = describe_model(mol, kind, states)
    msgs.insert(0, f"model: {model}")
    return cls(table, consts, covs, kind, model, msgs,
               "doubtful" if reasons else "ok", reasons, tuple(s.spec.name for s in states),
               max(s.rounds for s in states))
