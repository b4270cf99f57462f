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

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import linear_sum_assignment

from ..errors import AssignmentError
from ._linear_model import BandSpec, ConstantsFit, Obs, Template, fit_constants
from ._linear_seed import cached, full_vector, low_j, spacing_unit, start_values, strong_lines
from ._lsq import robust_scale

__all__ = ["Obs", "BandState", "refine", "branch_counts", "branch_balance", "strength_factor", "label_list",
           "lower_energy"]

_GROW = 4
_BIG = 1e12


@dataclass
class BandState:
    """One band's assignment: per observed line the template index (−1: none)."""

    spec: BandSpec
    jmax: int
    fit: ConstantsFit | None
    start: dict
    t: Template | None = None
    idx: np.ndarray | None = None  # obs -> template index or −1
    outlier: np.ndarray | None = None
    blended: np.ndarray | None = None
    blend_with: list = field(default_factory=list)
    calc: np.ndarray | None = None
    calc_err: np.ndarray | None = None
    intensity: tuple | None = None  # (a, b, s, rms) of ln(area/strength) = a + b E″
    rounds: int = 0
    score: float = -np.inf
    scatter: float = 1.0
    reps: np.ndarray | None = None  # template index of each composite line
    rows: np.ndarray | None = None  # design row of each composite line
    count: np.ndarray | None = None  # template lines in each composite line
    holes: int = 0  # expected lines not seen

    @property
    def values(self) -> dict:
        return self.fit.values if self.fit is not None else dict(self.start)

    def assigned(self) -> np.ndarray:
        return self.idx >= 0 if self.idx is not None else np.zeros(0, dtype=bool)

    def good(self) -> np.ndarray:
        return self.assigned() & ~self.outlier & ~self.blended


def predict(spec: BandSpec, A_full: np.ndarray, values: dict, fit: ConstantsFit | None):
    """Positions (and errors, zero without a fit) of design rows."""
    if fit is not None:
        return fit.predict(spec, A_full)
    return A_full @ full_vector(spec, values), np.zeros(len(A_full))


def lower_energy(spec: BandSpec, t: Template, values: dict) -> np.ndarray:
    """E″ (rotational part, cm⁻¹) of each template line's lower level."""
    J = t.J_lower.astype(float)
    l = 0 if spec.rotational else spec.lower.l
    x = J * (J + 1) - l * l
    B = values.get("B", values.get("B_lower", 1.0))
    D = values.get("D", values.get("D_lower", 0.0))
    return B * x - D * x * x


def strength_factor(spec: BandSpec, t: Template, position: np.ndarray) -> np.ndarray:
    """Everything in a line's intensity but the Boltzmann factor: spin weight × Hönl–London × ν
    (absorption) or spin weight × (2J″+1) × Placzek–Teller (+ isotropic part) for Raman."""
    f = t.weight * t.factor
    if spec.process == "raman":
        return f * (2 * t.J_lower + 1)
    return f * np.abs(position)


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


def _intensity_model(spec, t, reps, rows_t, obs, use, values):
    """ln(area/strength) = a + b E″ from the lines ``use`` (obs index -> group), or None."""
    oi = np.nonzero(use)[0]
    a = obs.area[oi]
    ok = np.isfinite(a) & (a > 0)
    if ok.sum() < 5:
        return None
    oi = oi[ok]
    tg = reps[rows_t[oi]]
    sub = Template(*(getattr(t, f)[tg] for f in Template.__dataclass_fields__))
    E = lower_energy(spec, sub, values)
    y = np.log(obs.area[oi] / strength_factor(spec, sub, obs.x[oi]))
    A = np.column_stack([np.ones(len(E)), E])
    keep = np.ones(len(y), dtype=bool)
    for _ in range(4):  # a few mismatched lines must not tilt the envelope
        coef, *_ = np.linalg.lstsq(A[keep], y[keep], rcond=None)
        r = y - A @ coef
        sc = robust_scale(r[keep])
        new = np.abs(r) <= max(3 * sc, 0.2)
        if np.array_equal(new, keep) or new.sum() < 5:
            break
        keep = new
    if not coef[1] < 0:
        return None
    return float(coef[0]), float(coef[1]), max(0.3, 1.5 * robust_scale(r[keep])), \
        float(np.sqrt(np.mean(r[keep] ** 2)))


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


