"""Predict -> match -> refit rounds of the rovibrational assignment (private)."""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment

from ..errors import AssignmentError
from ._lsq import robust_scale
from ._rovib_core import _BIG, Lines, Model, State, fit_model
from ._seed import scaled_band_constants
from .candidates import format_label

__all__ = ["match", "refine", "locate_isotopologue"]

#: predictions reach this many J beyond the highest J assigned so far (the band grows by rounds)
_GROW = 3
#: most a sub-band's departure from natural abundance costs a hypothesis, in lines
_ABUNDANCE_CAP = 8.0


def _predictions(models: dict, lo: float, hi: float, frac: float):
    iso_l, ju_l, jl_l, c_l, e_l, w_l, a_l = [], [], [], [], [], [], []
    for iso, mdl in models.items():
        J = np.arange(0, mdl.jmax + 1)
        for Ju, Jl in ((J + 1, J), (J[1:] - 1, J[1:])):
            c, e = mdl.predict(Ju, Jl)
            d = np.abs(np.diff(c))
            sp = np.minimum(np.r_[np.inf, d], np.r_[d, np.inf])
            inside = (c >= lo) & (c <= hi)
            iso_l += [iso] * int(inside.sum())
            ju_l.append(Ju[inside])
            jl_l.append(Jl[inside])
            c_l.append(c[inside])
            e_l.append(e[inside])
            w_l.append(frac * sp[inside])
            a_l.append(mdl.log_area(Ju[inside], Jl[inside], c[inside]))
    cat = lambda a, t: np.concatenate(a).astype(t) if a else np.zeros(0, t)  # noqa: E731
    return (np.array(iso_l, dtype=object), cat(ju_l, int), cat(jl_l, int), cat(c_l, float),
            cat(e_l, float), cat(w_l, float), cat(a_l, float))


def _obs_sigma(data: Lines, models: dict, iso_of_pred: np.ndarray, rows: np.ndarray) -> np.ndarray:
    """σ of observed lines (rows) against each prediction's isotopologue scale."""
    scale = np.array([models[i].scatter for i in iso_of_pred]) if len(iso_of_pred) else np.zeros(0)
    if data.sigma is None:
        return np.broadcast_to(scale, (len(rows), len(scale)))
    return data.sigma[rows][:, None] * scale[None, :]


def _tracking_models(models: dict, seed_iso: str, mu: dict | None, band) -> dict:
    """Prediction models: the seed's own fit, and for every other sub-band the seed's constants
    scaled by mass with that sub-band's own band origin. Extrapolation errors of the seed are then
    shared by its partners, so close isotopologue pairs keep their order at high J."""
    if mu is None or seed_iso not in models:
        return models
    seed = models[seed_iso]
    out = {}
    for name, mdl in models.items():
        if name == seed_iso or mdl.kind == "scaled":
            out[name] = mdl
            continue
        vals, _ = scaled_band_constants(seed.values, band[0], band[1],
                                        float(np.sqrt(mu[seed_iso] / mu[name])))
        vals["band_origin"] = mdl.values["band_origin"]
        cov = seed.cov5.copy()
        cov[0, 0] += mdl.cov5[0, 0]
        out[name] = Model(vals, cov, "tracking", mdl.scatter, mdl.floor, None, "tracking",
                          mdl.jmax, name, mdl.intensity)
    return out


