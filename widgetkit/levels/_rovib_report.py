"""Result tables of the rovibrational assignment (private)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._rovib_core import Lines, State
from .bandfit import combination_differences, equilibrium_constants, rotational_temperature
from .candidates import C2, format_label, honl_london, rotational_partition
from .terms import rot_term

__all__ = ["analyse"]


def _fmt(v: float, e: float) -> str:
    return f"{v:.6g} ± {e:.2g}" if np.isfinite(e) else f"{v:.6g}"


def analyse(data: Lines, locks: dict, st: State, opts: dict, cls):
    molecule = opts["molecule"]
    band = opts["band"]
    msgs = list(data.messages) + list(st.messages)
    n = data.n
    assigned = st.iso != None  # noqa: E711
    good = assigned & ~st.outlier & ~st.blended
    locked = np.array([i in locks and locks[i][1] is not None for i in range(n)], dtype=bool)
    sig = data.sigma
    weight = np.zeros(n)
    for i in np.nonzero(good)[0]:
        m = st.models.get(st.iso[i])
        if m is not None and m.kind != "scaled":
            weight[i] = 1.0 / sig[i] ** 2 if sig is not None else 1.0
    ju = pd.array(np.where(assigned, st.Ju, 0), dtype="Int64")
    jl = pd.array(np.where(assigned, st.Jl, 0), dtype="Int64")
    ju[~assigned] = pd.NA
    jl[~assigned] = pd.NA
    vu = pd.array(np.full(n, band[0]), dtype="Int64")
    vl = pd.array(np.full(n, band[1]), dtype="Int64")
    vu[~assigned] = pd.NA
    vl[~assigned] = pd.NA
    labels = [format_label(st.Ju[i], st.Jl[i]) if assigned[i] else None for i in range(n)]
    m_idx = pd.array(np.where(st.Ju > st.Jl, st.Jl + 1, -st.Jl), dtype="Int64")
    m_idx[~assigned] = pd.NA
    table = pd.DataFrame({
        "line_id": data.ids, "position": data.x,
        "position_err": sig if sig is not None else np.full(n, np.nan),
        "isotopologue": pd.array(st.iso.tolist(), dtype=object),
        "v_upper": vu, "v_lower": vl, "J_upper": ju, "J_lower": jl, "label": labels, "m": m_idx,
        "calc": st.calc, "calc_err": st.calc_err, "obs_minus_calc": data.x - st.calc,
        "outlier": st.outlier.copy(), "blended": st.blended.copy(),
        "blend_with": pd.array(st.blend_with.tolist(), dtype=object), "locked": locked,
        "weight": weight,
    })
    consts, covs, cd_rows, trot = [], {}, [], {}
    order = [i.name for i in molecule.isotopologues if i.name in st.models]
    for name in order:
        mdl = st.models[name]
        iso = molecule.isotopologue(name)
        sel = np.nonzero(good & (st.iso == name))[0]
        add = lambda nm, v, e, u="cm-1", name=name: consts.append(  # noqa: E731
            {"isotopologue": name, "name": nm, "value": float(v), "stderr": float(e), "unit": u})
        if mdl.kind == "fit":
            bf = mdl.fit
            for k in ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower"):
                if k.startswith("D") and bf.centrifugal == "none":
                    continue
                add(k, bf.values[k], bf.stderr_of(k))
            covs[name] = pd.DataFrame(bf.fit.cov, index=list(bf.names), columns=list(bf.names))
            for nm, v, e, u in equilibrium_constants(bf, band[0], band[1], iso.reduced_mass):
                add(nm, v, e, u)
            rows, cdc = combination_differences(st.Ju[sel], st.Jl[sel], data.x[sel],
                                                None if sig is None else sig[sel], bf)
            cd_rows += [dict(r, isotopologue=name) for r in rows]
            for nm, v, e, u in cdc:
                add(nm, v, e, u)
                if nm.endswith("_cd_diff") and np.isfinite(e) and e > 0:
                    msgs.append(f"{name}: {nm[:-8]} from combination differences minus full fit = "
                                f"{_fmt(v, e)} cm-1 ({abs(v) / e:.1f}σ)")
        elif mdl.kind == "offset":
            add("band_origin", mdl.values["band_origin"], float(np.sqrt(mdl.cov5[0, 0])))
            covs[name] = pd.DataFrame([[mdl.cov5[0, 0]]], index=["band_origin"], columns=["band_origin"])
            msgs.append(f"{name}: only the band origin was fitted ({len(sel)} "
                        f"{'line' if len(sel) == 1 else 'lines'}); B and D held "
                        f"at values scaled from {st.seed_iso}")
        if len(sel):
            r = data.x[sel] - st.calc[sel]
            add("n_lines", len(sel), np.nan, "1")
            add("rms", float(np.sqrt(np.mean(r**2))), np.nan)
        E = rot_term(st.Jl[sel], mdl.values["B_lower"], mdl.values["D_lower"])
        t = rotational_temperature(data.x[sel], data.area[sel],
                                   None if data.area_err is None else data.area_err[sel],
                                   st.Ju[sel], st.Jl[sel], E,
                                   temperature_guess=opts["temperature"] or 300.0)
        if t is not None:
            add("T_rot", t[0], t[1], "K")
            trot[name] = t[0]
    _abundance(data, st, good, molecule, order, trot, opts, consts, msgs)
    _report_flags(table, msgs)
    cd = pd.DataFrame(cd_rows, columns=["isotopologue", "state", "J", "lines", "value", "stderr",
                                        "calc", "obs_minus_calc"])
    cdf = pd.DataFrame(consts, columns=["isotopologue", "name", "value", "stderr", "unit"])
    msgs.append(f"{int(good.sum())} of {n} {'line' if n == 1 else 'lines'} fitted after "
                f"{st.rounds} {'round' if st.rounds == 1 else 'rounds'}")
    seed = st.models.get(st.seed_iso)
    birge = (float(np.sqrt(seed.fit.fit.reduced_chi2))
             if seed is not None and seed.fit is not None and sig is not None
             and seed.fit.fit.dof > 0 else np.nan)
    if good.sum() < 0.6 * n or (np.isfinite(birge) and birge > 3.0):
        msgs.append(
            f"DOUBTFUL: only {int(good.sum())} of {n} lines fit"
            + (f" and the strongest sub-band scatters {birge:.1f} times its stated errors"
               if np.isfinite(birge) and birge > 3.0 else "")
            + "; check the assignment, or lock two lines by hand with "
            "s.set_assignment(line_id, label='R(0)') and s.set_assignment(line_id, label='P(1)')")
    return cls(table, cdf, covs, cd, st.rounds, msgs, band)


def _abundance(data, st, good, molecule, order, trot, opts, consts, msgs):
    if len(order) < 2 or not np.any(np.isfinite(data.area) & (data.area > 0)):
        return
    main = order[0]
    T = trot.get(main) or opts["temperature"] or 296.0
    scale = {}
    for name in order:
        mdl = st.models[name]
        sel = np.nonzero(good & (st.iso == name) & np.isfinite(data.area) & (data.area > 0))[0]
        if len(sel) < 2 or not mdl.values["B_lower"] > 0:
            continue
        nu = data.x[sel]
        E = rot_term(st.Jl[sel], mdl.values["B_lower"], mdl.values["D_lower"])
        S = (nu * honl_london(st.Ju[sel], st.Jl[sel]) * np.exp(-C2 * E / T) * -np.expm1(-C2 * nu / T)
             / rotational_partition(mdl.values["B_lower"], mdl.values["D_lower"], T))
        A = data.area[sel]
        s = float(np.sum(A * S) / np.sum(S * S))
        var = float(np.sum((A - s * S) ** 2) / (len(sel) - 1) / np.sum(S * S))
        scale[name] = (s, np.sqrt(var))
    if main not in scale:
        return
    s0, e0 = scale[main]
    ab0 = molecule.isotopologue(main).abundance
    for name, (s, e) in scale.items():
        if name == main:
            continue
        r = s / s0
        er = r * np.hypot(e / s, e0 / s0)
        consts.append({"isotopologue": name, "name": "abundance_ratio", "value": r, "stderr": er,
                       "unit": "1"})
        nat = molecule.isotopologue(name).abundance / ab0
        msgs.append(f"{name}: area ratio to {main} (Boltzmann- and Hönl–London-corrected at "
                    f"{T:.0f} K) {_fmt(r, er)}; natural abundance ratio {nat:.4g} (periodictable)")


def _report_flags(table: pd.DataFrame, msgs: list) -> None:
    for _, row in table[table["outlier"]].iterrows():
        z = row["obs_minus_calc"]
        msgs.append(f"line {row['line_id']} at {row['position']:.4f} cm-1 ({row['label']} of "
                    f"{row['isotopologue']}) is {z:+.4f} cm-1 from the fit: flagged as an outlier "
                    + ("(locked: kept in the fit)" if row["locked"] else "and left out of the fit"))
    for _, row in table[table["blended"]].iterrows():
        msgs.append(f"line {row['line_id']} at {row['position']:.4f} cm-1 ({row['label']} of "
                    f"{row['isotopologue']}) is blended with {row['blend_with']}: left out of the fits")
    un = table[table["isotopologue"].isna()]
    if len(un):
        ids = ", ".join(str(v) for v in un["line_id"].tolist()[:20])
        msgs.append(f"{len(un)} {'line' if len(un) == 1 else 'lines'} unassigned "
                    f"(line_id {ids}{', ...' if len(un) > 20 else ''})")
