"""Starting points for the assignment of a band of a linear molecule (private).

* :func:`centres`: B from the most common spacing of the strong lines; ν₀ at the widest gaps
  (the missing lines at a band origin), at the densest cluster (a Q branch), at the
  area-weighted centre and, for pure rotational Raman, at zero shift; each with the
  neighbouring J numberings.
* :func:`search`: for B on a grid, ν₀ from the offsets between observed lines and the
  predicted low-J lines (B′ = B″); the promising ones are grown a few rounds with cheap
  nearest-line matching and ranked by the lines they explain.

Weak lines (hot bands, isotopologues, impurities) are left out here (:func:`strong_lines`):
they could fill the gaps of a wrong, denser pattern.
"""

from __future__ import annotations

import functools

import numpy as np

from ._linear_model import BandSpec, Obs, Template, design, template

__all__ = ["strong_lines", "search", "centres", "edge_centres", "spacing_unit", "low_j", "cached",
           "full_vector", "start_values"]


@functools.lru_cache(maxsize=256)
def cached(spec: BandSpec, iso, J_max: int, anti_stokes: bool) -> tuple[Template, np.ndarray]:
    """The template of ``spec`` to ``J_max`` and its full design (both independent of constants)."""
    t = template(spec, iso, J_max, anti_stokes=anti_stokes)
    return t, design(spec, t, spec.names)


def full_vector(spec: BandSpec, values: dict) -> np.ndarray:
    return np.array([values.get(n, 0.0) for n in spec.names])


def start_values(spec: BandSpec, nu0: float, B: float) -> dict:
    if spec.rotational:
        return {"zero_offset": nu0, "B": B, "D": 0.0}
    return {"band_origin": nu0, "B_upper": B, "B_lower": B}


def _strength(spec: BandSpec, t: Template) -> np.ndarray:
    f = t.weight * t.factor
    return f * (2 * t.J_lower + 1) if spec.process == "raman" else f


def strong_lines(obs: Obs, free: np.ndarray, spec: BandSpec | None = None) -> np.ndarray:
    """``free`` lines with area at least 15 % of the 95th percentile (all when areas are few):
    weak lines (hot bands, isotopologues, impurities) could fill the gaps of a wrong pattern.
    A vibrational Raman band keeps every line: its O and S lines are far weaker than the Q
    branch, yet they carry the rotational structure."""
    a = obs.area
    ok = free & np.isfinite(a) & (a > 0)
    if ok.sum() < 12 or (spec is not None and spec.process == "raman" and not spec.rotational):
        return free.copy()
    return free & (~np.isfinite(a) | (a >= 0.15 * np.quantile(a[ok], 0.95)))


def _main_lines(t: Template) -> np.ndarray:
    """Lines of the strong branches: factor at least a quarter of the largest at the same J″
    (the weak Q lines of a Π–Π band are left to the refinement)."""
    top = {}
    for j, f in zip(t.J_lower.tolist(), t.factor.tolist()):
        top[j] = max(top.get(j, 0.0), f)
    return t.factor >= 0.25 * np.array([top[j] for j in t.J_lower.tolist()])


@functools.lru_cache(maxsize=64)
def spacing_unit(spec: BandSpec, iso) -> float:
    """Median spacing of the band's non-Q lines at B = 1 (2 for Σ–Σ, 4 with half the J missing)."""
    t = template(spec, iso, 24)
    pos = design(spec, t, spec.names) @ full_vector(spec, {"B_upper": 1.0, "B_lower": 1.0, "B": 1.0})
    keep = t.branch != "Q"
    out = []
    for b in set(t.branch[keep].tolist()):
        p = np.unique(np.round(pos[t.branch == b], 9))  # e and f lines of one J coincide here
        if len(p) > 1:
            out.append(np.diff(p))
    return float(np.median(np.concatenate(out))) if out else 2.0


def low_j(spec: BandSpec, unit: float) -> int:
    """Highest J for the search: where |B′ − B″| up to 1 % of B moves lines by < ¼ spacing."""
    if spec.rotational:
        return 30
    return int(max(5, np.floor(np.sqrt(0.25 * unit / 0.01 / 2))))


