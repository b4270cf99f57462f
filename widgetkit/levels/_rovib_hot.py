"""The hot band beside a rovibrational band (private).

In a hot spectrum the level v″+1 is populated (relative population about
exp(−c₂ΔG/T)), and the band (v′+1) ← (v″+1) lies beside v′ ← v″. After the
band and its isotopologues are assigned, the hot band of each isotopologue is
predicted from their fitted constants and looked for among the lines they left:

* its lower level is the upper level of the band, so B″_hot = B′ and
  B′_hot = B′ − α_e, α_e = (B″ − B′)/(v′ − v″) (B_v = B_e − α_e(v+½)); D as fitted;
* its origin is shifted from the band's by
  [G(v′+1) − G(v″+1)] − [G(v′) − G(v″)], which is −2ωexe(v′ − v″) with the
  two-term G(v) = ωe(v+½) − ωexe(v+½)² (Herzberg, *Spectra of Diatomic
  Molecules*, 1950, ch. III; the hot band 2-1 lies at ωe − 4ωexe, the fundamental at
  ωe − 2ωexe): ωe, ωexe and ωeye from the handbook table (mass-scaled) when the
  molecule is there, otherwise estimated from the band itself with the Pekeris relation
  (:func:`._seed.anharmonic_estimate`);
* the predicted sub-band is placed by an offset search (among the offsets that put
  at least 0.6 times the most predicted lines on unassigned ones, the one nearest the
  prediction; within a tenth of the predicted shift with handbook constants, otherwise
  within 0.45 of the line spacing) and refined by the predict -> match -> refit rounds of the band
  (:func:`._rovib_match.refine`) on the lines left;
* it is accepted with at least :data:`MIN_HOT_LINES` well-fitted lines, two of each
  branch, plausible B values (:func:`.plausibility.rotational_problems`), a B″ within
  1 % of the band's B′ and lines that scatter less than ten times the band's about its
  fit; otherwise its lines stay unassigned and a message says why. Its free B″ must agree with the B′
  of the band (the same level) within five standard errors or 0.2 %, or the result is
  doubtful (blends at low resolution bend it).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import AssignmentError
from ._lsq import robust_scale, weighted_lstsq
from ._rovib_core import Lines, Model, State, fit_model
from ._rovib_match import _intensity_model, match
from ._seed import anharmonic_estimate
from .candidates import band_label
from .plausibility import handbook_constants, rotational_problems
from .terms import vib_term

__all__ = ["HotBand", "find_hot_bands", "subset", "expand", "restrict", "MIN_HOT_LINES"]

#: fewest well-fitted lines (two of each branch among them) that make a hot band
MIN_HOT_LINES = 6
#: B″ of the hot band and B′ of the band (one level) must agree within this many σ ...
_B_SIGMA = 5.0
#: ... or within this fraction of B
_B_FRACTION = 2e-3
#: a B″ this fraction off the band's B′ refuses the hot band (a J numbering off by one changes
#: B′ + B″ by about 2α_e: 1.8 % for CO, 3 % for HCl)
_B_REFUSE = 1e-2
#: a hot band whose lines scatter this many times more than the band's about its fit is refused
_SCATTER = 10.0
#: the offset search takes the offset nearest the prediction that puts at least this fraction
#: of the most lines any offset puts on observed ones
_NEARLY = 0.6


@dataclass
class HotBand:
    """A hot band found: its lines (``idx`` into the input lines) and their fit."""

    iso: str
    band: tuple
    idx: np.ndarray
    Ju: np.ndarray
    Jl: np.ndarray
    calc: np.ndarray
    calc_err: np.ndarray
    outlier: np.ndarray
    blended: np.ndarray
    blend_with: np.ndarray
    model: Model
    rounds: int = 0
    messages: list = field(default_factory=list)
    #: why its constants are doubtful (empty when they are not)
    reasons: list = field(default_factory=list)

    @property
    def good(self) -> np.ndarray:
        return ~self.outlier & ~self.blended

    @property
    def label(self) -> str:
        return band_label(*self.band)


def subset(data: Lines, keep: np.ndarray) -> Lines:
    """The lines ``keep`` (indices, ascending) as a :class:`Lines` of their own."""
    pick = lambda a: None if a is None else a[keep]  # noqa: E731
    x = data.x[keep]
    return Lines(data.ids[keep], x, pick(data.sigma), data.area[keep], pick(data.area_err),
                 pick(data.fwhm), np.argsort(x, kind="stable"), data.messages)


def expand(st: State, keep: np.ndarray, n: int) -> State:
    """A state of the lines ``keep`` spread over all ``n`` lines (the others unassigned)."""
    def put(a, fill, dtype=None):
        out = np.full(n, fill, dtype=dtype if dtype is not None else a.dtype)
        out[keep] = a
        return out
    return State(iso=put(st.iso, None, object), Ju=put(st.Ju, -1), Jl=put(st.Jl, -1),
                 calc=put(st.calc, np.nan), calc_err=put(st.calc_err, np.nan),
                 outlier=put(st.outlier, False), blended=put(st.blended, False),
                 blend_with=put(st.blend_with, None, object), models=st.models,
                 seed_iso=st.seed_iso, rounds=st.rounds, score=st.score, messages=st.messages,
                 ambiguous=st.ambiguous, reasons=st.reasons)


def restrict(st: State, keep: np.ndarray) -> State:
    """The state of the lines ``keep`` only (the inverse of :func:`expand`)."""
    return State(iso=st.iso[keep], Ju=st.Ju[keep], Jl=st.Jl[keep], calc=st.calc[keep],
                 calc_err=st.calc_err[keep], outlier=st.outlier[keep], blended=st.blended[keep],
                 blend_with=st.blend_with[keep], models=st.models, seed_iso=st.seed_iso,
                 rounds=st.rounds, score=st.score, messages=st.messages,
                 ambiguous=st.ambiguous, reasons=st.reasons)


def _origin_shift(values: dict, iso, band) -> tuple[float, str]:
    """Predicted origin of the hot band minus the band's, and where the ωe values came from."""
    vu, vl = band
    hb = handbook_constants(iso)
    if hb is not None and "omega_e" in hb[0]:
        c, key = hb
        w = (c["omega_e"], c.get("omega_e_x_e", 0.0), c.get("omega_e_y_e", 0.0))
        g = lambda v: float(vib_term(v, *w))  # noqa: E731
        return (g(vu + 1) - g(vl + 1)) - (g(vu) - g(vl)), f"handbook ωe, ωexe of {key}"
    _, wx = anharmonic_estimate(values, vu, vl)
    return -2.0 * wx * (vu - vl), "ωexe estimated from the band's α_e and B_e (Pekeris relation)"


