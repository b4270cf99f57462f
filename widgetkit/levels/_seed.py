"""Finding a band without prior constants (private).

1. **Gap search.** A ¹Σ–¹Σ band has no line at its origin: P(1) and R(0) lie
   2(B′+B″) apart while neighbouring lines are about B′+B″ apart. Every pair of
   near-neighbour lines (i, j) is a hypothesis "i = P(1), j = R(0)"; it is
   kept when the lines a spacing further out, P(2) and R(1), exist.
2. **Bootstrap.** From a kept pair, lines are indexed by m (m = J″+1 for R,
   m = −J″ for P) one at a time outward: the next line is predicted by a
   polynomial in m fitted to the lines indexed so far (degree rising from 1
   to 4 with their number; the band model is exactly a quartic in m) and
   accepted when an observed line lies within a fraction of the local
   spacing. A branch stops after a few consecutive misses (missing lines are
   skipped). The hypothesis that indexes most lines (then the larger total
   area) wins.
3. **Isotopologue estimate.** Constants of another isotopologue follow from
   the seed band by mass scaling; ωe and ωexe, which a single band does not
   give, are estimated from the Pekeris relation
   αe = 6 sqrt(ωexe Be³)/ωe − 6Be²/ωe together with the band origin (only to
   predict the small anharmonic part of the isotope shift; the sub-band is
   then located by an offset search and fitted on its own).
"""

from __future__ import annotations

import bisect
import math

import numpy as np

from ..errors import AssignmentError
from ._lsq import robust_scale
from .bandfit import fit_band

__all__ = ["gap_hypotheses", "bootstrap", "m_to_J", "scaled_band_constants", "natural_seed",
           "lock_seed", "shift_index", "anharmonic_estimate"]


def m_to_J(m) -> tuple[np.ndarray, np.ndarray]:
    """Running index m -> (J_upper, J_lower): m > 0 is R(m−1), m < 0 is P(−m)."""
    m = np.asarray(m, dtype=int)
    return np.where(m > 0, m, -m - 1), np.where(m > 0, m - 1, -m)


def _nearest_free(x, taken, target, tol, area=None, ref=None, floor=0.0, partners=()):
    """Index of the nearest free line within ``tol`` of ``target`` (x a sorted list), or -1."""
    k = bisect.bisect_left(x, target)
    best, bd = -1, tol
    lim = floor * area[ref] if (area is not None and ref is not None and area[ref] == area[ref]) \
        else -math.inf
    for i in range(max(k - 3, 0), min(k + 3, len(x))):
        d = abs(x[i] - target)
        if d <= bd and i not in taken and not (area is not None and area[i] < lim):
            # a line nearer where another isotopologue's partner line should be is not ours
            if any(abs(x[i] - target * r) < d for r in partners):
                continue
            best, bd = i, d
    return best


_HANKEL = [np.add.outer(np.arange(d + 1), np.arange(d + 1)) for d in range(5)]


def _horner(coef, t):
    v = 0.0
    for c in reversed(coef):
        v = v * t + c
    return v


def gap_hypotheses(x, area=None, *, frac: float = 0.25, reach: int = 3) -> list[dict[int, int]]:
    """Seeds {m: index into ascending ``x``} for the lines next to the band origin.

    A pair (i, j) of near neighbours, d = x_j − x_i, is tried as
    (P(1), R(0)) with spacing s = d/2, as (P(1), R(1)) or (P(2), R(0))
    with s = d/3 (R(0) or P(1) missing), and as (P(2), R(1)) with s = d/4
    (both missing, as in weak overtone bands picked at a high threshold). A seed is kept when lines exist
    within ``frac`` × s of x_i − s and x_j + s (the next line of each branch),
    and when no line inside the gap sits where the branch of i or j would
    continue (within 0.15 of the spacing to the next strong line outside),
    unless areas show it weak (below half the weaker of lines i and j): such a
    pair straddles a real line of the band. Other lines in the gap
    (isotopologue partners, impurities) are allowed.
    """
    n = len(x)
    a = np.full(n, np.nan) if area is None else np.asarray(area, dtype=float)
    if n < 4:
        return []
    I, J = [], []
    for k in range(1, reach + 3):
        I.append(np.arange(n - k))
        J.append(np.arange(k, n))
    I, J = np.concatenate(I), np.concatenate(J)
    d = x[J] - x[I]
    out = []
    for key, div in ((0, 2.0), (1, 3.0), (2, 3.0), (3, 4.0)):
        sp = d / div
        # a gap with R(0) or P(1) missing is wider and may hold more partner lines
        ok = (d > 0) & (J - I <= (reach if key == 0 else reach + 2))
        for target in (x[I] - sp, x[J] + sp):
            k = np.clip(np.searchsorted(x, target), 1, n - 1)
            near = np.minimum(np.abs(x[k] - target), np.abs(x[k - 1] - target))
            ok &= near <= frac * sp
        for q in np.nonzero(ok)[0]:
            i, j = int(I[q]), int(J[q])
            if j > i + 1 and not _gap_is_clear(x, a, i, j):
                continue
            out.append(({-1: i, 1: j}, {-1: i, 2: j}, {-2: i, 1: j}, {-2: i, 2: j})[key])
    out.sort(key=lambda h: (min(h.values()), max(h.values()), sorted(h)))
    return out