def _renumber_q(obs: Obs, st: BandState, locks: dict, opts: dict) -> bool:
    """Shift the J numbering of a perpendicular band's Q lines by k = −3..3 where that explains
    them better: q′ can absorb such a shift in the positions, so the areas decide (against the
    Boltzmann envelope of the P and R lines). Returns True when the numbering changed."""
    spec, t = st.spec, st.t
    good = st.good()
    br = np.full(obs.n, "", dtype=object)
    br[st.idx >= 0] = t.branch[st.reps[st.idx[st.idx >= 0]]]
    q_obs = np.nonzero(good & (br == "Q"))[0]
    pr = good & (br != "Q")
    if len(q_obs) < 3 or any(i in locks for i in q_obs):
        return False
    env = _intensity_model(spec, t, st.reps, st.idx, obs, pr, st.values)
    key = {(int(t.J_lower[r]), t.branch[r]): g for g, r in enumerate(st.reps)}
    Jq = t.J_lower[st.reps[st.idx[q_obs]]]
    sig = obs.sigma if obs.sigma is not None else np.full(obs.n, max(st.scatter, 1e-6))
    best, best_k = None, 0
    for k in range(-3, 4):
        groups = [key.get((int(j) + k, "Q")) for j in Jq]
        if any(g is None for g in groups):
            continue
        idx = st.idx.copy()
        idx[q_obs] = groups
        use = np.nonzero(pr | np.isin(np.arange(obs.n), q_obs))[0]
        try:
            fit = fit_constants(spec, st.rows[idx[use]], obs.x[use], sig[use],
                                centrifugal=opts["centrifugal"])
        except AssignmentError:
            continue
        r = (obs.x[use] - fit.predict(spec, st.rows[idx[use]])[0]) / sig[use]
        cost = float(np.sum(r**2)) / max(st.scatter, 1.0) ** 2
        if env is not None:
            sub = Template(*(getattr(t, f)[st.reps[idx[q_obs]]] for f in Template.__dataclass_fields__))
            la = env[0] + env[1] * lower_energy(spec, sub, fit.values) + np.log(
                strength_factor(spec, sub, obs.x[q_obs]))
            with np.errstate(divide="ignore", invalid="ignore"):
                d = np.log(obs.area[q_obs]) - la
            cost += float(np.nansum((d / max(env[3], 0.05)) ** 2))
        if best is None or cost < best - 1e-9:
            best, best_k = cost, k
    if best_k == 0:
        return False
    groups = [key[(int(j) + best_k, "Q")] for j in Jq]
    st.idx[q_obs] = groups
    use = (st.idx >= 0) & ~st.outlier & ~st.blended
    st.fit = fit_constants(spec, st.rows[st.idx[use]], obs.x[use], sig[use],
                           centrifugal=opts["centrifugal"])
    return True


def _both_components(t: Template) -> bool:
    """Every lower J that has lines has them from both its e and its f component."""
    comps: dict = {}
    for j, c in zip(t.J_lower.tolist(), t.comp_lower.tolist()):
        comps.setdefault(j, set()).add(c)
    return all(len(v) == 2 for v in comps.values())