def _predicted(mdl: Model, iso, band) -> tuple[dict, float, str]:
    v = mdl.values
    vu, vl = band
    alpha = (v["B_lower"] - v["B_upper"]) / (vu - vl)
    shift, source = _origin_shift(v, iso, band)
    vals = {"band_origin": v["band_origin"] + shift, "B_upper": v["B_upper"] - alpha,
            "B_lower": v["B_upper"], "D_upper": v["D_upper"], "D_lower": v["D_upper"]}
    return vals, shift, source


def _offset_search(xf: np.ndarray, probe: Model, W: float, tol: float):
    """(best offset, lines matched, J_lower of those lines) of the predicted lines on ``xf``."""
    J = np.arange(0, probe.jmax + 1)
    ju = np.r_[J + 1, J[1:] - 1]
    jl = np.r_[J, J[1:]]
    calc0, _ = probe.predict(ju, jl)
    deltas = []
    for c in calc0:
        a, b = np.searchsorted(xf, [c - W, c + W])
        deltas.extend((xf[a:b] - c).tolist())
    if not deltas:
        return 0.0, 0, np.zeros(0, dtype=int)
    deltas = np.unique(np.round(np.array(deltas), 12))
    counts, jls = [], []
    for d in deltas:
        s = calc0 + d
        i = np.clip(np.searchsorted(xf, s), 1, len(xf) - 1)
        near = np.minimum(np.abs(xf[i] - s), np.abs(xf[i - 1] - s)) <= tol
        counts.append(int(near.sum()))
        jls.append(jl[near])
    counts = np.array(counts)
    # the offset nearest the prediction among those nearly as good as the best: a sub-band of
    # another isotopologue a little further off may hold a few more lines
    ok = np.nonzero(counts >= max(1, int(np.ceil(_NEARLY * counts.max()))))[0]
    k = int(ok[np.argmin(np.abs(deltas[ok]))])
    return float(deltas[k]), int(counts[k]), jls[k]