def _gap_is_clear(x, a, i: int, j: int) -> bool:
    """No strong line inside (i, j) where the branch of i or j would continue."""
    inner = np.arange(i + 1, j)
    lim = 0.5 * min(a[i], a[j])
    weak = np.isfinite(lim) & np.isfinite(a[inner]) & (a[inner] < lim)
    cont = []
    pi, nj = _strong_neighbour(a, i, -1), _strong_neighbour(a, j, 1)
    if pi is not None:
        cont.append((x[i] + (x[i] - x[pi]), x[i] - x[pi]))
    if nj is not None:
        cont.append((x[j] - (x[nj] - x[j]), x[nj] - x[j]))
    at = np.zeros(len(inner), dtype=bool)
    for c, sp in cont:
        at |= np.abs(x[inner] - c) <= 0.15 * sp
    edge = np.minimum(x[inner] - x[i], x[j] - x[inner]) <= 0.2 * (x[j] - x[i])
    return not np.any(~weak & (at | ~edge))


def _strong_neighbour(a, i: int, step: int):
    """Nearest index beyond i (in direction ``step``) with area >= half of a[i] (any if unknown)."""
    k = i + step
    while 0 <= k < len(a):
        if not (np.isfinite(a[i]) and np.isfinite(a[k])) or a[k] >= 0.5 * a[i]:
            return k
        k += step
    return None


def _degree(n: int) -> int:
    return 1 if n < 4 else 2 if n < 7 else 3 if n < 10 else 4


def bootstrap(x, init: dict[int, int], *, frac: float = 0.25, max_miss: int = 2,
              forbidden: frozenset = frozenset(), max_lines: int | None = None,
              area=None, area_floor: float = 0.1, partners=()) -> dict[int, int]:
    """Index lines by m outward from ``init`` (m -> index into ascending ``x``).

    With ``area`` (aligned with ``x``), a candidate weaker than ``area_floor``
    times the last line taken in its branch is passed over (a weak
    isotopologue or impurity line must not take the place of a missing
    line). ``partners`` are ratios ρ = sqrt(μ/μ_other) of other isotopologues:
    once four lines are indexed, a candidate nearer ρ × prediction (where the
    partner line of that isotopologue roughly lies) than the prediction is
    passed over when the partner shift is over 5 % of the spacing. Stops when
    both branches ran out, or after ``max_lines`` lines.
    """
    got = dict(init)
    xl = [float(v) for v in x]
    al = None if area is None else [float(v) for v in np.asarray(area, dtype=float)]
    taken = set(got.values()) | set(forbidden)
    lo, hi = xl[0], xl[-1]
    nxt = {1: max([m for m in got if m > 0], default=0) + 1,
           -1: min([m for m in got if m < 0], default=0) - 1}
    miss = {1: 0, -1: 0}
    active = {1: True, -1: True}
    last = {1: got[max(m for m in got if m > 0)] if any(m > 0 for m in got) else None,
            -1: got[min(m for m in got if m < 0)] if any(m < 0 for m in got) else None}
    scale = 30.0
    x0 = xl[next(iter(got.values()))]
    # running moments of the normal equations: S[k] = Σ t^k, T[k] = Σ t^k (x − x0), t = m/scale
    S = [0.0] * 9
    T = [0.0] * 5

    def add(m, xi):
        t, p, y = m / scale, 1.0, xi - x0
        for k in range(9):
            S[k] += p
            if k < 5:
                T[k] += p * y
            p *= t

    for m, i in got.items():
        add(m, xl[i])
    nR = sum(1 for m in got if m > 0)
    solved, coef = None, []
    while (active[1] or active[-1]) and (max_lines is None or len(got) < max_lines):
        n = len(got)
        # extrapolating a branch from very few of its own lines: keep the polynomial low
        cap = 2 if min(nR, n - nR) < 3 else 3 if min(nR, n - nR) < 5 else 4
        deg = min(_degree(n), n - 1, cap)
        if (n, deg) != solved:
            try:
                coef = np.linalg.solve(np.array(S)[_HANKEL[deg]], np.array(T[: deg + 1])).tolist()
            except np.linalg.LinAlgError:
                break
            solved = (n, deg)
        for side in (1, -1):
            if not active[side]:
                continue
            m = nxt[side]
            pred = x0 + _horner(coef, m / scale)
            spacing = abs(pred - x0 - _horner(coef, (m - side) / scale))
            if not (lo - spacing <= pred <= hi + spacing) or spacing <= 0:
                active[side] = False
                continue
            part = [r for r in partners if abs(pred * (r - 1)) > 0.05 * spacing] if n >= 4 else []
            i = _nearest_free(xl, taken, pred, frac * spacing, al, last[side], area_floor, part)
            if i >= 0:
                got[m] = i
                taken.add(i)
                last[side] = i
                add(m, xl[i])
                nR += side > 0
                miss[side] = 0
            else:
                miss[side] += 1
                if miss[side] > max_miss:
                    active[side] = False
            nxt[side] = m + side
    return got