def match(data: Lines, locks: dict, models: dict, frac: float, seed_iso: str,
          mu: dict | None = None, band=(1, 0)) -> State:
    """One optimal matching of observed lines to the predictions of ``models``."""
    n = data.n
    pad = 1.0
    lo, hi = float(data.x.min()) - pad, float(data.x.max()) + pad
    tm = _tracking_models(models, seed_iso, mu, band)
    piso, pju, pjl, pc, pe, pw, pla = _predictions(tm, lo, hi, frac)
    psa = np.array([tm[i].intensity[2] if tm[i].intensity else np.nan for i in piso], dtype=float)
    fixed = {i: v for i, v in locks.items() if v[1] is not None}
    taken = {(v[0], v[1], v[2]) for v in fixed.values()}
    keep = np.array([(piso[k], pju[k], pjl[k]) not in taken for k in range(len(pc))], dtype=bool)
    piso, pju, pjl, pc, pe, pw = piso[keep], pju[keep], pjl[keep], pc[keep], pe[keep], pw[keep]
    pla, psa = pla[keep], psa[keep]
    rows = np.array([i for i in range(n) if i not in fixed], dtype=int)
    iso = np.full(n, None, dtype=object)
    Ju = np.full(n, -1)
    Jl = np.full(n, -1)
    for i, (li, lju, ljl) in fixed.items():
        iso[i], Ju[i], Jl[i] = li, lju, ljl
    if len(rows) and len(pc):
        so = _obs_sigma(data, models, piso, rows)
        diff = data.x[rows][:, None] - pc[None, :]
        var = so**2 + pe[None, :] ** 2 + 1e-300
        # Gaussian negative log-likelihood: a vague prediction does not win over a sharp one
        cost = diff**2 / var + np.log(var)
        allowed = np.abs(diff) <= pw[None, :]
        # areas: a line far stronger or weaker than its sub-band's Boltzmann envelope expects
        # (beyond a factor 10) is not that line; closer ones add to the cost
        with np.errstate(divide="ignore", invalid="ignore"):
            dla = np.log(data.area[rows])[:, None] - pla[None, :]
        have = np.isfinite(dla)
        allowed &= ~have | (np.abs(dla) <= np.log(10.0))
        cost = cost + np.where(have, (dla / np.where(np.isfinite(psa), psa, 1.0)[None, :]) ** 2, 0.0)
        for k, r in enumerate(rows):
            if r in locks and locks[r][1] is None:
                allowed[k] &= piso == locks[r][0]
        cost = np.where(allowed, np.minimum(cost, 1e9), _BIG)
        ri, ci = linear_sum_assignment(cost)
        ok = cost[ri, ci] < _BIG
        for r, c in zip(rows[ri[ok]], ci[ok], strict=True):
            iso[r], Ju[r], Jl[r] = piso[c], pju[c], pjl[c]
        matched_pred = np.zeros(len(pc), dtype=bool)
        matched_pred[ci[ok]] = True
    else:
        matched_pred = np.zeros(len(pc), dtype=bool)
    st = State(iso=iso, Ju=Ju, Jl=Jl, calc=np.full(n, np.nan), calc_err=np.full(n, np.nan),
               outlier=np.zeros(n, dtype=bool), blended=np.zeros(n, dtype=bool),
               blend_with=np.full(n, None, dtype=object), models=dict(models), seed_iso=seed_iso)
    # only predictions within the J range seen so far can hide in another line
    seen = np.array([pjl[k] <= models[piso[k]].jmax - _GROW for k in range(len(pc))], dtype=bool)
    un = ~matched_pred & seen
    _mark_blends(data, st, models, fixed, piso[un], pju[un], pjl[un], pc[un], pe[un], pw[un])
    return st