def _one(data: Lines, st: State, iso, pool: np.ndarray, near: np.ndarray, opts: dict,
         rounds: int):
    """The hot band of one isotopologue among the lines ``pool``: (HotBand or None, message);
    ``near`` marks those that may hold a line of the band (blends, left out of its fits)."""
    band = opts["band"]
    hot = (band[0] + 1, band[1] + 1)
    name = f"hot band {band_label(*hot)} of {iso.name}"
    mdl = st.models[iso.name]
    vals, shift, source = _predicted(mdl, iso, band)
    where = f"predicted origin {vals['band_origin']:.2f} cm-1 ({shift:+.2f} cm-1 from the band; {source})"
    if len(pool) < MIN_HOT_LINES:
        left = f"{len(pool)} {'line is' if len(pool) == 1 else 'lines are'}"
        return None, f"no {name}: only {left} left ({where})"
    spacing = vals["B_upper"] + vals["B_lower"]
    xf = np.sort(data.x[pool])
    sig = (float(np.median(data.sigma[pool])) * mdl.scatter if data.sigma is not None
           else mdl.scatter)
    tol = max(3 * sig, 0.02 * spacing)
    W = 0.45 * spacing if source.startswith("ωexe estimated") else \
        min(0.45 * spacing, max(0.1 * abs(shift), 5 * tol))
    probe = Model(vals, np.zeros((5, 5)), "scaled", mdl.scatter, tol / 2, None, "scaled",
                  mdl.jmax)
    d, count, jl = _offset_search(xf, probe, W, tol)
    if count < MIN_HOT_LINES:
        return None, (f"no {name} found: at most {count} of the {len(pool)} lines left "
                      f"{'lies' if count == 1 else 'lie'} on it "
                      f"({where}); they stay unassigned")
    start = Model(dict(vals, band_origin=vals["band_origin"] + d), np.zeros((5, 5)), "scaled",
                  mdl.scatter, tol / 2, None, "scaled", int(jl.max()) + 3)
    sub = subset(data, pool)
    try:
        hs = _label(sub, start, iso.name, mdl, opts, rounds, near)
    except AssignmentError as exc:
        return None, f"no {name}: its lines could not be fitted ({exc}); they stay unassigned"
    fit = hs.models.get(iso.name)
    # a line the band had (as an outlier) joins the hot band only as a well-fitted line
    theirs = st.iso[pool] != None  # noqa: E711
    sel = np.nonzero((hs.iso == iso.name) & ~(theirs & (hs.outlier | hs.blended)))[0]
    good = sel[~hs.outlier[sel] & ~hs.blended[sel]]
    nR = int(np.sum(hs.Ju[good] > hs.Jl[good]))
    why = None
    if fit is None or fit.kind != "fit":
        why = "too few lines for its own constants"
    elif len(good) < MIN_HOT_LINES or nR < 2 or len(good) - nR < 2:
        why = (f"{len(good)} lines fit it ({nR} R, {len(good) - nR} P; at least "
               f"{MIN_HOT_LINES} with two of each branch are needed)")
    else:
        problems = rotational_problems(fit.values, iso, hot)
        if problems:
            why = "; ".join(problems)
        else:
            why = _b_disagreement(fit, mdl, _B_REFUSE) or _scatter_problem(fit, mdl)
    if why:
        return None, f"no {name} accepted: {why} ({where}); its lines stay unassigned"
    hb = HotBand(iso.name, hot, pool[sel], hs.Ju[sel], hs.Jl[sel], hs.calc[sel],
                 hs.calc_err[sel], hs.outlier[sel], hs.blended[sel], hs.blend_with[sel], fit,
                 hs.rounds, [f"{iso.name}: {m}" for m in hs.messages])
    doubt = _b_disagreement(fit, mdl)
    if doubt:
        hb.reasons.append(f"{name}: {doubt}: blended lines, or some labels wrong")
    off = fit.values["band_origin"] - vals["band_origin"]
    return hb, (f"{name}: {len(good)} lines assigned, origin "
                f"{fit.values['band_origin']:.4f} cm-1, {off:+.3f} cm-1 from the {where}")


