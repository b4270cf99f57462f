"""Internals of :func:`widgetkit.levels.assign_rovibrational`: input checks,
locks, seeding, and the predict -> match -> refit rounds (private)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import AssignmentError
from ._lsq import robust_scale
from ._seed import bootstrap, gap_hypotheses, m_to_J
from .bandfit import PARAMETERS, BandFit, _design, fit_band
from .candidates import format_label, parse_label
from .molecule import Diatomic

__all__ = ["Lines", "Model", "State", "prepare_lines", "parse_locks", "seed_band", "fit_model"]

_NAMES5 = PARAMETERS["separate"]
_BIG = 1e12


@dataclass(frozen=True)
class Lines:
    """Checked input lines (input order); ``sigma`` is None without stated errors."""

    ids: np.ndarray
    x: np.ndarray
    sigma: np.ndarray | None
    area: np.ndarray
    area_err: np.ndarray | None
    fwhm: np.ndarray | None
    order: np.ndarray  # argsort of x
    messages: tuple = ()

    @property
    def n(self) -> int:
        return len(self.x)


def prepare_lines(lines: pd.DataFrame) -> Lines:
    """Check the lines table and pull out its columns."""
    if not isinstance(lines, pd.DataFrame):
        raise AssignmentError("lines must be a DataFrame with columns line_id, position, position_err, area")
    for col in ("line_id", "position"):
        if col not in lines.columns:
            raise AssignmentError(f"lines has no column {col!r}; give the table of s.lines "
                                  "(line_id, position, position_err, area)")
    ids = lines["line_id"].to_numpy()
    if len(set(ids.tolist())) != len(ids):
        dup = pd.Series(ids)[pd.Series(ids).duplicated()].tolist()[:5]
        raise AssignmentError(f"line_id values repeat ({dup}); every line needs its own id")
    x = lines["position"].to_numpy(dtype=float)
    bad = ~np.isfinite(x)
    if bad.any():
        raise AssignmentError(f"position is not finite for line_id {ids[bad].tolist()[:5]}; "
                              "remove or refit those lines")
    msgs = []
    sigma = None
    if "position_err" in lines.columns:
        s = lines["position_err"].to_numpy(dtype=float)
        good = np.isfinite(s) & (s > 0)
        if good.all():
            sigma = s
        elif good.any():
            sigma = np.where(good, s, np.max(s[good]))
            msgs.append(f"{int((~good).sum())} lines have no usable position_err; they were given the "
                        f"largest stated error, {np.max(s[good]):.3g} cm-1")
    if sigma is None:
        msgs.append("no position errors given: weights are equal and standard errors come from the "
                    "scatter of the residuals")
    area = (lines["area"].to_numpy(dtype=float) if "area" in lines.columns
            else np.full(len(x), np.nan))
    ae = lines["area_err"].to_numpy(dtype=float) if "area_err" in lines.columns else None
    fw = lines["fwhm"].to_numpy(dtype=float) if "fwhm" in lines.columns else None
    return Lines(ids, x, sigma, area, ae, fw, np.argsort(x, kind="stable"), tuple(msgs))


def parse_locks(locks: Mapping | None, data: Lines, molecule: Diatomic, band) -> dict:
    """line index -> (isotopologue, J_upper or None, J_lower or None)."""
    out: dict[int, tuple] = {}
    if not locks:
        return out
    where = {v: i for i, v in enumerate(data.ids.tolist())}
    names = [i.name for i in molecule.isotopologues]
    seen: dict[tuple, object] = {}
    for lid, lab in locks.items():
        if lid not in where:
            raise AssignmentError(f"locked line_id {lid!r} is not in the lines table; clear that lock "
                                  "with s.clear_assignment(line_id)")
        lab = dict(lab or {})
        unknown = set(lab) - {"isotopologue", "v_upper", "v_lower", "J_upper", "J_lower", "label"}
        if unknown:
            raise AssignmentError(f"lock of line {lid!r}: unknown field(s) {sorted(unknown)}; use "
                                  "isotopologue, v_upper, v_lower, J_upper, J_lower, label")
        iso = lab.get("isotopologue")
        if iso is not None and iso not in names:
            raise AssignmentError(f"lock of line {lid!r}: {iso!r} is not an isotopologue of {molecule}; "
                                  f"known: {', '.join(names)}")
        for key, want in (("v_upper", band[0]), ("v_lower", band[1])):
            if key in lab and lab[key] is not None and int(lab[key]) != want:
                raise AssignmentError(
                    f"lock of line {lid!r} says {key}={lab[key]} but the band being assigned is "
                    f"{band[0]}-{band[1]}; pass band=({lab.get('v_upper', band[0])}, "
                    f"{lab.get('v_lower', band[1])}) or clear that lock")
        ju, jl = lab.get("J_upper"), lab.get("J_lower")
        if lab.get("label") is not None:
            lju, ljl = parse_label(lab["label"])
            if (ju is not None and int(ju) != lju) or (jl is not None and int(jl) != ljl):
                raise AssignmentError(f"lock of line {lid!r}: label {lab['label']!r} contradicts "
                                      f"J_upper={ju}, J_lower={jl}; give one or make them agree")
            ju, jl = lju, ljl
        if (ju is None) != (jl is None):
            raise AssignmentError(f"lock of line {lid!r}: give both J_upper and J_lower, or a label")
        if ju is not None:
            ju, jl = int(ju), int(jl)
            if abs(ju - jl) != 1:
                raise AssignmentError(
                    f"lock of line {lid!r}: {format_label(ju, jl) if abs(ju - jl) <= 1 else ju - jl} "
                    "is not a P or R line; a ¹Σ–¹Σ band has no Q branch (ΔJ = 0)")
            iso = iso or molecule.main.name
            key = (iso, ju, jl)
            if key in seen:
                raise AssignmentError(
                    f"contradictory locks: lines {seen[key]!r} and {lid!r} are both locked as "
                    f"{format_label(ju, jl)} of {iso}; clear one with s.clear_assignment(line_id)")
            seen[key] = lid
        out[where[lid]] = (iso, ju, jl)
    return out


@dataclass
class Model:
    """Band constants of one sub-band used for prediction."""

    values: dict
    cov5: np.ndarray
    kind: str  # "fit", "scaled", "offset"
    scatter: float  # σ scale of observed lines (Birge factor × σ, or the rms)
    floor: float = 0.0
    fit: BandFit | None = None
    mode: str = "separate"
    jmax: int = 10
    tag: str = ""
    #: intensity model ln(area/(ν L)) = a + b E″ and its scatter, from the sub-band's own lines
    intensity: tuple | None = None

    def log_area(self, Ju, Jl, nu) -> np.ndarray:
        """Expected ln(area) of lines (NaN without an intensity model)."""
        if self.intensity is None:
            return np.full(len(nu), np.nan)
        a, b, _ = self.intensity
        J = np.asarray(Jl, dtype=float)
        E = self.values["B_lower"] * J * (J + 1) - self.values["D_lower"] * (J * (J + 1)) ** 2
        L = np.where(np.asarray(Ju) > J, J + 1.0, J)
        with np.errstate(divide="ignore", invalid="ignore"):
            return a + b * E + np.log(np.abs(nu) * L)

    def predict(self, Ju, Jl):
        A = _design(Ju, Jl, "separate")
        v = np.array([self.values[k] for k in _NAMES5])
        var = np.einsum("ij,jk,ik->i", A, self.cov5, A) + self.floor**2
        return A @ v, np.sqrt(np.clip(var, 0, None))


def _to5(bf: BandFit) -> np.ndarray:
    T = np.zeros((5, len(bf.names)))
    for j, nm in enumerate(bf.names):
        if nm == "D":
            T[3, j] = T[4, j] = 1.0
        else:
            T[_NAMES5.index(nm), j] = 1.0
    cov = bf.fit.cov if np.all(np.isfinite(bf.fit.cov)) else bf.fit.cov_unscaled
    return T @ cov @ T.T


def fit_model(Ju, Jl, y, sigma, locked, *, centrifugal, outlier_sigma, fixed: Model | None = None,
              allow_offset: bool = False):
    """Fit one sub-band with outlier rejection.

    Returns (Model, outlier mask, mode message or None). ``fixed`` supplies the
    constants held fixed in the band-origin-only fit of a sparse sub-band.
    """
    n = len(y)
    modes = {"separate": ["separate", "shared", "none"], "shared": ["shared", "none"],
             "none": ["none"]}.get(centrifugal)
    if modes is None:
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    out = np.zeros(n, dtype=bool)
    for _ in range(12):
        use = ~out
        model = _fit_once(Ju[use], Jl[use], y[use], None if sigma is None else sigma[use],
                          modes, fixed if allow_offset else None)
        calc, _ = model.predict(Ju, Jl)
        r = y - calc
        dof = int(use.sum()) - (1 if model.kind == "offset" else len(model.fit.names))
        if sigma is not None:
            z = r / sigma
            b = max(1.0, robust_scale(z[use])) if dof >= 2 else 1.0
            zz = np.abs(z) / b
            model.scatter = b
        else:
            s = robust_scale(r[use]) if dof >= 2 else np.nan
            s = s if np.isfinite(s) and s > 0 else max(float(np.sqrt(np.mean(r[use] ** 2))), 1e-12)
            zz = np.abs(r) / s
            model.scatter = s
        new = (zz > outlier_sigma) & ~locked if dof >= 2 else np.zeros(n, dtype=bool)
        if np.array_equal(new, out):
            break
        out = new
    msg = None
    if model.mode != centrifugal:
        msg = (f"too few lines ({int((~out).sum())}) for centrifugal={centrifugal!r}: fitted "
               + ("the band origin only, other constants scaled from the strongest sub-band"
                  if model.kind == "offset" else f"with centrifugal={model.mode!r}"))
    return model, out, msg


def _fit_once(Ju, Jl, y, sigma, modes, fixed):
    n = len(y)
    for mode in modes:
        p = len(PARAMETERS[mode])
        if n < p + 1 or (fixed is not None and n < p + 2):
            continue
        try:
            bf = fit_band(Ju, Jl, y, sigma, centrifugal=mode)
        except AssignmentError:
            continue
        return Model(bf.values, _to5(bf), "fit", 1.0, 0.0, bf, mode)
    if fixed is not None and n >= 1:
        A = _design(Ju, Jl, "separate")
        v = np.array([fixed.values[k] for k in _NAMES5])
        d = y - A[:, 1:] @ v[1:]
        w = np.ones(n) if sigma is None else 1 / sigma**2
        nu0 = float(np.sum(w * d) / np.sum(w))
        chi2 = float(np.sum(w * (d - nu0) ** 2))
        var = 1 / np.sum(w)
        if sigma is None:
            var = var * chi2 / (n - 1) if n > 1 else np.nan
        elif n > 1:
            var *= max(1.0, chi2 / (n - 1))
        vals = dict(fixed.values, band_origin=nu0)
        cov = np.zeros((5, 5))
        cov[0, 0] = var if np.isfinite(var) else 0.0
        return Model(vals, cov, "offset", 1.0, 0.0 if np.isfinite(var) else 0.05, None, "offset")
    raise AssignmentError(
        f"fewer assigned lines ({n}) than band constants to fit (at least 4 lines of both branches "
        "are needed); lock two lines by hand with s.set_assignment(line_id, label='R(0)') and "
        "s.set_assignment(line_id, label='P(1)'), or give more lines")


def seed_band(data: Lines, locks: dict, molecule: Diatomic, band, *, frac: float, centrifugal: str,
              max_full: int = 40, outlier_sigma: float = 4.0):
    """Find and fit the first sub-band; returns (Model, isotopologue fixed by locks or None)."""
    xs = data.x[data.order]
    pos_of = np.empty(data.n, dtype=int)
    pos_of[data.order] = np.arange(data.n)
    by_iso: dict[str, dict[int, int]] = {}
    for i, (iso, ju, jl) in locks.items():
        if ju is not None:
            m = jl + 1 if ju > jl else -jl
            by_iso.setdefault(iso, {})[m] = int(pos_of[i])
    other_locked = frozenset(int(pos_of[i]) for i in locks)
    seed_iso, got = None, None
    rich = sorted(by_iso.items(), key=lambda kv: (-len(kv[1]),
                  [i.name for i in molecule.isotopologues].index(kv[0])))
    if rich and len(rich[0][1]) >= 2:
        seed_iso, init = rich[0]
        got = bootstrap(xs, init, frac=frac, forbidden=other_locked - set(init.values()),
                        area=data.area[data.order])
    else:
        pin = rich[0] if rich else None
        forb = other_locked - (set(pin[1].values()) if pin else set())
        area_s = data.area[data.order]
        mu0 = molecule.main.reduced_mass
        part = tuple(float(np.sqrt(mu0 / i.reduced_mass)) for i in molecule.isotopologues[1:])
        hyps = [h for h in gap_hypotheses(xs, area_s, frac=frac) if not (set(h.values()) & forb)]
        # a short bootstrap of every seed ranks them; the best are run in full
        short = [(bootstrap(xs, h, frac=frac, forbidden=forb, max_lines=10, area=area_s,
                            partners=part), h) for h in hyps]
        top = max((len(g) for g, _ in short), default=0)
        if not pin:
            short = [t for t in short if len(t[0]) >= top - 1]
            # the most promising distinct starts (most lines, then strongest) are run in full
            short.sort(key=lambda t: (-len(t[0]), -float(np.nansum(area_s[list(t[0].values())])),
                                      min(t[1].values())))
        cands: dict = {}
        seen_short: set = set()
        for g0, h in short:
            key0 = frozenset(g0.items())
            if key0 in seen_short:
                continue
            seen_short.add(key0)
            if not pin and len(seen_short) > max_full:
                break
            g = bootstrap(xs, h, frac=frac, forbidden=forb, area=area_s, partners=part)
            if pin and any(g.get(m) != k for m, k in pin[1].items()):
                continue
            cands.setdefault(frozenset(g.items()), (g, min(h.values())))
        if not cands:
            raise AssignmentError(
                "no band-origin gap found: no pair of neighbouring lines looks like P(1), R(0) with "
                "P(2), R(1) beyond; lock two lines by hand with s.set_assignment(line_id, "
                "label='R(0)') and s.set_assignment(line_id, label='P(1)')")
        ranked = sorted(cands.values(), key=lambda t: (-len(t[0]), t[1]))
        scored = [(_seed_score(g, xs, area_s), float(np.nansum(area_s[list(g.values())])), -i, g)
                  for g, i in ranked]
        scored.sort(key=lambda t: t[:3], reverse=True)
        got = scored[0][3]
        seed_iso = pin[0] if pin else None
    if len(got) < 4:
        raise AssignmentError(
            f"only {len(got)} lines could be indexed from the band origin; at least 4 are needed "
            "for ν0, B', B''; lock two lines by hand with s.set_assignment(line_id, label='R(0)')")
    ms = np.array(sorted(got))
    idx = data.order[np.array([got[m] for m in ms])]
    Ju, Jl = m_to_J(ms)
    sig = None if data.sigma is None else data.sigma[idx]
    # the first fit keeps a single D: a bootstrap may still hold a wrong line or two
    model, _, _ = fit_model(Ju, Jl, data.x[idx], sig, np.zeros(len(ms), bool),
                            centrifugal="none" if centrifugal == "none" else "shared",
                            outlier_sigma=outlier_sigma)
    model.jmax = int(max(Ju.max(), Jl.max())) + 3
    return model, seed_iso


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


@dataclass
class State:
    """Assignment arrays (input order) and models after refinement."""

    iso: np.ndarray
    Ju: np.ndarray
    Jl: np.ndarray
    calc: np.ndarray
    calc_err: np.ndarray
    outlier: np.ndarray
    blended: np.ndarray
    blend_with: np.ndarray
    models: dict
    seed_iso: str
    rounds: int = 0
    score: float = 0.0
    messages: list = field(default_factory=list)
    ambiguous: list = field(default_factory=list)

    @property
    def signature(self) -> tuple:
        return (tuple(self.iso.tolist()), tuple(self.Ju.tolist()), tuple(self.Jl.tolist()),
                tuple(self.outlier.tolist()), tuple(self.blended.tolist()))