def _mark_blends(data, st, models, fixed, piso, pju, pjl, pc, pe, pw):
    # lines of sub-bands being predicted; a line locked with a label is never a blend (when a
    # prediction of another label agrees with it better, the lock disagrees with the band and
    # the fit flags it an outlier)
    asg = np.array([i for i in np.nonzero(st.iso != None)[0]  # noqa: E711
                    if st.iso[i] in models and i not in fixed], dtype=int)
    if not len(asg) or not len(pc):
        return
    xa = data.x[asg]
    order = np.argsort(xa, kind="stable")
    xs = xa[order]
    k = np.clip(np.searchsorted(xs, pc), 1, max(len(xs) - 1, 1))
    lo = np.clip(k - 1, 0, len(xs) - 1)
    hi = np.clip(k, 0, len(xs) - 1)
    j = np.where(np.abs(xs[lo] - pc) <= np.abs(xs[hi] - pc), lo, hi)
    o = asg[order[j]]
    scale = np.array([models[i].scatter for i in st.iso[o]])
    so = (data.sigma[o] if data.sigma is not None else 1.0) * scale
    half = 0.5 * data.fwhm[o] if data.fwhm is not None else np.zeros(len(o))
    half = np.where(np.isfinite(half), half, 0.0)
    thr = np.minimum(np.maximum(4 * np.hypot(so, pe), half), pw)
    for p in np.nonzero(np.abs(xs[j] - pc) <= thr)[0]:
        oi = o[p]
        st.blended[oi] = True
        other = f"{format_label(pju[p], pjl[p])} of {piso[p]}"
        st.blend_with[oi] = other if st.blend_with[oi] is None else f"{st.blend_with[oi]}; {other}"


def locate_isotopologue(data: Lines, st: State, seed: Model, seed_mu: float, iso, band, opts):
    """Locate a further sub-band by mass scaling from the seed and an offset search.

    Returns (Model or None, message or None).
    """
    rho = float(np.sqrt(seed_mu / iso.reduced_mass))
    vals, anh = scaled_band_constants(seed.values, band[0], band[1], rho)
    J = np.arange(0, seed.jmax + 1)
    probe = Model(vals, np.zeros((5, 5)), "scaled", seed.scatter, 0.0, None, "scaled", seed.jmax)
    cR, _ = probe.predict(J + 1, J)
    cP, _ = probe.predict(J[1:] - 1, J[1:])
    calc0 = np.r_[cR, cP]
    free = np.nonzero((st.iso == None) | st.outlier)[0]  # noqa: E711
    if len(free) < 3:
        return None, f"no lines left for {iso.name} (expected near {vals['band_origin']:.2f} cm-1)"
    xf = np.sort(data.x[free])
    sig = float(np.median(data.sigma)) * seed.scatter if data.sigma is not None else seed.scatter
    spacing = vals["B_upper"] + vals["B_lower"]
    # a seed may mix lines of two comparably abundant sub-bands: then allow offsets up to the
    # isotope shift itself
    seed_ab = max(i.abundance for i in opts["molecule"].isotopologues if i.name == st.seed_iso)
    shift = abs(vals["band_origin"] - seed.values["band_origin"])
    mixable = iso.abundance >= 0.1 * seed_ab
    W = min(0.45 * spacing, max(2 * abs(anh), 10 * sig, 0.02, 1.2 * shift if mixable else 0.0))
    tol = max(3 * sig, 0.01 * spacing)
    deltas = []
    for c in calc0:
        a, b = np.searchsorted(xf, [c - W, c + W])
        deltas.extend((xf[a:b] - c).tolist())
    if not deltas:
        return None, (f"no lines of {iso.name} found near the predicted sub-band "
                      f"(origin {vals['band_origin']:.2f} cm-1)")
    deltas = np.unique(np.round(np.array(deltas), 12))
    counts = np.empty(len(deltas), dtype=int)
    for k, d in enumerate(deltas):
        s = calc0 + d
        i = np.clip(np.searchsorted(xf, s), 1, len(xf) - 1)
        near = np.minimum(np.abs(xf[i] - s), np.abs(xf[i - 1] - s))
        counts[k] = int(np.sum(near <= tol))
    best = int(counts.max())
    if best < 3:
        return None, (f"no sub-band of {iso.name} found: at most {best} lines near the prediction "
                      f"scaled from {st.seed_iso} (origin {vals['band_origin']:.2f} cm-1)")
    top = deltas[counts == best]
    if best >= 5 and np.ptp(top) > 2 * tol and opts.get("hot_bands"):
        # lines of a hot band may lie where the sub-band is sought: it is left out now (the
        # band is refined again without the hot band's lines, :mod:`._rovib_hot`)
        return None, (f"the sub-band of {iso.name} fits {best} lines at offsets "
                      f"{top.min():+.3f} and {top.max():+.3f} cm-1 from its mass-scaled "
                      "prediction (lines of a hot band may lie there): left unassigned")
    if best >= 5 and np.ptp(top) > 2 * tol:
        st.ambiguous.append(
            f"ambiguous isotopologue split: the sub-band of {iso.name} fits {best} lines at offsets "
            f"{top.min():+.3f} and {top.max():+.3f} cm-1 from its mass-scaled prediction; lock one "
            f"of its lines by hand, e.g. s.set_assignment(line_id, isotopologue='{iso.name}', "
            "label='R(0)')")
    d = float(top[np.argmin(np.abs(top))])
    vals = dict(vals, band_origin=vals["band_origin"] + d)
    return Model(vals, np.zeros((5, 5)), "scaled", seed.scatter, tol / 2, None, "scaled",
                 seed.jmax), None