def search(obs: Obs, spec: BandSpec, iso, free: np.ndarray, *, B_range=None,
           origin_range=None, n_best: int = 6) -> list[tuple[float, float, float]]:
    """Best (score, ν₀, B) hypotheses for ``spec`` among the lines ``free`` (module docstring)."""
    sel = strong_lines(obs, free, spec)
    xs_all, a_all = obs.x[sel], obs.area[sel]
    order = np.argsort(xs_all)
    xs, a = xs_all[order], a_all[order]
    if len(xs) < 4:
        return []
    unit = spacing_unit(spec, iso)
    ok = np.isfinite(a)
    strong = np.sort(xs[a >= np.quantile(a[ok], 0.6)]) if ok.sum() >= 10 else xs
    if B_range is None:
        # the upper half of the neighbour spacings: dense Q branches and blends give small ones
        d = np.diff(strong)
        d = np.sort(d[d > 0]) if len(d) > 1 else np.diff(xs)
        s = float(np.median(d[len(d) // 2:]))
        B_range = (0.5 * s / unit, 1.6 * s / unit)
    lo, hi = (float(v) for v in B_range)
    if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi):
        return []  # no usable spacing (or a band found with B <= 0 to search beside)
    Bs = np.exp(np.arange(np.log(lo), np.log(hi), 0.012))
    jl = low_j(spec, unit)
    t, base = cached(spec, iso, jl, spec.rotational)
    main = _main_lines(t)
    t = Template(*(getattr(t, f)[main] for f in Template.__dataclass_fields__))
    base = base[main]
    stg = _strength(spec, t)
    top = np.argsort(-stg)[: min(8, len(t))]
    anchors = xs
    out = []
    span_lo, span_hi = xs[0], xs[-1]
    for B in Bs:
        p = base @ full_vector(spec, {"B_upper": B, "B_lower": B, "B": B})
        tol = 0.22 * unit * B
        offs = (anchors[:, None] - p[top][None, :]).ravel()
        if spec.rotational:
            offs = offs[np.abs(offs) < 3 * unit * B]
        if origin_range is not None:
            offs = offs[(offs >= origin_range[0]) & (offs <= origin_range[1])]
        if not len(offs):
            continue
        pred = offs[:, None] + p[None, :]
        k = np.clip(np.searchsorted(xs, pred), 1, len(xs) - 1)
        near = np.minimum(np.abs(xs[k] - pred), np.abs(xs[k - 1] - pred))
        inside = (pred >= span_lo - tol) & (pred <= span_hi + tol)
        hit = (near <= tol) & inside
        score = hit.sum(axis=1) - 0.25 * (inside & ~hit).sum(axis=1)
        # strong lines inside the predicted pattern that it does not explain (in its gaps)
        lo_p, hi_p = pred.min(axis=1), pred.max(axis=1)
        n_in = np.searchsorted(xs, hi_p + tol) - np.searchsorted(xs, lo_p - tol)
        score = score - np.maximum(n_in - hit.sum(axis=1), 0)
        taken: list = []
        per_b = max(2, 240 // len(Bs))
        for j in np.argsort(-score, kind="stable"):
            if len(taken) >= per_b:
                break
            if all(abs(offs[j] - o) > tol for o in taken):
                taken.append(offs[j])
                out.append((float(score[j]), float(offs[j]), float(B)))
    out.sort(key=lambda r: -r[0])
    if not out:
        return []
    # ties among short patterns are broken by growing each promising one a few rounds
    grown = []
    seen: list = []
    for sc, nu0, B in out:
        if len(grown) >= 240:
            break
        if any(abs(B - b) < 0.004 * B and abs(nu0 - n) < 0.1 * unit * B for n, b in seen):
            continue
        seen.append((nu0, B))
        n_hit, nu0g, Bg = _quick_grow(spec, iso, xs, nu0, B, unit, jl)
        grown.append((n_hit + 0.01 * sc, nu0g, Bg, nu0, B))
    grown.sort(key=lambda r: -r[0])
    # a band's positions alone fit any J numbering (a parabola in m stays one when m is
    # shifted); the numbering comes from the missing lines at the origin and the intensities,
    # so the neighbouring numberings of the best hypotheses are refined as well
    for sc, nu0g, Bg, _, _ in list(grown[:1]):
        for k in (-3, -2, -1, 1, 2, 3):
            grown.append((sc - 0.5 * abs(k), nu0g + k * unit * Bg, Bg, nu0g + k * unit * Bg, Bg))
    best: list = []
    for sc, nu0g, Bg, _, _ in grown:
        if any(abs(Bg - b) < 0.01 * Bg and abs(nu0g - n) < 0.5 * unit * Bg for _, n, b in best):
            continue
        best.append((sc, nu0g, Bg))
        if len(best) >= n_best:
            break
    return best


def centres(obs: Obs, spec: BandSpec, iso, free: np.ndarray, *, B_range=None,
            origin_range=None) -> list[tuple[float, float]]:
    """Structured starting points (ν₀, B): B from the spacing of the strong lines; ν₀ at the
    widest gaps between strong lines (the missing lines at the origin of a band without a Q
    branch), at the densest strong cluster (a Q branch), at the area-weighted centre, at zero
    shift (pure rotational Raman), each with the neighbouring J numberings."""
    sel = strong_lines(obs, free, spec)
    order = np.argsort(obs.x[sel])
    xs, a = obs.x[sel][order], obs.area[sel][order]
    if len(xs) < 4:
        return []
    unit = spacing_unit(spec, iso)
    d = np.diff(xs)
    dd = np.sort(d[d > 0])
    B0 = _mode_spacing(dd) / unit if B_range is None else float(np.sqrt(abs(B_range[0] * B_range[1])))
    if not (np.isfinite(B0) and B0 > 0):
        return []
    step = unit * B0
    cs = []
    if spec.rotational:
        cs.append(0.0)
    w = np.where(np.isfinite(a) & (a > 0), a, 1.0)
    cs.append(float(np.sum(w * xs) / np.sum(w)))
    if len(d) >= 5:
        loc = np.array([np.median(d[max(0, i - 3): i + 4]) for i in range(len(d))])
        ratio = d / np.maximum(loc, 1e-12)
        off = _gap_offset(spec, iso) * B0
        for i in np.argsort(-ratio)[:3]:
            if ratio[i] > 1.25:
                cs.append(0.5 * (xs[i] + xs[i + 1]) - off)
    dens = np.array([np.sum(w[np.abs(xs - x) <= 0.5 * step]) for x in xs])
    cs.append(float(xs[int(np.argmax(dens))]))
    out = []
    for c in cs:
        # B from the spacing of the lines next to this centre (the widest, a gap, left out)
        near = np.sort(np.abs(xs - c).argsort()[:8])
        dl = np.sort(np.diff(xs[near]))[:-1]
        dl = dl[dl > 0.3 * step]
        Bs = {B0} if B_range is not None or not len(dl) else {B0, float(np.median(dl)) / unit}
        if B_range is None:  # the spacing estimates can be a few % off (impurity lines, Fortrat
            # compression of a branch): B 6 % either side, for the numbering at the centre
            Bs |= {B0 * 0.94, B0 * 1.06}
        for Bc in sorted(Bs):
            ks = (-2, -1, -0.5, 0, 0.5, 1, 2) if Bc in (B0,) or len(Bs) < 3 else (-1, -0.5, 0, 0.5, 1)
            for k in ks:
                nu0 = c + k * unit * Bc
                if origin_range is not None and not origin_range[0] <= nu0 <= origin_range[1]:
                    continue
                if all(abs(nu0 - n) > 0.2 * unit * Bc or abs(Bc - b) > 0.02 * Bc for n, b in out):
                    out.append((nu0, Bc))
    return out


@functools.lru_cache(maxsize=64)
def _gap_offset(spec: BandSpec, iso) -> float:
    """Where the middle of the widest gap between the band's low-J lines lies, in units of B,
    from the band origin (0 for a Σ–Σ band; −1 for ¹⁶O¹²C¹⁶O, whose gap is P(2)…R(0))."""
    t, A = cached(spec, iso, 6, spec.rotational)
    keep = (t.branch != "Q") & (t.sign > 0)
    p = np.unique(np.round(A[keep] @ full_vector(spec, {"B_upper": 1.0, "B_lower": 1.0, "B": 1.0}), 9))
    if len(p) < 2:
        return 0.0
    i = int(np.argmax(np.diff(p)))
    return float(0.5 * (p[i] + p[i + 1]))


def edge_centres(obs: Obs, spec: BandSpec, iso, free: np.ndarray) -> list[tuple[float, float]]:
    """Starting points for a partial band, one branch of which is seen: ν₀ beyond either end of
    the lines, half a spacing to four spacings out (B from the most common spacing)."""
    xs = np.sort(obs.x[strong_lines(obs, free, spec)])
    if len(xs) < 4:
        return []
    d = np.diff(xs)
    B0 = _mode_spacing(np.sort(d[d > 0])) / spacing_unit(spec, iso)
    if not (np.isfinite(B0) and B0 > 0):
        return []
    step = spacing_unit(spec, iso) * B0
    out = []
    for B in (B0 * 0.97, B0 * 1.03):
        for k in np.arange(0.5, 4.01, 0.5):
            out += [(float(xs[0] - k * step), B), (float(xs[-1] + k * step), B)]
    return out


def _mode_spacing(d: np.ndarray) -> float:
    """The most common neighbour spacing (a smoothed histogram of log spacing), among spacings
    above a fifth of the 90th percentile (dense Q branches and blends give small ones)."""
    if not len(d):
        return float("nan")
    d = d[d >= 0.2 * np.quantile(d, 0.9)]
    ld = np.log(d)
    grid = np.linspace(ld.min(), ld.max(), 200)
    dens = np.exp(-0.5 * ((grid[:, None] - ld[None, :]) / 0.02) ** 2).sum(axis=1)
    return float(np.exp(grid[int(np.argmax(dens))]))


def _quick_grow(spec: BandSpec, iso, xs: np.ndarray, nu0: float, B: float, unit: float, j0: int,
                rounds: int = 5) -> tuple[int, float, float]:
    """Lines a hypothesis explains after a few cheap rounds of nearest-line matching and an
    unweighted fit of ν₀, B′, B″ (and one D) with the J range growing; (count, ν₀, B″)."""
    vals = start_values(spec, nu0, B)
    names = ("zero_offset", "B") if spec.rotational else ("band_origin", "B_upper", "B_lower")
    jcur, n_hit = j0, 0
    for _ in range(rounds):
        t, A = cached(spec, iso, jcur, spec.rotational)
        main = _main_lines(t)
        t = Template(*(getattr(t, f)[main] for f in Template.__dataclass_fields__))
        A = A[main]
        pred = A @ full_vector(spec, vals)
        k = np.clip(np.searchsorted(xs, pred), 1, len(xs) - 1)
        pick = np.where(np.abs(xs[k] - pred) < np.abs(xs[k - 1] - pred), k, k - 1)
        hit = np.abs(xs[pick] - pred) <= 0.22 * unit * abs(vals.get("B", vals.get("B_lower", B)))
        n_hit = int(len(np.unique(pick[hit])))
        if hit.sum() < len(names) + 2:
            break
        cols = [spec.names.index(n) for n in names]
        M = A[hit][:, cols]
        if hit.sum() >= len(names) + 6:  # one centrifugal constant D′ = D″ once lines allow
            dcol = A[hit][:, spec.names.index("D")] if spec.rotational else \
                A[hit][:, spec.names.index("D_upper")] + A[hit][:, spec.names.index("D_lower")]
            M = np.column_stack([M, dcol])
        coef, *_ = np.linalg.lstsq(M, xs[pick[hit]], rcond=None)
        vals = dict(vals, **dict(zip(names, coef[: len(names)].tolist())))
        if len(coef) > len(names):
            d = float(coef[-1])
            vals.update({"D": d} if spec.rotational else {"D_upper": d, "D_lower": d})
        jcur = int(t.J_lower[hit].max()) + 6
    Bv = vals.get("B", vals.get("B_lower", B))
    return n_hit, float(vals.get("zero_offset", vals.get("band_origin", nu0))), float(Bv)
