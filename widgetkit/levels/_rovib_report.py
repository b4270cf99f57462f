"""Result tables of the rovibrational assignment (private)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._rovib_core import Lines, State
from ._rovib_hidden import hidden_neighbours
from ._rovib_hot_report import add_hot_bands
from ._rovib_joint import joint_constants
from .bandfit import combination_differences, equilibrium_constants, rotational_temperature
from .candidates import C2, band_label, format_label, honl_london, rotational_partition
from .plausibility import abundance_reason, expected_B, refuse_unresolved
from .terms import rot_term

__all__ = ["analyse", "refuse_unresolved_lines"]

#: the temperature given is a first guess (the band may be measured hotter or colder, as in a
#: series): only a rotational temperature more than this factor off it, and beyond 4σ, is doubtful
T_ROT_FACTOR = 2.0


def refuse_unresolved_lines(data: Lines, st: State | None, opts: dict) -> None:
    """Refuse lines as wide as the rotational spacing: before the assignment against the
    handbook spacing (when the molecule is there), after it against the fitted B′ + B″."""
    molecule, band = opts["molecule"], opts["band"]
    if st is None:
        lo, hi = expected_B(molecule.main, band[1]), expected_B(molecule.main, band[0])
        if lo is None or hi is None:
            spacing, source, sel = None, "", np.ones(data.n, dtype=bool)
        else:
            spacing = lo[0] + hi[0]
            source = f"B′ + B″ from the handbook B_e of {lo[1]}, scaled by mass"
            sel = np.ones(data.n, dtype=bool)
    else:
        mdl = st.models.get(st.seed_iso)
        if mdl is None:
            return
        spacing = mdl.values["B_upper"] + mdl.values["B_lower"]
        source = "B′ + B″ of the assigned lines"
        sel = st.iso != None  # noqa: E711
    fwhm = None
    if data.fwhm is not None:
        w = data.fwhm[sel]
        w = w[np.isfinite(w) & (w > 0)]
        fwhm = float(np.median(w)) if len(w) else None
    if spacing is not None:
        refuse_unresolved(spacing=spacing, resolution=opts.get("resolution"), fwhm=fwhm,
                          molecule=molecule, source=source, temperature=opts.get("temperature"))


def _fmt(v: float, e: float) -> str:
    return f"{v:.6g} ± {e:.2g}" if np.isfinite(e) else f"{v:.6g}"


def analyse(data: Lines, locks: dict, st: State, opts: dict, cls, hot: list | None = None):
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
    z = np.full(n, np.nan)
    for i in np.nonzero(assigned)[0]:
        m = st.models.get(st.iso[i])
        if m is not None:
            z[i] = (data.x[i] - st.calc[i]) / ((sig[i] if sig is not None else 1.0) * m.scatter)
    table = pd.DataFrame({
        "line_id": data.ids, "position": data.x,
        "position_err": sig if sig is not None else np.full(n, np.nan),
        "isotopologue": pd.array(st.iso.tolist(), dtype=object),
        "v_upper": vu, "v_lower": vl, "J_upper": ju, "J_lower": jl, "label": labels, "m": m_idx,
        "calc": st.calc, "calc_err": st.calc_err, "obs_minus_calc": data.x - st.calc,
        "normalised_residual": z, "outlier": st.outlier.copy(), "blended": st.blended.copy(),
        "blend_with": pd.array(st.blend_with.tolist(), dtype=object), "locked": locked,
        "weight": weight,
    })
    reasons = list(st.reasons)
    consts, covs, cd_rows, trot = [], {}, [], {}
    order = [i.name for i in molecule.isotopologues if i.name in st.models]
    hidden = (hidden_neighbours(data, st, good, molecule, band, order,
                                opts["temperature"] or 296.0, opts.get("resolution"))
              if opts.get("exclude_hidden", True) else {})
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
            fit_dof = bf.fit.dof
        elif mdl.kind == "offset":
            # one line and one parameter: nothing tests the fit, the error is unknown
            fit_dof = len(sel) - 1
            add("band_origin", mdl.values["band_origin"],
                float(np.sqrt(mdl.cov5[0, 0])) if fit_dof > 0 else np.nan)
            covs[name] = pd.DataFrame([[mdl.cov5[0, 0]]], index=["band_origin"], columns=["band_origin"])
            msgs.append(f"{name}: only the band origin was fitted ({len(sel)} "
                        f"{'line' if len(sel) == 1 else 'lines'}); B and D held "
                        f"at values scaled from {st.seed_iso}")
        if mdl.kind in ("fit", "offset") and fit_dof <= 0:
            reasons.append(f"{name}: as many lines ({len(sel)}) as fitted constants, so nothing "
                           "tests the fit and the standard errors are unknown (NaN)")
        if mdl.kind == "fit" and sig is not None and mdl.fit.fit.dof > 0 \
                and np.sqrt(mdl.fit.fit.reduced_chi2) > 3.0:
            reasons.append(f"{name}: the lines scatter {np.sqrt(mdl.fit.fit.reduced_chi2):.1f} times "
                           "their stated position errors about the band fit (more than 3): some "
                           "labels may be wrong, or the errors too small")
        if len(sel):
            r = data.x[sel] - st.calc[sel]
            add("n_lines", len(sel), np.nan, "1")
            add("rms", float(np.sqrt(np.mean(r**2))), np.nan)
        tsel = _clear_of(sel, hidden)
        E = rot_term(st.Jl[tsel], mdl.values["B_lower"], mdl.values["D_lower"])
        t = rotational_temperature(data.x[tsel], data.area[tsel],
                                   None if data.area_err is None else data.area_err[tsel],
                                   st.Ju[tsel], st.Jl[tsel], E,
                                   temperature_guess=opts["temperature"] or 300.0,
                                   outlier_sigma=opts["outlier_sigma"])
        if len(tsel) < len(sel):
            msgs.append(_hidden_message(name, sel, tsel, hidden, table))
        if t is not None:
            add("T_rot", t[0], t[1], "K")
            trot[name] = t[0]
            if t[3]:
                msgs.append(f"{name}: T_rot from {t[2]} line areas; {t[3]} "
                            f"{'area lies' if t[3] == 1 else 'areas lie'} off the Boltzmann plot "
                            f"beyond {opts['outlier_sigma']:g} times the expected scatter "
                            "(a partly blended line?) and were left out")
    joint = None
    if opts.get("joint"):
        joint = joint_constants(data, st, good, table, consts, covs, msgs, reasons, opts, order)
    _abundance(data, st, good & ~np.isin(np.arange(n), list(hidden)), molecule, order, trot, opts,
               consts, msgs, reasons)
    _temperature_reason(consts, order, opts, reasons)
    cd_cols = ["isotopologue", "state", "J", "lines", "value", "stderr", "calc", "obs_minus_calc"]
    c_cols = ["isotopologue", "name", "value", "stderr", "unit"]
    if hot:
        # with a hot band found, every row says its band
        label = band_label(*band)
        consts = [dict(c, band=label) for c in consts]
        cd_rows = [dict(r, band=label) for r in cd_rows]
        good = good | add_hot_bands(data, hot, table, consts, covs, cd_rows, msgs, reasons,
                                    opts)
        cd_cols, c_cols = cd_cols + ["band"], c_cols + ["band"]
    _report_flags(table, msgs, opts["outlier_sigma"])
    cd = pd.DataFrame(cd_rows, columns=cd_cols)
    cdf = pd.DataFrame(consts, columns=c_cols)
    msgs.append(f"{int(good.sum())} of {n} {'line' if n == 1 else 'lines'} fitted after "
                f"{st.rounds} {'round' if st.rounds == 1 else 'rounds'}")
    if good.sum() < 0.6 * n:
        reasons.append(
            f"only {int(good.sum())} of {n} lines fit; check the assignment, or lock two lines by "
            "hand with s.set_assignment(line_id, label='R(0)', isotopologue=...) and "
            "s.set_assignment(line_id, label='P(1)', isotopologue=...)")
    reasons = list(dict.fromkeys(reasons))
    msgs += [f"DOUBTFUL: {r}" for r in reasons]
    return cls(table, cdf, covs, cd, st.rounds, msgs, band, "doubtful" if reasons else "ok",
               reasons, opts["outlier_sigma"], joint)


def _clear_of(sel: np.ndarray, hidden: dict) -> np.ndarray:
    """``sel`` without the lines another line may hide in (all of ``sel`` when fewer than
    five would be left: the Boltzmann plot then keeps them, and says so)."""
    clear = sel[~np.isin(sel, list(hidden))]
    return clear if len(clear) >= 5 else sel


def _hidden_message(name, sel, tsel, hidden, table) -> str:
    out = [i for i in sel if i not in set(tsel.tolist())]
    shown = ", ".join(f"{table['label'].iloc[i]} ({hidden[i]})" for i in out[:6])
    more = f" and {len(out) - 6} more" if len(out) > 6 else ""
    return (f"{name}: T_rot and the area ratios leave out {len(out)} "
            f"{'line' if len(out) == 1 else 'lines'} that may hold an unresolved line of another "
            f"sub-band in their area: {shown}{more}")


def _abundance(data, st, good, molecule, order, trot, opts, consts, msgs, reasons):
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
        why = abundance_reason(name, main, r, er, nat)
        if why:
            reasons.append(why)


def _temperature_reason(consts, order, opts, reasons) -> None:
    """The rotational temperature of the main sub-band against the temperature given."""
    T = opts["temperature"]
    row = next((c for c in consts if order and c["isotopologue"] == order[0]
                and c["name"] == "T_rot"), None)
    if T is None or row is None:
        return
    t, e = row["value"], row["stderr"]
    if abs(np.log(t / T)) > np.log(T_ROT_FACTOR) and not (np.isfinite(e) and abs(t - T) <= 4 * e):
        reasons.append(f"{order[0]}: the rotational temperature from the areas, {_fmt(t, e)} K, "
                       f"disagrees with the {T:g} K given: the J numbering or the areas may be "
                       "wrong")


def _report_flags(table: pd.DataFrame, msgs: list, outlier_sigma: float) -> None:
    for _, row in table[table["outlier"]].iterrows():
        z = row["obs_minus_calc"]
        msgs.append(f"line {row['line_id']} at {row['position']:.4f} cm-1 ({row['label']} of "
                    f"{row['isotopologue']}) is {z:+.4f} cm-1 from the fit "
                    f"({row['normalised_residual']:+.1f} times the expected scatter, beyond "
                    f"{outlier_sigma:g}): flagged as an outlier and left out of the fit"
                    + (" (locked: its label is kept)" if row["locked"] else ""))
    for _, row in table[table["blended"]].iterrows():
        msgs.append(f"line {row['line_id']} at {row['position']:.4f} cm-1 ({row['label']} of "
                    f"{row['isotopologue']}) is blended with {row['blend_with']}: left out of the fits")
    un = table[table["isotopologue"].isna()]
    if len(un):
        ids = ", ".join(str(v) for v in un["line_id"].tolist()[:20])
        msgs.append(f"{len(un)} {'line' if len(un) == 1 else 'lines'} unassigned "
                    f"(line_id {ids}{', ...' if len(un) > 20 else ''})")
