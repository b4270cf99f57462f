"""Finding a band from its strongest lines (private): a seed that weaker series beside the band
(a hot band, a minor isotopologue, an impurity) cannot mislead.

The band-origin gap search of :mod:`._seed` looks at the weak lines next to the origin, where
a hot band v+1 <- v (shifted by about −2ωexe, lines weaker by about 2 exp(−c₂ωe/T)) puts lines
as strong as R(0) and P(1) of the fundamental at 1000-1500 K: they fill the gap or halve the
apparent spacing. The strongest lines of a spectrum, near the maxima of the Boltzmann envelopes
of the two branches, belong to the strongest band and show its spacing. Here

1. the strongest line (by area) and its neighbour one spacing away (the median spacing of the
   lines with at least ``strong`` times the largest area) start a series;
2. the series is indexed outward line by line with a running index r and no gap (the band
   model is one quartic in m = r − r₀ through the origin): the next line is predicted by a
   polynomial in r fitted to the lines taken so far and taken when it lies within ``frac`` of
   the local spacing, and, once eight lines are taken, within five times their scatter about
   that polynomial (at least 0.08 of the spacing); a candidate weaker than a tenth of the last
   line taken on its side is passed over. The empty slot at the origin is a miss; a line of
   another series there lies off the band's prediction and must not bend it;
3. the origin r₀ is the slot (with at least three lines on either side) whose numbering gives
   the straightest Boltzmann plot, ln(area/(ν L(J″))) linear in E″ with a negative slope
   (L = J″+1 for R, J″ for P): a numbering shifted by k changes L and E″ of every line, most
   near the origin. A line found in that slot is not of the band (a ¹Σ–¹Σ band has none at
   its origin) and is dropped.

Without areas there is no such seed (None).
"""

from __future__ import annotations

import numpy as np

from ..errors import AssignmentError
from ._lsq import robust_scale
from ._seed import _nearest_free, m_to_J
from .bandfit import fit_band

__all__ = ["strong_seed", "STRONG_FRACTION"]

#: lines with at least this fraction of the largest area set the spacing of the strongest band
STRONG_FRACTION = 0.5
#: fewest lines on each side of the origin slot
_MIN_SIDE = 3


def strong_seed(xs, area, *, frac: float, forbidden: frozenset = frozenset(), partners=(),
                strong: float = STRONG_FRACTION) -> dict[int, int] | None:
    """Indexing {m: index into ascending ``xs``} of the strongest band (module docstring), or
    None when the areas do not show one."""
    xs = np.asarray(xs, dtype=float)
    a = np.asarray(area, dtype=float)
    ok = np.isfinite(a) & (a > 0)
    ok[list(forbidden)] = False
    if ok.sum() < 2 * _MIN_SIDE + 2:
        return None
    top = np.nonzero(ok & (a >= strong * np.max(a[ok])))[0]
    if len(top) < 3:
        return None
    d = np.diff(xs[top])
    s0 = float(np.median(d[d > 0])) if np.any(d > 0) else 0.0
    if not s0 > 0:
        return None
    p = int(np.argmax(a[top]))
    k = int(top[p])
    init = None
    # its neighbour: the next strong line about one spacing away (a weaker line of another
    # series may lie nearer the median spacing than the band's own next line)
    for q in (p + 1, p - 1):
        if 0 <= q < len(top) and abs(abs(xs[top[q]] - xs[k]) - s0) <= 0.35 * s0:
            init = {0: k, (1 if q > p else -1): int(top[q])}
            break
    if init is None:
        return None
    got = _walk(xs, a, init, frac=frac, forbidden=forbidden, partners=partners)
    return _place_origin(got, xs, a)