def _fit_all(data, locks, st: State, opts):
    models, msgs = {}, []
    for iso_name, mdl in st.models.items():
        sel = np.nonzero((st.iso == iso_name) & ~st.blended)[0]
        try:
            new, out, msg = fit_model(
                st.Ju[sel], st.Jl[sel], data.x[sel], None if data.sigma is None else data.sigma[sel],
                centrifugal=opts["centrifugal"], outlier_sigma=opts["outlier_sigma"],
                fixed=mdl, allow_offset=iso_name != st.seed_iso,
                start=_far_locks(data, locks, st, sel, mdl, opts["match_fraction"]))
        except AssignmentError:
            if iso_name == st.seed_iso:
                raise
            msgs.append(f"{iso_name}: too few lines ({len(sel)}) to fit; left unassigned")
            st.iso[sel] = None
            st.Ju[sel] = st.Jl[sel] = -1
            st.blended[sel] = False
            continue
        if msg:
            msgs.append(f"{iso_name}: {msg}")
        st.outlier[sel] = out
        new.intensity = _intensity_model(data, st, sel[~out], new)
        new.jmax = int(max(st.Jl[sel].max(initial=0), st.Ju[sel].max(initial=0))) + _GROW
        models[iso_name] = new
    for iso_name, m in models.items():
        sel = np.nonzero(st.iso == iso_name)[0]
        if len(sel):
            st.calc[sel], st.calc_err[sel] = m.predict(st.Ju[sel], st.Jl[sel])
    st.models = models
    return msgs


def _far_locks(data: Lines, locks: dict, st: State, sel: np.ndarray, mdl: Model,
               frac: float) -> np.ndarray:
    """Locked lines further from their predicted positions than any unlocked line may be matched
    (``frac`` of the spacing): they start the fit left out, so that they cannot bend it (with few
    lines a bent fit hides its own outlier); the fit admits them again if they agree."""
    lk = np.array([i in locks and locks[i][1] is not None for i in sel], dtype=bool)
    if not lk.any():
        return lk
    calc, _ = mdl.predict(st.Ju[sel], st.Jl[sel])
    spacing = abs(mdl.values["B_upper"] + mdl.values["B_lower"])
    return lk & (np.abs(data.x[sel] - calc) > frac * spacing)


def _intensity_model(data: Lines, st: State, sel: np.ndarray, mdl: Model):
    """ln(area/(ν L)) = a + b E″ fitted to a sub-band's good lines (None if not determined)."""
    a = data.area[sel]
    ok = np.isfinite(a) & (a > 0)
    if ok.sum() < 5:
        return None
    sel = sel[ok]
    J = st.Jl[sel].astype(float)
    E = mdl.values["B_lower"] * J * (J + 1) - mdl.values["D_lower"] * (J * (J + 1)) ** 2
    L = np.where(st.Ju[sel] > st.Jl[sel], J + 1.0, J)
    y = np.log(data.area[sel] / (data.x[sel] * L))
    A = np.column_stack([np.ones(len(E)), E])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    if not coef[1] < 0:
        return None
    return float(coef[0]), float(coef[1]), max(0.3, 1.5 * robust_scale(y - A @ coef))


