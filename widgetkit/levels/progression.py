"""Vibrational progressions: label band centres as fundamental, overtones and
hot bands, and fit G(v).

Model (Herzberg, *Spectra of Diatomic Molecules*)::

    ν(v′ ← v″) = G(v′) − G(v″),  G(v) = ωe(v+½) − ωexe(v+½)² + ωeye(v+½)³

linear in (ωe, ωexe, ωeye).

Labelling search (:func:`fit_progression`): every pair of observed bands and
every pair of candidate labels (v′ ≤ ``v_max``, v″ ≤ ``hot_max``) gives ωe
and ωexe exactly; hypotheses with 0 < ωexe/ωe ≤ ``max_anharmonicity`` label
each band with its nearest predicted label. Each distinct labelling is refitted
(two terms, and three when at least four bands are labelled) and scored by

    χ² + k ln n + 10 × (expected bands missing) + 25 × (outliers)
       + 25 × (hot bands stronger than their Boltzmann factor allows at the given temperature)
       + 1000 when ωe is far from the handbook value of a known molecule

(for the ``max_labellings`` distinct labellings nearest to their hypotheses)
where χ² uses the stated uncertainties (1 cm⁻¹ when none are given), k is the
number of parameters, and a band v′-v″ "expects" the stronger band
(v′−1)-(v″−1) (hot band) or (v′−1)-0 (overtone), the fundamental 1-0 being
expected by all; the hot-band check needs the band areas
(:func:`.plausibility.hot_band_reasons`). The lowest score wins; ties go to
lower quantum numbers.

Plausibility (:mod:`.plausibility`): a labelling whose ωe is outside a factor
of 1.25 of the mass-scaled handbook ωe of a known molecule is refused; the
result is ``status="doubtful"``, with
``reasons``, when a hot band is stronger than its Boltzmann factor allows,
when two bands look like the P and R branch maxima of one unresolved band,
when the fit has no degrees of freedom (its standard errors are then NaN),
when fewer than half the bands fit, or when another labelling scores almost
as well.

Derived constants:

* force_constant k = 4π²c²μωe² (N/m; c in cm/s, μ in kg);
* D_e_morse = ωe²/(4ωexe) (the Morse well depth of the two-term G);
* morse_a, the Morse range parameter a = 2πc ωe sqrt(μ / (2 D_e)) in Å⁻¹ (when the
  molecule is given; :func:`widgetkit.oscillator.morse_parameters`);
* zero_point G(0) = ωe/2 − ωexe/4 + ωeye/8;
* D_0_birge_sponer: **convention** — the area under the fitted
  ΔG(v+½) = G(v+1) − G(v) curve plotted against v+½, from v+½ = 0 to its
  first zero; for the two-term model this is (ωe − ωexe)²/(4ωexe) =
  D_e_morse − G(0) exactly.

Errors are propagated from the covariance by numerical gradients.
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import constants as sc

from ..errors import AssignmentError
from ..oscillator.potentials import morse_parameters
from ._lsq import SingularDesign, propagate
from ._progression_search import (
    _P_HANDBOOK,
    _P_OUT,
    _criterion,
    _design,
    _fit_labelling,
    _labels,
    labellings,
)
from .candidates import band_label
from .molecule import Diatomic
from .plausibility import branch_pair_reason, hot_band_reasons, vibrational_problem

__all__ = ["Progression", "fit_progression", "assign_progression", "birge_sponer"]



@dataclass(frozen=True)
class Progression:
    """Result of :func:`fit_progression`.

    Attributes
    ----------
    assignments : DataFrame
        ``position, position_err, v_upper, v_lower, label, kind, calc, obs_minus_calc, outlier``
        (+ ``line_id`` from :func:`assign_progression`), input order.
    constants : DataFrame
        ``isotopologue, name, value, stderr, unit``.
    covariance : DataFrame
        Of the fitted ωe, ωexe (, ωeye).
    score : float
        Criterion of the chosen labelling (lower is better).
    alternatives : DataFrame
        The best other labellings: ``labels, n_params, score``.
    messages : list of str
    status : {"ok", "doubtful"}
    reasons : list of str
        Why the result is doubtful (empty when ok).
    """

    assignments: pd.DataFrame
    constants: pd.DataFrame
    covariance: pd.DataFrame = field(repr=False)
    score: float = 0.0
    alternatives: pd.DataFrame = field(default=None, repr=False)
    messages: list = field(default_factory=list)
    status: str = "ok"
    reasons: list = field(default_factory=list)


def birge_sponer(omega_e: float, omega_e_x_e: float, omega_e_y_e: float = 0.0) -> float:
    """Area under ΔG(v+½) against v+½ from 0 to its first zero (cm⁻¹); see the module docstring.

    ΔG(u) = ωe − ωexe(2u+1) + ωeye(3u² + 3u + 1), u = v+½.
    """
    p = np.polynomial.Polynomial([omega_e - omega_e_x_e + omega_e_y_e,
                                  -2 * omega_e_x_e + 3 * omega_e_y_e, 3 * omega_e_y_e])
    roots = [z.real for z in p.roots() if abs(z.imag) < 1e-9 and z.real > 0]
    if not roots:
        return float("nan")
    P = p.integ()
    return float(P(min(roots)) - P(0.0))


def fit_progression(
    band_origins,
    *,
    uncertainties=None,
    molecule: Diatomic | None = None,
    isotopologue: str | None = None,
    outlier_sigma: float = 4.0,
    v_max: int = 6,
    hot_max: int = 3,
    max_anharmonicity: float = 0.05,
    n_terms: int | None = None,
    locks: dict | None = None,
    max_labellings: int = 24,
    areas=None,
    temperature: float | None = None,
    widths=None,
) -> Progression:
    """Label band centres (fundamental, overtones, hot bands) and fit ωe, ωexe (, ωeye).

    Parameters
    ----------
    band_origins : array_like, shape (n,)
        Band centres, cm⁻¹ (n ≥ 2).
    uncertainties : array_like, shape (n,), optional
        Their standard errors (cm⁻¹). Without them the labelling uses 1 cm⁻¹
        and the reported errors come from the scatter.
    molecule : Diatomic, optional
        Needed for ``force_constant``.
    isotopologue : str, optional
        Which isotopologue's reduced mass to use (default the most abundant).
    outlier_sigma : float
        Bands further than this many σ from the fit are flagged and left out.
    v_max, hot_max : int
        Highest v′ and v″ considered.
    max_anharmonicity : float
        Largest ωexe/ωe accepted for a labelling (typical molecules 0.002–0.03).
    n_terms : {2, 3}, optional
        Force the two- or three-term G(v); default chosen by the score (three
        terms need at least four bands).
    max_labellings : int
        How many distinct labellings, ranked by their distances to the exact
        two-band solutions, are refitted and scored.
    locks : dict, optional
        band index (position in ``band_origins``) -> (v_upper, v_lower): those
        bands keep these labels in every labelling tried.
    areas : array_like, shape (n,), optional
        Integrated band areas, for the hot-band check against the Boltzmann
        factor (labellings that fail it score worse).
    temperature : float, optional
        K, for the hot-band check (without it, hot bands that need more than
        :data:`.plausibility.HOT_BAND_MAX_TEMPERATURE` are doubtful).
    widths : array_like, shape (n,), optional
        Band FWHMs (cm⁻¹), for the check against unresolved P and R branch maxima.

    Notes
    -----
    Positions alone do not fix the vibrational numbering (relabelling every
    band v -> v+1 is absorbed by different constants); the numbering comes from
    the expectation that the stronger bands (the fundamental first) are
    present. Lock a band when that expectation does not hold.

    Returns
    -------
    Progression

    Raises
    ------
    AssignmentError
        Fewer than two bands, non-finite values, or no consistent labelling.
    """
    x = np.asarray(band_origins, dtype=float).ravel()
    n = len(x)
    if n < 2:
        raise AssignmentError(f"a progression needs at least 2 band centres to fit ωe and ωexe, got {n}")
    if not np.all(np.isfinite(x)) or np.any(x <= 0):
        raise AssignmentError("band centres must be finite and > 0 cm-1")
    absolute = uncertainties is not None
    s = np.ones(n) if uncertainties is None else np.asarray(uncertainties, dtype=float).ravel()
    if s.shape != x.shape or not np.all(np.isfinite(s) & (s > 0)):
        raise AssignmentError("uncertainties must be one finite positive value per band centre")
    iso = None
    if molecule is not None:
        iso = molecule.isotopologue(isotopologue) if isotopologue else molecule.main
    ar = None if areas is None else np.asarray(areas, dtype=float).ravel()
    if ar is not None and ar.shape != x.shape:
        raise AssignmentError(f"areas must be one value per band centre ({n}), got {ar.shape}")
    if n_terms not in (None, 2, 3):
        raise AssignmentError(f"n_terms must be 2, 3 or None, got {n_terms}")
    L = _labels(v_max, hot_max)
    rows = labellings(x, s, L, locks, max_anharmonicity=max_anharmonicity,
                      max_labellings=max_labellings, v_max=v_max, hot_max=hot_max)
    cands = []
    for u in rows:
        u = np.array(u)
        valid = u >= 0
        if valid.sum() < 2:
            continue
        lab = L[u[valid]]
        for k in ((2, 3) if n_terms is None else (n_terms,)):
            if k == 3 and valid.sum() < 4:
                continue
            try:
                f, r, out = _fit_labelling(x[valid], s[valid], lab, k, outlier_sigma, True)
            except SingularDesign:
                continue
            # only a given temperature ranks labellings (an implied one moves with ωe itself)
            hot = 0 if not temperature else len(hot_band_reasons(
                x[valid], lab, None if ar is None else ar[valid], f.beta, temperature))
            crit = (_criterion(f, r, out, s[valid], lab, k, hot) + _P_OUT * int((~valid).sum())
                    + (_P_HANDBOOK if vibrational_problem(f.beta[0], iso) else 0.0))
            cands.append((crit, k, tuple(u.tolist())))
    if not cands:
        raise AssignmentError("no labelling could be fitted; give more band centres")
    cands.sort()
    score, k, u = cands[0]
    u = np.array(u)
    valid = u >= 0
    lab_v = L[u[valid]]
    f, r_v, out_v = _fit_labelling(x[valid], s[valid], lab_v, k, outlier_sigma, absolute)
    problem = vibrational_problem(f.beta[0], iso)
    if problem:
        raise AssignmentError(
            f"no labelling of these band centres gives a plausible ωe for {iso.name}: the best, "
            f"{', '.join(band_label(*t) for t in lab_v)}, gives {problem}. Check the molecule, "
            "and whether the bands are bands of it (two branch maxima of one unresolved band are "
            "not two bands: fit the contour with s.fit_band_model(molecule, ...))")
    msgs = []
    lbl = lambda row: [band_label(*L[j]) if j >= 0 else "?" for j in row]  # noqa: E731
    alt = pd.DataFrame([{"labels": lbl(c[2]), "n_params": c[1], "score": c[0]}
                        for c in cands[1:6]], columns=["labels", "n_params", "score"])
    reasons = []
    if len(cands) > 1 and cands[1][0] - score < 2.0 and cands[1][2] != tuple(u.tolist()):
        reasons.append("another labelling scores almost as well: "
                       + ", ".join(alt["labels"].iloc[0])
                       + f" (score {cands[1][0]:.2f} vs {score:.2f}); lock one band by hand")
    table, lab, out_msgs = _table(x, s if absolute else None, valid, lab_v, k, f, out_v)
    msgs += out_msgs
    if f.dof <= 0:
        reasons.append(f"as many bands ({int(valid.sum() - out_v.sum())}) as fitted constants ({k}): "
                       "the fit passes through every band and nothing tests it, so the standard "
                       "errors are unknown (NaN); add a band")
    n_fit = int(valid.sum() - out_v.sum())
    if n_fit < 0.5 * n:
        reasons.append(f"only {n_fit} of {n} band centres fit one progression, the others are "
                       "flagged: they may not be band centres at all (the rotational lines of one "
                       "band? assign those with kind='rovibrational')")
    reasons += hot_band_reasons(x, lab, ar, f.beta, temperature)
    pair = branch_pair_reason(x, ar, widths, molecule, temperature)
    if pair:
        reasons.append(pair)
    msgs += [f"DOUBTFUL: {r}" for r in reasons]
    names = ["omega_e", "omega_e_x_e", "omega_e_y_e"][:k]
    cov = f.cov if np.all(np.isfinite(f.cov)) else np.full_like(f.cov, np.nan)
    consts = _derived(f.beta, cov, names, iso)
    cdf = pd.DataFrame(consts, columns=["isotopologue", "name", "value", "stderr", "unit"])
    return Progression(table, cdf, pd.DataFrame(cov, index=names, columns=names), float(score),
                       alt, msgs, "doubtful" if reasons else "ok", reasons)


def _table(x, s, valid, lab_v, k, f, out_v):
    """The assignments table of a labelling, its labels (n, 2; −1 where left out) and the
    messages about the bands flagged or left out."""
    n = len(x)
    msgs = []
    lab = np.full((n, 2), -1)
    lab[valid] = lab_v
    calc = np.full(n, np.nan)
    calc[valid] = _design(lab_v, k) @ f.beta
    out = ~valid
    out[valid] = out_v
    r = x - calc
    kinds = [None if vu < 0 else "hot" if vl > 0 else ("fundamental" if vu == 1 else "overtone")
             for vu, vl in lab]
    vu_col = pd.array(lab[:, 0], dtype="Int64")
    vl_col = pd.array(lab[:, 1], dtype="Int64")
    vu_col[~valid] = pd.NA
    vl_col[~valid] = pd.NA
    table = pd.DataFrame({
        "position": x, "position_err": np.full(n, np.nan) if s is None else s,
        "v_upper": vu_col, "v_lower": vl_col,
        "label": [band_label(a, b) if a >= 0 else None for a, b in lab], "kind": kinds,
        "calc": calc, "obs_minus_calc": r, "outlier": out,
    })
    for i in np.nonzero(out)[0]:
        if valid[i]:
            msgs.append(f"band at {x[i]:.3f} cm-1 ({table['label'][i]}) is {r[i]:+.3f} cm-1 from "
                        "the fit: flagged as an outlier and left out")
        else:
            msgs.append(f"band at {x[i]:.3f} cm-1 fits no free label (another band is nearer to "
                        "it): flagged as an outlier, unlabelled and left out")
    return table, lab, msgs


def _derived(beta, cov, names, iso) -> list:
    name = iso.name if iso is not None else ""
    b = np.r_[beta, 0.0] if len(beta) == 2 else np.asarray(beta)
    rows = [{"isotopologue": name, "name": nm, "value": float(v), "stderr": float(np.sqrt(cov[i, i])),
             "unit": "cm-1"} for i, (nm, v) in enumerate(zip(names, beta, strict=True))]
    funcs = {
        "D_e_morse": (lambda p: p[0] ** 2 / (4 * p[1]), "cm-1"),
        "zero_point": (lambda p: p[0] / 2 - p[1] / 4 + p[2] / 8, "cm-1"),
        "D_0_birge_sponer": (lambda p: birge_sponer(p[0], p[1], p[2]), "cm-1"),
    }
    if iso is not None:
        mu = iso.reduced_mass * sc.atomic_mass
        funcs["force_constant"] = (lambda p: 4 * np.pi**2 * (sc.c * 100) ** 2 * mu * p[0] ** 2, "N/m")
        # the Morse potential D_e (1 − exp(−a (r − r_e)))² the two-term G(v) implies
        # (none when the fitted omega_e and omega_e_x_e are not both positive)
        funcs["morse_a"] = (lambda p: morse_parameters(p[0], p[1], iso.reduced_mass)["a"]
                            if p[0] > 0 and p[1] > 0 else np.nan, "1/Å")
    for nm, (fn, unit) in funcs.items():
        v = fn(b)
        g = np.zeros(len(beta))
        for j in range(len(beta)):
            h = 1e-6 * max(abs(b[j]), 1e-3)
            bp, bm = b.copy(), b.copy()
            bp[j] += h
            bm[j] -= h
            g[j] = (fn(bp) - fn(bm)) / (2 * h)
        rows.append({"isotopologue": name, "name": nm, "value": float(v),
                     "stderr": propagate(g, cov), "unit": unit})
    return rows


def assign_progression(lines: pd.DataFrame, molecule: Diatomic | None = None, *,
                       locks: dict | None = None, **opts) -> Progression:
    """:func:`fit_progression` on a lines table (``line_id, position``, optional ``position_err``,
    ``area`` and ``fwhm`` for the plausibility checks).

    ``locks``: line_id -> dict with ``v_upper`` and ``v_lower``, or ``label``
    like "2-0"; those lines keep their labels. The result's ``assignments``
    gains the ``line_id`` column (first).
    """
    if not isinstance(lines, pd.DataFrame) or not {"line_id", "position"} <= set(lines.columns):
        raise AssignmentError("lines must be a DataFrame with columns line_id, position (position_err)")
    err = None
    if "position_err" in lines.columns:
        e = lines["position_err"].to_numpy(dtype=float)
        if np.all(np.isfinite(e) & (e > 0)):
            err = e
    where = {v: i for i, v in enumerate(lines["line_id"].tolist())}
    band_locks = {}
    for lid, lab in (locks or {}).items():
        if lid not in where:
            raise AssignmentError(f"locked line_id {lid!r} is not in the lines table; clear that lock "
                                  "with s.clear_assignment(line_id)")
        lab = dict(lab or {})
        if lab.get("label") is not None:
            m = re.fullmatch(r"\s*(\d+)\s*-\s*(\d+)\s*", str(lab["label"]))
            if not m:
                raise AssignmentError(f"lock of line {lid!r}: a band label looks like '2-0' "
                                      f"(v_upper-v_lower), got {lab['label']!r}")
            vu, vl = int(m.group(1)), int(m.group(2))
        elif lab.get("v_upper") is not None and lab.get("v_lower") is not None:
            vu, vl = int(lab["v_upper"]), int(lab["v_lower"])
        else:
            raise AssignmentError(f"lock of line {lid!r}: give label='2-0' or v_upper and v_lower")
        if not vu > vl >= 0:
            raise AssignmentError(f"lock of line {lid!r}: need v_upper > v_lower >= 0, got {vu}-{vl}")
        if (vu, vl) in band_locks.values():
            raise AssignmentError(f"contradictory locks: two lines are locked as band {vu}-{vl}; "
                                  "clear one with s.clear_assignment(line_id)")
        band_locks[where[lid]] = (vu, vl)
    col = lambda c: lines[c].to_numpy(dtype=float) if c in lines.columns else None  # noqa: E731
    opts.setdefault("areas", col("area"))
    opts.setdefault("widths", col("fwhm"))
    p = fit_progression(lines["position"].to_numpy(dtype=float), uncertainties=err,
                        molecule=molecule, locks=band_locks, **opts)
    table = p.assignments.copy()
    table.insert(0, "line_id", lines["line_id"].to_numpy())
    return dataclasses.replace(p, assignments=table)
