"""Q branches of perpendicular bands: their J numbering checked by the areas, and a scan
for Q lines the search missed (private; split from :mod:`._linear_search`, no change of
behaviour)."""

from __future__ import annotations

import numpy as np

from ..errors import AssignmentError
from ._linear_model import Obs, Template, fit_constants
from ._linear_seed import cached, full_vector
from ._linear_state import _GROW, BandState, _intensity_model, lower_energy, strength_factor

__all__ = ["_renumber_q", "_scan_q"]


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
    # distinct observed lines hit by each trial q (rows sorted; misses are −1)
    nh = np.sort(np.where(hit, near, -1), axis=1)
    count = ((nh[:, 1:] != nh[:, :-1]) & (nh[:, 1:] >= 0)).sum(axis=1) + (nh[:, 0] >= 0)
    count = count.astype(float)
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