def _band_terms(values: dict, v_upper: int, v_lower: int) -> tuple:
    """(Δv, v′+½, v″+½, (v′+½)² − (v″+½)², αe, Be, ν0) of one band's constants."""
    dv = v_upper - v_lower
    hu, hl = v_upper + 0.5, v_lower + 0.5
    Bl, Bu = values["B_lower"], values["B_upper"]
    alpha = (Bl - Bu) / dv
    return dv, hu, hl, hu**2 - hl**2, alpha, Bl + alpha * hl, values["band_origin"]


def scaled_band_constants(values: dict, v_upper: int, v_lower: int, rho: float) -> tuple[dict, float]:
    """Band constants of another isotopologue, and the anharmonic part of its origin shift.

    Parameters
    ----------
    values : dict
        band_origin, B_upper, B_lower, D_upper, D_lower of the seed isotopologue.
    rho : float
        ρ = sqrt(μ_seed/μ_other).

    Returns
    -------
    (dict of the five band constants, anharmonic shift estimate in cm⁻¹)
    """
    dv, hu, hl, q, alpha, Be, nu0 = _band_terms(values, v_upper, v_lower)
    we, wx = anharmonic_estimate(values, v_upper, v_lower)
    we2, wx2 = we * rho, wx * rho**2
    Be2, a2 = Be * rho**2, alpha * rho**3
    out = {
        "band_origin": we2 * dv - wx2 * q,
        "B_upper": Be2 - a2 * hu,
        "B_lower": Be2 - a2 * hl,
        "D_upper": values["D_upper"] * rho**4,
        "D_lower": values["D_lower"] * rho**4,
    }
    anh = out["band_origin"] - rho * nu0
    return out, float(anh)


def anharmonic_estimate(values: dict, v_upper: int, v_lower: int) -> tuple[float, float]:
    """(ωe, ωexe) in cm⁻¹ estimated from one band's constants (band_origin, B_upper, B_lower)
    with the Pekeris relation αe = 6 sqrt(ωexe Be³)/ωe − 6Be²/ωe and the two-term origin
    ν0 = ωe(v′ − v″) − ωexe((v′+½)² − (v″+½)²); ωexe = 0 (ωe = ν0/(v′ − v″)) when the
    relation gives no root."""
    dv, _, _, q, alpha, Be, nu0 = _band_terms(values, v_upper, v_lower)
    wx = 0.0
    if Be > 0 and alpha > 0:
        for _ in range(30):
            we = (nu0 + wx * q) / dv
            wx = ((alpha * we + 6 * Be**2) / 6) ** 2 / Be**3
            if not (np.isfinite(wx) and wx < 0.1 * we):
                break
    we = (nu0 + wx * q) / dv
    if not (np.isfinite(wx) and 0 <= wx < 0.1 * we):
        wx, we = 0.0, nu0 / dv
    return float(we), float(wx)


