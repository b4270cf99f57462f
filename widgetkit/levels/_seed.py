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

import numpy as np
from numpy.polynomial import polynomial as npp

__all__ = ["gap_hypotheses", "bootstrap", "m_to_J", "scaled_band_constants"]


def m_to_J(m) -> tuple[np.ndarray, np.ndarray]:
    """Running index m -> (J_upper, J_lower): m > 0 is R(m−1), m < 0 is P(−m)."""
    m = np.asarray(m, dtype=int)
    return np.where(m > 0, m, -m - 1), np.where(m > 0, m - 1, -m)


def _nearest_free(x, taken, target, tol, area=None, ref=None, floor=0.0):
    k = int(np.searchsorted(x, target))
    best, bd = -1, tol
    lim = -np.inf
    if area is not None and ref is not None and np.isfinite(area[ref]):
        lim = floor * area[ref]
    for i in range(max(k - 2, 0), min(k + 2, len(x))):
        d = abs(x[i] - target)
        if d <= bd and i not in taken and not (area is not None and area[i] < lim):
            best, bd = i, d
    return best


def gap_hypotheses(x, area=None, *, frac: float = 0.25, reach: int = 3) -> list[dict[int, int]]:
    """Seeds {m: index into ascending ``x``} for the lines next to the band origin.

    A pair (i, j) of near neighbours, d = x_j − x_i, is tried as
    (P(1), R(0)) with spacing s = d/2, and as (P(1), R(1)) or (P(2), R(0))
    with s = d/3 (R(0) or P(1) missing). A seed is kept when lines exist
    within ``frac`` × s of x_i − s and x_j + s (the next line of each branch),
    and when the gap is empty: lines between i and j (other isotopologues,
    impurities) are allowed only when areas are known and each is below half
    the weaker of lines i and j.
    """
    n = len(x)
    a = np.full(n, np.nan) if area is None else np.asarray(area, dtype=float)
    out = []
    for i in range(n):
        for j in range(i + 1, min(i + 1 + reach, n)):
            if j > i + 1:
                inner = a[i + 1:j]
                lim = 0.5 * min(a[i], a[j])
                if not (np.isfinite(lim) and np.all(np.isfinite(inner)) and np.all(inner < lim)):
                    continue
            d = x[j] - x[i]
            if not d > 0:
                continue
            for seed, s in (({-1: i, 1: j}, d / 2), ({-1: i, 2: j}, d / 3), ({-2: i, 1: j}, d / 3)):
                ok = True
                for target in (x[i] - s, x[j] + s):
                    k = int(np.clip(np.searchsorted(x, target), 1, n - 1))
                    if min(abs(x[k] - target), abs(x[k - 1] - target)) > frac * s:
                        ok = False
                        break
                if ok:
                    out.append(seed)
    return out


def _degree(n: int) -> int:
    return 1 if n < 4 else 2 if n < 7 else 3 if n < 10 else 4


def bootstrap(x, init: dict[int, int], *, frac: float = 0.25, max_miss: int = 2,
              forbidden: frozenset = frozenset(), max_lines: int | None = None,
              area=None, area_floor: float = 0.1) -> dict[int, int]:
    """Index lines by m outward from ``init`` (m -> index into ascending ``x``).

    With ``area`` (aligned with ``x``), a candidate weaker than ``area_floor``
    times the last line taken in its branch is passed over (a weak
    isotopologue or impurity line must not take the place of a missing
    line). Stops when both branches ran out, or after ``max_lines`` lines.
    """
    got = dict(init)
    taken = set(got.values()) | set(forbidden)
    lo, hi = float(x[0]), float(x[-1])
    nxt = {1: max([m for m in got if m > 0], default=0) + 1,
           -1: min([m for m in got if m < 0], default=0) - 1}
    miss = {1: 0, -1: 0}
    active = {1: True, -1: True}
    last = {1: got[max(m for m in got if m > 0)] if any(m > 0 for m in got) else None,
            -1: got[min(m for m in got if m < 0)] if any(m < 0 for m in got) else None}
    area = None if area is None else np.asarray(area, dtype=float)
    scale = 30.0
    x0 = float(x[next(iter(got.values()))])
    # running moments of the normal equations: S[k] = Σ t^k, T[k] = Σ t^k (x − x0), t = m/scale
    S = np.zeros(9)
    T = np.zeros(5)
    pw = np.arange(9)

    def add(m, xi):
        t = m / scale
        S[:] += t**pw
        T[:] += t ** pw[:5] * (xi - x0)

    for m, i in got.items():
        add(m, x[i])
    while (active[1] or active[-1]) and (max_lines is None or len(got) < max_lines):
        nR = sum(1 for m in got if m > 0)
        # extrapolating a branch from very few of its own lines: keep the polynomial low
        cap = 2 if min(nR, len(got) - nR) < 3 else 3 if min(nR, len(got) - nR) < 5 else 4
        deg = min(_degree(len(got)), len(got) - 1, cap)
        H = S[np.add.outer(np.arange(deg + 1), np.arange(deg + 1))]
        try:
            coef = np.linalg.solve(H, T[: deg + 1])
        except np.linalg.LinAlgError:
            break
        for side in (1, -1):
            if not active[side]:
                continue
            m = nxt[side]
            pred = x0 + npp.polyval(m / scale, coef)
            spacing = abs(pred - x0 - npp.polyval((m - side) / scale, coef))
            if not (lo - spacing <= pred <= hi + spacing) or spacing <= 0:
                active[side] = False
                continue
            i = _nearest_free(x, taken, pred, frac * spacing, area, last[side], area_floor)
            if i >= 0:
                got[m] = i
                taken.add(i)
                last[side] = i
                add(m, x[i])
                miss[side] = 0
            else:
                miss[side] += 1
                if miss[side] > max_miss:
                    active[side] = False
            nxt[side] = m + side
    return got


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
    dv = v_upper - v_lower
    hu, hl = v_upper + 0.5, v_lower + 0.5
    q = hu**2 - hl**2
    Bl, Bu = values["B_lower"], values["B_upper"]
    alpha = (Bl - Bu) / dv
    Be = Bl + alpha * hl
    nu0 = values["band_origin"]
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