def _scan_q(obs: Obs, st: BandState, iso, free: np.ndarray) -> None:
    """Set the ℓ-type doubling to the value whose predicted lines meet most free lines; the next
    rounds start from it. Perpendicular band: q′ from the Q lines (to the f levels) with
    B′ = B′_e − q′/2 kept; Π–Π band: q′ = q″ = q from the e/f splitting of its P and R lines."""
    vals = dict(st.values)
    spec = st.spec
    t, A = cached(spec, iso, st.jmax + _GROW, False)
    names = list(spec.names)
    dq = np.zeros(len(names))
    if spec.lower.l == 0:
        rows = t.branch == "Q"
        Be = vals["B_upper"] + 0.5 * vals.get("q_upper", 0.0)
        v0 = full_vector(spec, dict(vals, q_upper=0.0, B_upper=Be))
        dq[names.index("q_upper")], dq[names.index("B_upper")] = 1.0, -0.5
    else:
        rows = t.branch != "Q"
        Be = vals["B_upper"]
        v0 = full_vector(spec, dict(vals, q_upper=0.0, q_lower=0.0))
        dq[names.index("q_upper")] = dq[names.index("q_lower")] = 1.0
    if not rows.any():
        return
    fw = float(np.nanmedian(obs.fwhm)) if obs.fwhm is not None and np.isfinite(obs.fwhm).any() else 0.0
    sig = float(np.median(obs.sigma)) * st.scatter if obs.sigma is not None else 0.0
    tol = max(3 * sig, 0.5 * fw, 1e-4 * abs(Be))
    J = t.J_lower[rows].astype(float)
    span = 0.03 * abs(Be)
    # when both components of every J exist (no spin statistics tells e from f), P and R lines
    # cannot tell the sign of q: e is taken above f (q > 0), and the result says so
    lo_q = 0.0 if spec.lower.l and _both_components(t) else -span
    qs = np.arange(lo_q, span, max(tol / max(J.max() * (J.max() + 1), 1.0), 1e-9))
    if len(qs) > 20000:
        qs = np.linspace(lo_q, span, 20000)
    base = A[rows]
    pred = (base @ v0)[None, :] + qs[:, None] * (base @ dq)[None, :]
    take = free & ((st.idx < 0) | (rows[st.reps[np.maximum(st.idx, 0)]] if spec.lower.l else False)) \
        if st.idx is not None else free
    order = np.argsort(obs.x[take])
    xs, area = obs.x[take][order], obs.area[take][order]
    if len(xs) < 2:
        return
    k = np.clip(np.searchsorted(xs, pred), 1, len(xs) - 1)
    near = np.where(np.abs(xs[k] - pred) < np.abs(xs[k - 1] - pred), k, k - 1)
    hit = np.abs(xs[near] - pred) <= tol
    count = np.array([len(np.unique(near[i][hit[i]])) for i in range(len(qs))], dtype=float)
    if st.intensity is not None:
        # the areas tell the Q numbering apart where the positions hardly do (an unresolved
        # head hides the lowest Q lines): each hit costs up to 1 for an area off the envelope
        sub = Template(*(getattr(t, f)[rows] for f in Template.__dataclass_fields__))
        la = (st.intensity[0] + st.intensity[1] * lower_energy(spec, sub, vals)
              + np.log(strength_factor(spec, sub, base @ v0)))
        with np.errstate(divide="ignore", invalid="ignore"):
            dla = np.log(area[near]) - la[None, :]
        z = np.where(hit & np.isfinite(dla), np.minimum((dla / st.intensity[2]) ** 2, 4.0) / 4, 0.0)
        count = count - z.sum(axis=1)
    best = int(np.argmax(count))
    if count[best] <= 0:
        return
    q = float(qs[best])
    if spec.lower.l == 0:
        st.start = dict(vals, q_upper=q, B_upper=Be - 0.5 * q)
    else:
        st.start = dict(vals, q_upper=q, q_lower=q)
    st.fit = None


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


def label_list(spec: BandSpec, t: Template) -> list[str]:
    """Template labels; anti-Stokes lines of a rotational band get the suffix ``" aS"``."""
    return [lab + ("" if sg > 0 else " aS") for lab, sg in zip(t.labels(spec), t.sign.tolist())]


def so_i(obs: Obs, i: int) -> float:
    return float(obs.sigma[i]) if obs.sigma is not None else 0.0