def _label(sub: Lines, start: Model, name: str, band_model: Model, opts: dict,
           rounds: int, near: np.ndarray) -> State:
    """Predict -> match -> refit rounds of the hot band on the lines ``sub``, with its lower
    level held at the band's upper level (B″ = B′, D″ = D′ of the band: one level, known from
    the strong band) and D′ = D″, so that a stray line cannot bend it (only ν0 and B′ are
    fitted); then its own free fit (:func:`._rovib_core.fit_model`, all five constants,
    outliers flagged). Lines ``near`` a prediction of the band are blends, left out of both."""
    frac = opts["match_fraction"]
    model, prev, st = start, None, None
    Bl, Dl = band_model.values["B_upper"], band_model.values["D_upper"]
    for r in range(1, max(1, rounds) + 1):
        st = match(sub, {}, {name: model}, frac, name)
        both = near & (st.iso == name)
        st.blended |= both
        st.blend_with[both & (st.blend_with == None)] = "a line of the band"  # noqa: E711
        sel = np.nonzero((st.iso == name) & ~st.blended)[0]
        vals, cov2, out, scatter = _fit_lower_held(st.Ju[sel], st.Jl[sel], sub.x[sel],
                                                   None if sub.sigma is None else sub.sigma[sel],
                                                   Bl, Dl, opts["outlier_sigma"])
        st.outlier[sel] = out
        cov5 = np.zeros((5, 5))
        cov5[:2, :2] = cov2
        jmax = int(max(st.Jl[sel].max(initial=0), st.Ju[sel].max(initial=0))) + 3
        model = Model(vals, cov5, "held", scatter, 0.0, None, "held", jmax)
        model.intensity = _intensity_model(sub, st, sel[~out], model)
        st.rounds = r
        if st.signature == prev:
            break
        prev = st.signature
    sel = np.nonzero((st.iso == name) & ~st.blended)[0]
    fit, out, _ = fit_model(st.Ju[sel], st.Jl[sel], sub.x[sel],
                            None if sub.sigma is None else sub.sigma[sel],
                            centrifugal=opts["centrifugal"], outlier_sigma=opts["outlier_sigma"],
                            start=st.outlier[sel])
    st.outlier[sel] = out
    st.calc[sel], st.calc_err[sel] = fit.predict(st.Ju[sel], st.Jl[sel])
    st.models = {name: fit}
    return st


def _fit_lower_held(Ju, Jl, y, sigma, Bl: float, Dl: float, outlier_sigma: float):
    """ν0 and B′ with B″ and D″ held, and D′ = D″ (D changes little with v): weighted least
    squares with outliers left out one at a time (|obs − calc| > outlier_sigma × the robust
    scatter); (values, covariance of (ν0, B′), outlier mask, scatter factor)."""
    xl = Jl * (Jl + 1.0)
    xu = Ju * (Ju + 1.0)
    d = y + Bl * xl - Dl * xl**2 + Dl * xu**2
    A = np.column_stack([np.ones(len(y)), xu])
    out = np.zeros(len(y), dtype=bool)
    for _ in range(max(12, len(y))):
        use = ~out
        if use.sum() < 4:
            raise AssignmentError(f"only {int(use.sum())} lines fit")
        f = weighted_lstsq(A[use], d[use], None if sigma is None else sigma[use])
        r = d - A @ f.beta
        z = r / sigma if sigma is not None else r
        s = max(robust_scale(z[use]), 1.0 if sigma is not None else 1e-12)
        zz = np.abs(z) / s
        new = zz > outlier_sigma
        if (new & ~out).sum() > 1:
            worst = int(np.argmax(np.where(new & ~out, zz, -1.0)))
            new = (new & out) | (np.arange(len(y)) == worst)
        if np.array_equal(new, out):
            break
        out = new
    vals = {"band_origin": float(f.beta[0]), "B_upper": float(f.beta[1]), "B_lower": float(Bl),
            "D_upper": float(Dl), "D_lower": float(Dl)}
    return vals, f.cov, out, s