def _score(data: Lines, st: State, molecule, band) -> float:
    good = (st.iso != None) & ~st.outlier & ~st.blended  # noqa: E711
    score = float(good.sum()) - 0.5 * float(st.outlier.sum())
    ab = {i.name: i.abundance for i in molecule.isotopologues}
    # prior: the strongest sub-band is most likely the most abundant isotopologue
    score -= 2.0 * float(np.log(max(ab.values()) / ab[st.seed_iso]))
    lab = {}
    for i in np.nonzero(good & np.isfinite(data.area) & (data.area > 0))[0]:
        lab.setdefault(st.iso[i], {})[(int(st.Ju[i]), int(st.Jl[i]))] = data.area[i]
    seed = st.models.get(st.seed_iso)
    mu = {i.name: i.reduced_mass for i in molecule.isotopologues}
    for iso_name, mdl in st.models.items():
        if iso_name == st.seed_iso or seed is None or mdl.kind == "scaled":
            continue
        # the fitted origin shift must agree with mass scaling (sign and size)
        rho = float(np.sqrt(mu[st.seed_iso] / mu[iso_name]))
        pred, anh = scaled_band_constants(seed.values, band[0], band[1], rho)
        want = pred["band_origin"] - seed.values["band_origin"]
        got = mdl.values["band_origin"] - seed.values["band_origin"]
        tol = 0.25 * abs(want) + abs(anh) + 3 * float(np.sqrt(mdl.cov5[0, 0] + seed.cov5[0, 0])) + 1e-9
        score -= min(((got - want) / tol) ** 2, 50.0)
    ref = lab.get(st.seed_iso, {})
    for iso_name, d in lab.items():
        if iso_name == st.seed_iso:
            continue
        common = sorted(set(d) & set(ref))
        if len(common) >= 2:
            r = sum(d[k] for k in common) / sum(ref[k] for k in common)
            z = np.log(r / (ab[iso_name] / ab[st.seed_iso])) / 0.35
            # capped below the worth of a few lines: an enriched sample must not lose a sub-band
            # to a hypothesis that leaves its lines unassigned (the plausibility check reports it)
            score -= min(float(z**2), _ABUNDANCE_CAP)
    return score


def refine(data: Lines, locks: dict, models0: dict, seed_iso: str, opts: dict, *,
           max_rounds: int, min_rounds: int) -> State:
    """Iterate predict -> match -> refit from the seed sub-band until the assignment is stable."""
    molecule = opts["molecule"]
    isos = {i.name: i for i in molecule.isotopologues}
    models = {seed_iso: models0[seed_iso]}
    prev, st, notes = None, None, {}
    ambiguous: list = []
    r = 0
    for r in range(1, max(1, max_rounds) + 1):
        mu = {name: iso.reduced_mass for name, iso in isos.items()}
        st = match(data, locks, models, opts["match_fraction"], seed_iso, mu, opts["band"])
        st.ambiguous = ambiguous
        added = False
        for name, iso in isos.items():
            if name in models:
                continue
            mdl, note = locate_isotopologue(data, st, models[seed_iso],
                                            isos[seed_iso].reduced_mass, iso, opts["band"], opts)
            if mdl is not None:
                models[name] = mdl
                added = True
                notes.pop(name, None)
            else:
                notes[name] = note
        if added:
            st = match(data, locks, models, opts["match_fraction"], seed_iso, mu, opts["band"])
            st.ambiguous = ambiguous
        msgs = _fit_all(data, locks, st, opts)
        models = dict(st.models)
        sig = st.signature
        st.messages = msgs
        if sig == prev and r >= min_rounds:
            break
        prev = sig
    st.rounds = r
    st.messages = st.messages + [n for n in notes.values() if n]
    st.score = _score(data, st, molecule, opts["band"])
    return st