def _holes(obs: Obs, st: BandState, iso) -> int:
    """Predicted lines, inside the observed range and the J range assigned, that the intensity
    envelope expects at least 1.5 times as strong as the weakest assigned line, yet are not
    seen (neither matched nor hidden in a blend)."""
    good = st.good() & np.isfinite(obs.area) & (obs.area > 0)
    if st.intensity is None or good.sum() < 5:
        return 0
    t, A = cached(st.spec, iso, st.jmax, st.spec.rotational)
    calc, _ = st.fit.predict(st.spec, A)
    inside = (calc >= obs.x.min()) & (calc <= obs.x.max())
    a, b = st.intensity[:2]
    expect = np.exp(a + b * lower_energy(st.spec, t, st.values)) * strength_factor(st.spec, t, calc)
    xs = np.sort(obs.x)
    k = np.clip(np.searchsorted(xs, calc), 1, len(xs) - 1)
    near = np.minimum(np.abs(xs[k] - calc), np.abs(xs[k - 1] - calc))
    unit = spacing_unit(st.spec, iso) * abs(st.values.get("B", st.values.get("B_lower", 1.0)))
    seen = near <= 0.3 * unit
    floor = 1.5 * float(np.min(obs.area[good]))
    return int(np.sum(inside & ~seen & (expect >= floor)))


def branch_counts(st: BandState) -> dict[str, int]:
    """Well-fitted lines per branch (and side)."""
    good = st.good()
    reps = st.reps[st.idx[good]]
    keys = [f"{b}{'' if sg > 0 else ' aS'}" for b, sg in zip(st.t.branch[reps].tolist(),
                                                             st.t.sign[reps].tolist())]
    out: dict[str, int] = {}
    for k in keys:
        out[k] = out.get(k, 0) + 1
    return out


def branch_balance(st: BandState) -> float:
    """min/max of the line counts of the two outer branches (P/R, O/S); 1 for a rotational band.
    A wrong J numbering can fit every line as one branch of a band whose other branch lies
    outside the spectrum: the positions alone cannot tell, the balance of the branches can."""
    if st.spec.rotational:
        return 1.0
    n = branch_counts(st)
    a, b = (n.get("P", 0), n.get("R", 0)) if st.spec.process == "ir" else (n.get("O", 0), n.get("S", 0))
    return min(a, b) / max(a, b, 1)


def _score(obs: Obs, st: BandState, temperature: float | None = None) -> float:
    good = st.good()
    score = float(good.sum()) - 0.5 * float(st.outlier.sum()) - 2.0 * st.holes
    f = st.fit.fit if st.fit is not None else None
    if f is not None and f.absolute and f.dof > 0:
        # positions that scatter far beyond their stated errors: a wrong pattern forced onto them
        birge = float(np.sqrt(max(f.reduced_chi2, 1e-12)))
        score -= float(good.sum()) * min(max(np.log10(birge) - 0.3, 0.0), 1.0)
    score += 0.2 * float(good.sum()) * min(branch_balance(st), 0.5)
    if st.spec.rotational:
        off = abs(st.values.get("zero_offset", 0.0)) / max(abs(st.values.get("B", 1.0)), 1e-9)
        score -= 2.0 * max(off - 1.0, 0.0)  # zero shift should be near 0 (within about B)
    if temperature is not None and st.intensity is not None and st.intensity[1] < 0:
        from .candidates import C2

        t_rot = -C2 / st.intensity[1]
        score -= min(((t_rot - temperature) / (0.25 * temperature)) ** 2, 20.0)
    if st.intensity is None and np.isfinite(obs.area[good]).sum() >= 5:
        score -= 5.0  # areas that rise with E″ or do not fit any envelope
    elif st.intensity is not None:
        # the envelope's scatter: its floored form, and its raw rms as a tie-breaker between J
        # numberings that fit the positions equally well
        score -= 10.0 * min(st.intensity[2] / 1.5, 1.0) + 2.0 * min(st.intensity[3], 1.0)
    return score