def _scatter_problem(fit: Model, band_model: Model) -> str | None:
    """Why the hot band's lines scatter too much about its fit (more than :data:`_SCATTER`
    times the band's own scatter, or its rms without stated errors), or None."""
    if fit.scatter <= _SCATTER * max(band_model.scatter, 1.0 if fit.fit.fit.absolute else 0.0):
        return None
    return (f"its lines scatter {fit.scatter / band_model.scatter:.0f} times more about its fit "
            "than the band's lines about theirs")


def _b_disagreement(fit: Model, band_model: Model, fraction: float = 0.0) -> str | None:
    """Why B″ of the hot band and B′ of the band (the same level) disagree, or None: beyond
    five standard errors and :data:`_B_FRACTION` of B, or, with ``fraction``, beyond that
    fraction of B."""
    b_hot, b_band = fit.values["B_lower"], band_model.values["B_upper"]
    e = float(np.sqrt(max(fit.cov5[2, 2], 0.0) + max(band_model.cov5[1, 1], 0.0)))
    lim = fraction * abs(b_band) if fraction else max(_B_SIGMA * e, _B_FRACTION * abs(b_band))
    if abs(b_hot - b_band) <= lim:
        return None
    return (f"its B_lower = {b_hot:.6g} cm-1 disagrees with B_upper = {b_band:.6g} cm-1 of the "
            "band, the same level")


def _on_the_band(data: Lines, st: State, *, widths: bool = False) -> np.ndarray:
    """Lines within 4 σ (σ² = σ_obs² + σ_calc²) of a prediction of a fitted sub-band of the band,
    or, with ``widths``, within half their FWHM if that is more: lines of the band left
    unmatched (a weak line of an abundant isotopologue is ten times stronger than a hot line
    and must not be taken for one), or, with ``widths``, lines that may hold one."""
    on = np.zeros(data.n, dtype=bool)
    s0 = data.sigma if data.sigma is not None else np.ones(data.n)
    half = np.zeros(data.n)
    if widths and data.fwhm is not None:
        half = np.where(np.isfinite(data.fwhm), 0.5 * data.fwhm, 0.0)
    for mdl in st.models.values():
        if mdl.kind != "fit":
            continue
        J = np.arange(0, mdl.jmax + 1)
        c, e = mdl.predict(np.r_[J + 1, J[1:] - 1], np.r_[J, J[1:]])
        order = np.argsort(c)
        c, e = c[order], e[order]
        k = np.searchsorted(c, data.x)
        for j in (k - 1, k):
            j = np.clip(j, 0, len(c) - 1)
            on |= np.abs(data.x - c[j]) <= np.maximum(4 * np.hypot(s0 * mdl.scatter, e[j]), half)
    return on


def find_hot_bands(data: Lines, st: State, locks: dict, opts: dict, *,
                   max_rounds: int = 20) -> tuple[list[HotBand], list[str]]:
    """Hot bands of the isotopologues whose band was fitted (module docstring), most abundant
    first, each among the lines left unassigned or outliers of the sub-bands of the band (such
    a line joins a hot band only when it fits it well), not locked and not taken by a hot band
    found before."""
    molecule = opts["molecule"]
    found, msgs = [], []
    taken = np.array([i in locks for i in range(data.n)], dtype=bool)
    # the lines left: unassigned ones and the outliers of the sub-bands (a hot line near one of
    # their lines may have been matched to it)
    free = ((st.iso == None) | st.outlier) & ~(_on_the_band(data, st) & ~st.outlier)  # noqa: E711
    near = _on_the_band(data, st, widths=True)
    for iso in sorted(molecule.isotopologues, key=lambda i: -i.abundance):
        mdl = st.models.get(iso.name)
        if mdl is None or mdl.kind != "fit":
            continue
        pool = np.nonzero(free & ~taken)[0]
        hb, msg = _one(data, st, iso, pool, near[pool], opts, max_rounds)
        msgs.append(msg)
        if hb is not None:
            found.append(hb)
            taken[hb.idx] = True
    return found, msgs