def natural_seed(xs, area, *, frac: float, forbidden: frozenset = frozenset(), partners=(),
                 max_full: int = 40) -> dict[int, int] | None:
    """The most plausible indexing {m: index into ascending ``xs``} of one sub-band found from a
    band-origin gap alone (no locks), or None when no gap hypothesis holds.

    Every gap hypothesis is bootstrapped briefly; the distinct starts that index most lines
    (then the strongest) are bootstrapped in full and ranked by :func:`_seed_score`.
    """
    hyps = [h for h in gap_hypotheses(xs, area, frac=frac) if not (set(h.values()) & forbidden)]
    short = [(bootstrap(xs, h, frac=frac, forbidden=forbidden, max_lines=10, area=area,
                        partners=partners), h) for h in hyps]
    top = max((len(g) for g, _ in short), default=0)
    short = [t for t in short if len(t[0]) >= top - 1]
    short.sort(key=lambda t: (-len(t[0]), -float(np.nansum(area[list(t[0].values())])),
                              min(t[1].values())))
    cands: dict = {}
    seen: set = set()
    for g0, h in short:
        key0 = frozenset(g0.items())
        if key0 in seen:
            continue
        seen.add(key0)
        if len(seen) > max_full:
            break
        g = bootstrap(xs, h, frac=frac, forbidden=forbidden, area=area, partners=partners)
        cands.setdefault(frozenset(g.items()), (g, min(h.values())))
    if not cands:
        return None
    ranked = sorted(cands.values(), key=lambda t: (-len(t[0]), t[1]))
    scored = [(_seed_score(g, xs, area), float(np.nansum(area[list(g.values())])), -i, g)
              for g, i in ranked]
    scored.sort(key=lambda t: t[:3], reverse=True)
    return scored[0][3]


def lock_seed(xs, locked: dict[str, dict[int, int]], order: list[str], *, frac: float,
              forbidden: frozenset, area) -> tuple[str, dict[int, int]] | None:
    """Index a sub-band outward from two or more lines locked with labels of one isotopologue.

    ``locked``: isotopologue -> {m: index into ascending ``xs``}. The isotopologue with most
    locks (then the first in ``order``) is used; None when none has two.
    """
    rich = sorted(locked.items(), key=lambda kv: (-len(kv[1]), order.index(kv[0])))
    if not rich or len(rich[0][1]) < 2:
        return None
    iso, init = rich[0]
    return iso, bootstrap(xs, init, frac=frac, forbidden=forbidden - set(init.values()), area=area)


def shift_index(g: dict[int, int], k: int) -> dict[int, int]:
    """The indexing renumbered by m -> m + k; the line that would get m = 0 (the band origin,
    where no line is) is dropped."""
    return {m + k: i for m, i in g.items() if m + k != 0}


def _seed_score(g: dict, xs: np.ndarray, area: np.ndarray) -> float:
    """Plausibility of one bootstrap: lines indexed, minus penalties.

    A missing line can mimic the origin gap and re-index the whole band with
    an equally good fit of the positions; the areas tell them apart (a true
    labelling gives a straight Boltzmann plot). Without areas, branches of
    very different length are mildly penalised.
    """
    ms = np.array(sorted(g))
    if len(ms) < 4:
        return -np.inf
    Ju, Jl = m_to_J(ms)
    y = xs[[g[m] for m in ms]]
    try:
        bf = fit_band(Ju, Jl, y, None, centrifugal="shared" if len(ms) >= 7 else "none")
    except AssignmentError:
        return -np.inf
    v = bf.values
    if not (v["B_lower"] > 0 and v["B_upper"] > 0):
        return -np.inf
    # lines predicted inside the indexed range but not seen (the origin m = 0 excepted)
    holes = (ms.max() - ms.min()) - (len(ms) - 1)
    score = float(len(ms)) - 1.0 * holes
    a = area[[g[m] for m in ms]]
    ok = np.isfinite(a) & (a > 0)
    if ok.sum() >= 4:
        E = v["B_lower"] * Jl * (Jl + 1.0) - v["D_lower"] * (Jl * (Jl + 1.0)) ** 2
        L = np.where(Ju > Jl, Jl + 1.0, Jl * 1.0)
        yy = np.log(a[ok] / (y[ok] * L[ok]))
        A = np.column_stack([np.ones(ok.sum()), E[ok]])
        coef, *_ = np.linalg.lstsq(A, yy, rcond=None)
        sB = robust_scale(yy - A @ coef)
        score -= 10.0 * min(sB, 1.0) + (5.0 if coef[1] >= 0 else 0.0)
    else:
        nR = int((ms > 0).sum())
        score -= 2.0 * abs(2 * nR - len(ms)) / len(ms)
    return score