def _walk(xs: np.ndarray, a: np.ndarray, init: dict[int, int], *, frac: float,
          forbidden: frozenset, partners, max_miss: int = 3, floor: float = 0.1) -> dict[int, int]:
    """Index a gapless series {r: index} outward from ``init`` (step 2 of the module notes)."""
    got = dict(init)
    taken = set(got.values()) | set(forbidden)
    xl, al = xs.tolist(), a.tolist()
    lo, hi = xl[0], xl[-1]
    for side in (1, -1):
        r = (max(got) if side > 0 else min(got)) + side
        last, miss = got[r - side], 0
        while miss <= max_miss:
            rs = np.array(sorted(got), dtype=float)
            y = xs[[got[int(k)] for k in rs]]
            deg = min(4, len(rs) - 1, 1 if len(rs) < 4 else 2 if len(rs) < 7 else 3 if len(rs) < 10
                      else 4)
            scale = max(float(np.ptp(rs)), 1.0)
            coef = np.polyfit(rs / scale, y, deg)
            pred = float(np.polyval(coef, r / scale))
            spacing = abs(pred - float(np.polyval(coef, (r - side) / scale)))
            if not (lo - spacing <= pred <= hi + spacing) or spacing <= 0:
                break
            tol = frac * spacing
            if len(rs) >= 8:
                scatter = float(np.sqrt(np.sum((y - np.polyval(coef, rs / scale)) ** 2)
                                        / (len(rs) - deg - 1)))
                tol = min(tol, max(0.08 * spacing, 5.0 * scatter))
            part = ([q for q in partners if abs(pred * (q - 1)) > 0.05 * spacing]
                    if len(rs) >= 6 else [])
            i = _nearest_free(xl, taken, pred, tol, al, last, floor, part)
            if i >= 0:
                got[r] = i
                taken.add(i)
                last, miss = i, 0
            else:
                miss += 1
            r += side
    return got


def _place_origin(got: dict[int, int], xs: np.ndarray, a: np.ndarray) -> dict[int, int] | None:
    """The numbering m = r − r₀ of a gapless series whose Boltzmann plot is straightest; the
    origin slot r₀ must be empty or hold a line off the series (a band has no line at its
    origin: an evenly spaced comb is no band)."""
    rs = np.array(sorted(got))
    if len(rs) < 2 * _MIN_SIDE + 1:
        return None
    off = _off_series(rs, xs[[got[int(r)] for r in rs]])
    best, best_cost = None, np.inf
    for r0 in range(int(rs[_MIN_SIDE - 1]) + 1, int(rs[-_MIN_SIDE]) + 1):
        if r0 in got and not off[int(np.searchsorted(rs, r0))]:
            continue
        g = {int(r) - r0: got[int(r)] for r in rs if r != r0}
        cost = _boltzmann_cost(g, xs, a)
        if cost < best_cost:
            best, best_cost = g, cost
    return best


def _off_series(rs: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Lines more than five times the robust scatter off a quartic in r through the others."""
    t = (rs - rs.mean()) / max(float(np.ptp(rs)), 1.0)
    use = np.ones(len(rs), dtype=bool)
    z = np.zeros(len(rs))
    for _ in range(3):
        coef = np.polyfit(t[use], y[use], min(4, int(use.sum()) - 1))
        r = y - np.polyval(coef, t)
        s = robust_scale(r[use])
        if not s > 0:
            s = max(float(np.max(np.abs(r[use]))), 1e-9 * max(abs(float(y.mean())), 1.0))
        z = np.abs(r) / s
        new = z <= 5.0
        if np.array_equal(new, use) or new.sum() < 6:
            break
        use = new
    return z > 5.0


def _boltzmann_cost(g: dict[int, int], xs: np.ndarray, a: np.ndarray) -> float:
    """Mean absolute residual of the Boltzmann plot of one numbering (inf when implausible)."""
    ms = np.array(sorted(g))
    idx = np.array([g[m] for m in ms])
    Ju, Jl = m_to_J(ms)
    try:
        v = fit_band(Ju, Jl, xs[idx], None, centrifugal="shared").values
    except AssignmentError:
        return np.inf
    if not (v["B_lower"] > 0 and v["B_upper"] > 0):
        return np.inf
    x = Jl * (Jl + 1.0)
    E = v["B_lower"] * x - v["D_lower"] * x**2
    L = np.where(Ju > Jl, Jl + 1.0, Jl * 1.0)
    y = np.log(a[idx] / (xs[idx] * L))
    A = np.column_stack([np.ones(len(E)), E])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    if not coef[1] < 0:
        return np.inf
    return float(np.mean(np.abs(y - A @ coef)))
