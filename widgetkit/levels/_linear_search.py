"""Finding and refining one band of a linear molecule among observed lines (private).

1. **Search.** The band's lines (selection rules and spin statistics of the molecule:
   for ¹⁶O¹²C¹⁶O every other J is missing, so its lines are 4B apart) are predicted
   with B′ = B″ = B for low J, where B′ ≠ B″ hardly matters. B runs over a grid
   around (observed spacing of the strongest lines) / (the band's spacing in units of
   B); for each B the band origin ν₀ comes from the offsets between strong observed
   lines and the predicted lines nearest the intensity maximum. A hypothesis scores
   the predicted lines that have an observed line within a quarter of the spacing,
   less half those that have none.
2. **Refine.** From each of the best hypotheses: predict (lines up to a J a little
   beyond those assigned so far), match (optimal assignment on ((obs − calc)/σ)²
   within a fraction of the local spacing; once a Boltzmann envelope is known, a line
   more than 10× stronger or weaker than expected cannot take a place), fit (weighted
   linear least squares with outlier rejection), grow; until nothing changes. Lines
   an unmatched prediction also explains are blends, kept but left out of the fit;
   e and f lines closer than a line width are one composite line.
3. **Choose.** The refined hypothesis with most well-fitted lines, penalised for
   outliers and for areas that do not follow a Boltzmann envelope, wins.
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import linear_sum_assignment

from ..errors import AssignmentError
from ._linear_model import BandSpec, Obs, Template, fit_constants
from ._linear_qbranch import _renumber_q, _scan_q
from ._linear_score import _holes, _score, branch_balance, branch_counts, label_list, so_i
from ._linear_seed import cached, low_j, spacing_unit, start_values, strong_lines
from ._linear_state import (
    _GROW,
    BandState,
    _intensity_model,
    lower_energy,
    predict,
    strength_factor,
)
from ._lsq import robust_scale

__all__ = ["Obs", "BandState", "refine", "branch_counts", "branch_balance", "strength_factor", "label_list",
           "lower_energy"]

_BIG = 1e12


def _composites(spec: BandSpec, t: Template, calc: np.ndarray, merge_tol: float) -> np.ndarray:
    """Group id per template line: e/f partners of one J and branch closer than ``merge_tol``
    share a group (they are one observed line)."""
    gid = np.arange(len(t))
    if spec.lower.l >= 1 or spec.upper.l >= 1:
        key = {}
        for i in range(len(t)):
            k = (t.branch[i], int(t.J_lower[i]), float(t.sign[i]))
            if k in key and abs(calc[key[k]] - calc[i]) <= merge_tol:
                gid[i] = gid[key[k]]
            else:
                key[k] = i
    return gid


def _groups(spec, t, A, calc, merge_tol):
    """Composite lines: representative template index, member lists, mean rows and positions."""
    gid = _composites(spec, t, calc, merge_tol)
    reps, inv = np.unique(gid, return_inverse=True)
    rows = np.zeros((len(reps), A.shape[1]))
    np.add.at(rows, inv, A)
    count = np.bincount(inv, minlength=len(reps)).astype(float)
    return reps, inv, rows / count[:, None], count


def _windows(t: Template, reps: np.ndarray, c: np.ndarray, frac: float, floor: float) -> np.ndarray:
    """frac × the local spacing of predictions of the same branch and side (at least ``floor``)."""
    w = np.full(len(reps), np.inf)
    key = np.array([f"{t.branch[r]}{t.sign[r]:+.0f}" for r in reps])
    for k in set(key.tolist()):
        m = np.nonzero(key == k)[0]
        o = m[np.argsort(c[m])]
        d = np.diff(c[o])
        sp = np.minimum(np.r_[np.inf, d], np.r_[d, np.inf])
        w[o] = sp
    w = np.where(np.isfinite(w), w, floor / frac)
    return frac * np.maximum(w, floor / frac)


def _fit_with_outliers(spec, A, y, sig, locked, *, centrifugal, outlier_sigma):
    out = np.zeros(len(y), dtype=bool)
    fit, scale = None, 1.0
    for _ in range(12):
        use = ~out
        fit = fit_constants(spec, A[use], y[use], None if sig is None else sig[use],
                            centrifugal=centrifugal)
        r = y - fit.predict(spec, A)[0]
        dof = int(use.sum()) - len(fit.names)
        if dof < 2:
            break
        if sig is not None:
            scale = max(1.0, robust_scale((r / sig)[use]))
            z = np.abs(r / sig) / scale
        else:
            scale = robust_scale(r[use]) or float(np.sqrt(np.mean(r[use] ** 2))) or 1e-12
            z = np.abs(r) / scale
        new = (z > outlier_sigma) & ~locked
        if np.array_equal(new, out):
            break
        out = new
    return fit, out, scale


def refine(obs: Obs, spec: BandSpec, iso, free: np.ndarray, nu0: float, B: float, *,
           locks: dict, opts: dict, max_rounds: int = 30) -> BandState:
    """Predict -> match -> fit rounds from a hypothesis (module docstring): first among the
    strong lines, then among all ``free`` lines with the intensity envelope of the first.

    ``free`` marks the observed lines this band may take; ``locks`` maps an observed line
    to a template label of this band (it is matched there whatever the cost).
    """
    unit = spacing_unit(spec, iso)
    # the first round reaches only low J, where a starting B a few per cent off still matches
    j0 = max(3, low_j(spec, unit) // 2)
    while j0 < 40 and int(np.sum(cached(spec, iso, j0, spec.rotational)[0].branch != "Q")) < 8:
        j0 += 1  # at least 8 lines outside a Q branch to start from
    st = BandState(spec, j0, None, start_values(spec, nu0, B))
    strong = strong_lines(obs, free, spec)
    # a perpendicular band's Q lines (to the f levels) wait until P and R (to the e levels) have
    # fixed ν₀, B′ and B″: their positions then depend on q′ alone, found by a scan
    perp = spec.process == "ir" and spec.upper.l >= 1 and spec.lower.l == 0
    pipi = spec.process == "ir" and spec.upper.l >= 1 and spec.lower.l >= 1
    # a dense Q branch (perpendicular band, vibrational Raman band) waits too: its unresolved
    # lines would pull the numbering of the outer branches
    dense_q = perp or (spec.process == "raman" and not spec.rotational)
    _rounds(obs, spec, iso, strong, st, locks, opts, max_rounds, unit, B, skip_q=dense_q)
    if not np.array_equal(strong, free):
        st.jmax = max(st.jmax, low_j(spec, unit))
        _rounds(obs, spec, iso, free, st, locks, opts, max_rounds, unit, B, skip_q=dense_q)
    if perp or pipi:
        _scan_q(obs, st, iso, free)
    if dense_q or pipi:
        _rounds(obs, spec, iso, free, st, locks, opts, max_rounds, unit, B)
    if perp and _renumber_q(obs, st, locks, opts):
        _rounds(obs, spec, iso, free, st, locks, opts, max_rounds, unit, B)
    # the final fit with the full centrifugal model (the first rounds may have used none)
    use = st.good()
    try:
        st.fit = fit_constants(spec, st.rows[st.idx[use]], obs.x[use],
                               None if obs.sigma is None else obs.sigma[use],
                               centrifugal=opts["centrifugal"])
    except AssignmentError:
        pass
    st.calc, st.calc_err = np.full(obs.n, np.nan), np.full(obs.n, np.nan)
    a = st.idx >= 0
    c, e = st.fit.predict(spec, st.rows[st.idx[a]])
    st.calc[a], st.calc_err[a] = c, e
    st.holes = _holes(obs, st, iso)
    st.score = _score(obs, st, opts.get("temperature"))
    return st


def _rounds(obs, spec, iso, free, st: BandState, locks, opts, max_rounds, unit, B,
            skip_q: bool = False) -> None:
    sig_med = float(np.median(obs.sigma)) if obs.sigma is not None else 0.0
    fw = float(np.nanmedian(obs.fwhm)) if obs.fwhm is not None and np.isfinite(obs.fwhm).any() else 0.0
    lo, hi = float(obs.x.min()) - 1.0, float(obs.x.max()) + 1.0
    prev = None
    for r in range(1, max_rounds + 1):
        vals = st.values
        Bnow = abs(vals.get("B", vals.get("B_lower", B)))
        # from a bare hypothesis the first round stays at low J (its B may be a few % off)
        grow = 0 if st.fit is None and r == 1 else _GROW
        t, A = cached(spec, iso, st.jmax + grow, spec.rotational)
        calc, cerr = predict(spec, A, vals, st.fit)
        merge = max(0.5 * fw, 3 * sig_med, 1e-4 * Bnow)
        reps, inv, rows, count = _groups(spec, t, A, calc, merge)
        cg, eg = predict(spec, rows, vals, st.fit)
        inside = (cg >= lo) & (cg <= hi)
        if skip_q:
            inside &= t.branch[reps] != "Q"
        # a bare hypothesis is only known to a fraction of a spacing: its first round looks wider
        frac = max(opts["match_fraction"], 0.45) if grow == 0 else opts["match_fraction"]
        win = _windows(t, reps, cg, frac, 0.5 * frac * unit * Bnow)
        idx = np.full(obs.n, -1)
        labels = np.array(label_list(spec, t), dtype=object)[reps]
        taken = set()
        for i, lab in locks.items():
            hit = np.nonzero(labels == lab)[0]
            if len(hit):
                idx[i] = int(hit[0])
                taken.add(int(hit[0]))
        rows_obs = np.array([i for i in np.nonzero(free)[0] if i not in locks], dtype=int)
        cols = np.array([k for k in np.nonzero(inside)[0] if k not in taken], dtype=int)
        if len(rows_obs) and len(cols):
            so = (obs.sigma[rows_obs] if obs.sigma is not None else np.full(len(rows_obs), 1.0))
            so = so * st.scatter
            diff = obs.x[rows_obs][:, None] - cg[cols][None, :]
            var = so[:, None] ** 2 + eg[cols][None, :] ** 2 + 1e-300
            cost = diff**2 / var + np.log(var)
            allowed = np.abs(diff) <= win[cols][None, :]
            if st.intensity is not None:
                sub = Template(*(getattr(t, f)[reps[cols]] for f in Template.__dataclass_fields__))
                la = (st.intensity[0] + st.intensity[1] * lower_energy(spec, sub, vals)
                      + np.log(strength_factor(spec, sub, cg[cols]) * count[cols]))
                with np.errstate(divide="ignore", invalid="ignore"):
                    dla = np.log(obs.area[rows_obs])[:, None] - la[None, :]
                have = np.isfinite(dla)
                allowed &= ~have | (np.abs(dla) <= np.log(10.0))
                cost = cost + np.where(have, (dla / st.intensity[2]) ** 2, 0.0)
            cost = np.where(allowed, np.minimum(cost, 1e9), _BIG)
            ri, ci = linear_sum_assignment(cost)
            ok = cost[ri, ci] < _BIG
            idx[rows_obs[ri[ok]]] = cols[ci[ok]]
        # blends: a prediction left without a line, in the J range seen, that a matched line explains
        matched_g = set(idx[idx >= 0].tolist())
        blended = np.zeros(obs.n, dtype=bool)
        blend_with = [None] * obs.n
        asg = np.nonzero(idx >= 0)[0]
        if len(asg):
            xa = obs.x[asg]
            sub = Template(*(getattr(t, f)[reps] for f in Template.__dataclass_fields__))
            expect = strength_factor(spec, sub, cg) * count
            if st.intensity is not None:
                expect = expect * np.exp(st.intensity[1] * lower_energy(spec, sub, vals))
            for k in np.nonzero(inside)[0]:
                if k in matched_g or t.J_lower[reps[k]] > st.jmax:
                    continue
                j = int(np.argmin(np.abs(xa - cg[k])))
                oi = asg[j]
                if expect[k] < 0.2 * expect[idx[oi]]:
                    continue  # too weak to matter beside the line it would blend with
                thr = min(max(4 * float(np.hypot(so_i(obs, oi) * st.scatter, eg[k])), 0.5 * fw), win[k])
                if abs(xa[j] - cg[k]) <= thr:
                    blended[oi] = True
                    prior = blend_with[oi]
                    blend_with[oi] = labels[k] if prior is None else f"{prior}; {labels[k]}"
        use = (idx >= 0) & ~blended
        locked = np.array([i in locks for i in np.nonzero(use)[0]], dtype=bool)
        ui = np.nonzero(use)[0]
        if len(ui) < len(spec.names[:3]) + 1:
            raise AssignmentError(f"only {len(ui)} lines of the {spec.name} band could be matched")
        fit, out_sub, scale = _fit_with_outliers(
            spec, rows[idx[ui]], obs.x[ui], None if obs.sigma is None else obs.sigma[ui], locked,
            # few lines (the first rounds): no centrifugal terms, they would absorb wrong matches
            centrifugal=opts["centrifugal"] if len(ui) >= 15 else "none",
            outlier_sigma=opts["outlier_sigma"])
        outlier = np.zeros(obs.n, dtype=bool)
        outlier[ui[out_sub]] = True
        st.fit, st.scatter = fit, (scale if obs.sigma is not None else 1.0)
        if obs.sigma is None:
            st.scatter = scale
        st.t, st.idx, st.outlier, st.blended, st.blend_with = t, idx, outlier, blended, blend_with
        st.reps, st.rows, st.count = reps, rows, count
        good = use & ~outlier
        st.intensity = _intensity_model(spec, t, reps, idx, obs, good, fit.values)
        jm = int(max(t.J_lower[reps[idx[good]]].max(initial=0), 0))
        st.jmax = max(jm, low_j(spec, unit) if r == 1 else 0, st.jmax if r == 1 else 0)
        st.rounds += 1
        sig = (tuple(idx.tolist()), tuple(outlier.tolist()), tuple(blended.tolist()), st.jmax)
        if sig == prev:
            break
        prev = sig
