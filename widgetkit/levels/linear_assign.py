"""Assignment of bands of linear molecules and of Raman spectra, with no prior constants.

Kinds (``assign_linear(lines, molecule, kind=...)``):

* ``"parallel"``: a Σ–Σ band (P and R branches) of the most abundant isotopologue, and a
  hot band from the thermally populated bending level Π (Π–Π, P and R lines from both
  e/f components, e.g. 01¹1–01¹0 of CO₂ beside 00⁰1–00⁰0) when its lines are there;
* ``"perpendicular"``: a Π–Σ band (P, Q, R; Q lines end on the f components, P and R on
  the e components of the Π level, split by the ℓ-type doubling q);
* ``"raman_rotational"``: the pure rotational Raman spectrum, S(J) lines on both sides of
  the laser line (Stokes positive, anti-Stokes negative shifts);
* ``"raman_vibrational"``: a vibrational Raman band (O, Q and S branches; Stokes side).

Which rotational levels exist comes from the molecule: nuclear-spin statistics
(:mod:`widgetkit.levels.spin`) remove every other J of ¹⁶O¹²C¹⁶O and every other N of
¹⁶O₂, so lines 4B (Raman: 8B) apart are read as one band with half its lines missing,
never as two isotopologues. Lines of other isotopologues, impurities and bands are left
unassigned and listed. The search and refinement are in :mod:`._linear_search`; the
model and fit in :mod:`._linear_model`.

Temperature from Stokes and anti-Stokes lines of the same transitions (Raman kinds):
:func:`widgetkit.levels.raman.stokes_anti_stokes_temperature`, when the laser wavenumber
is known and the detector kind is stated.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import AssignmentError
from ._linear_model import BandSpec, Obs
from ._linear_search import BandState, branch_balance, refine
from ._linear_seed import centres, edge_centres, search, strong_lines
from ._rovib_core import prepare_lines
from .linear import Linear, as_linear
from .linear_report import tables
from .linear_terms import VibLevel

__all__ = ["LinearAssignment", "assign_linear", "KINDS"]

#: the assignment kinds of this module
KINDS = ("parallel", "perpendicular", "raman_rotational", "raman_vibrational")


@dataclass(frozen=True)
class LinearAssignment:
    """Result of :func:`assign_linear`.

    Attributes
    ----------
    assignments : DataFrame
        One row per input line (input order): ``line_id, position, position_err,
        isotopologue, band, upper, lower, v_upper, v_lower, J_upper, J_lower, label, branch,
        side, m, calc, calc_err, obs_minus_calc, outlier, blended, blend_with, locked,
        weight``; unassigned lines have missing labels.
    constants : DataFrame
        ``isotopologue, band, name, value, stderr, unit``.
    covariance : dict
        Band name -> DataFrame of the fitted constants' covariance.
    kind : str
    model : str
        The model used, in words (molecule, band symmetry, spin statistics, factors).
    messages : list of str
    status : {"ok", "doubtful"}
    reasons : list of str
        Why the result is doubtful (empty when ok).
    bands : tuple of str
        The bands found (``"fundamental"``, ``"hot"``, ``"rotational"``).
    rounds : int
    """

    assignments: pd.DataFrame
    constants: pd.DataFrame
    covariance: dict = field(repr=False)
    kind: str = "parallel"
    model: str = ""
    messages: list = field(default_factory=list)
    status: str = "ok"
    reasons: list = field(default_factory=list)
    bands: tuple = ()
    rounds: int = 0

    def constant(self, name: str, band: str | None = None) -> tuple[float, float]:
        """(value, stderr) of one constant (of the first band listed when ``band`` is None)."""
        band = self.bands[0] if band is None and self.bands else band
        rows = self.constants.set_index(["band", "name"])
        if (band, name) not in rows.index:
            raise KeyError(f"no constant {name!r} of the {band} band; known: "
                           + ", ".join(sorted(set(self.constants["name"]))))
        row = rows.loc[(band, name)]
        row = row.iloc[0] if row.ndim > 1 else row
        return float(row["value"]), float(row["stderr"])


def _specs(molecule: Linear, kind: str) -> list[BandSpec]:
    centro = molecule.main.centrosymmetric
    inv = (lambda s: s) if centro else (lambda s: None)
    refl = molecule.reflection
    ground = VibLevel("ground", 0.0, 1.0, l=0, inversion=inv("g"), reflection=refl)
    if kind == "parallel":
        return [BandSpec("fundamental", ground, VibLevel("upper", 1.0, 1.0, inversion=inv("u")))]
    if kind == "perpendicular":
        return [BandSpec("fundamental", ground, VibLevel("upper", 1.0, 1.0, l=1, inversion=inv("u")))]
    if kind == "raman_rotational":
        return [BandSpec("rotational", ground, ground, "raman", rotational=True)]
    if kind == "raman_vibrational":
        return [BandSpec("fundamental", ground,
                         VibLevel("upper", 1.0, 1.0, inversion=inv("g"), reflection=refl), "raman")]
    raise AssignmentError(f"kind must be one of {', '.join(KINDS)} for a linear molecule, got {kind!r}")


def _hot_spec(molecule: Linear) -> BandSpec:
    centro = molecule.main.centrosymmetric
    return BandSpec("hot", VibLevel("bend", 1.0, 1.0, l=1, inversion="u" if centro else None),
                    VibLevel("bend+upper", 2.0, 1.0, l=1, inversion="g" if centro else None))


def _obs(data) -> Obs:
    return Obs(data.ids, data.x, data.sigma, data.area, data.fwhm)


def _lock_map(locks: Mapping | None, obs: Obs, band: str, kind: str) -> dict[int, str]:
    """obs index -> template label for locks on ``band``."""
    out: dict[int, str] = {}
    if not locks:
        return out
    where = {v: i for i, v in enumerate(obs.ids.tolist())}
    for lid, lab in locks.items():
        if lid not in where:
            raise AssignmentError(f"locked line_id {lid!r} is not in the lines table; clear that lock "
                                  "with s.clear_assignment(line_id)")
        lab = dict(lab or {})
        unknown = set(lab) - {"label", "band", "isotopologue"}
        if unknown:
            raise AssignmentError(f"lock of line {lid!r}: unknown field(s) {sorted(unknown)}; a "
                                  f"{kind} assignment takes label, band and isotopologue")
        if lab.get("label") is None or lab.get("band", "fundamental" if kind != "raman_rotational"
                                                 else "rotational") != band:
            continue
        text = str(lab["label"]).replace(" ", "")
        if kind == "raman_rotational" and obs.x[where[lid]] < 0:
            text += " aS"
        out[where[lid]] = text
    return out


def _best(obs: Obs, spec: BandSpec, iso, free: np.ndarray, locks: dict, opts: dict, *,
          prior=None, **kw) -> BandState:
    """The best refined hypothesis; ``prior(state)`` is a penalty subtracted from its score."""
    hyps = centres(obs, spec, iso, free, **kw) + [(n, b) for _, n, b in search(obs, spec, iso, free, **kw)]
    best = _refine_all(obs, spec, iso, free, locks, opts, hyps, prior)
    weak = best is None or branch_balance(best) < 0.3 or best.score < 0.6 * strong_lines(
        obs, free, spec).sum()
    if not spec.rotational and not kw and weak:
        # one branch only, or a poor fit, so far: the band origin may lie beyond the lines (a
        # partial band)
        edge = _refine_all(obs, spec, iso, free, locks, opts, edge_centres(obs, spec, iso, free), prior)
        if edge is not None and (best is None or edge.score > best.score):
            best = edge
    return best


def _refine_all(obs, spec, iso, free, locks, opts, hyps, prior) -> BandState | None:
    best = None
    for nu0, B in hyps:
        try:
            st = refine(obs, spec, iso, free, nu0, B, locks=locks, opts=opts)
        except AssignmentError:
            continue
        if locks and any(st.idx[i] < 0 for i in locks):
            st.score -= 100.0
        if prior is not None:
            st.score -= prior(st)
        if best is None or st.score > best.score:
            best = st
    return best


def assign_linear(lines: pd.DataFrame, molecule, *, kind: str = "parallel",
                  temperature: float | None = None, locks: Mapping | None = None,
                  outlier_sigma: float = 4.0, match_fraction: float = 0.3,
                  centrifugal: str = "separate", hot_bands: bool = True,
                  excitation_wavenumber: float | None = None, detector: str | None = None,
                  band_labels: tuple | None = None) -> LinearAssignment:
    """Assign the lines of a band of a linear molecule, or a Raman spectrum, and fit constants.

    Parameters
    ----------
    lines : DataFrame
        ``line_id, position`` (cm⁻¹; Raman shift for the Raman kinds) and preferably
        ``position_err``, ``area``, ``fwhm`` (the columns of ``Session.lines``).
    molecule : Linear, Diatomic or atoms text (``"OCO"``, ``"NN"``)
    kind : {"parallel", "perpendicular", "raman_rotational", "raman_vibrational"}
    temperature : float, optional
        K, compared with the rotational temperature of the areas.
    locks : mapping, optional
        line_id -> ``{"label": "R(4)", "band": "fundamental" | "hot" | "rotational"}``; a
        locked line keeps its label (``"P(10)e"`` for a component of a Π–Π band).
    outlier_sigma, match_fraction, centrifugal
        As for :func:`widgetkit.levels.assign_rovibrational`.
    hot_bands : bool
        Look for a Π–Π hot band among the lines a parallel band leaves (default True).
    excitation_wavenumber : float, optional
        Vacuum wavenumber of the laser line (``Spectrum.meta["excitation_wavenumber"]``),
        for the Stokes/anti-Stokes temperature.
    detector : {"energy", "photon_counting"}, optional
        Needed for that temperature: frequency factor ν⁴ or ν³.
    band_labels : (upper, lower), optional
        Names of the fundamental's levels in the tables (e.g. ``("00^01", "00^00")``).

    Returns
    -------
    LinearAssignment

    Raises
    ------
    AssignmentError
        Bad input (columns, duplicate ids, unknown kind or lock fields) or no band found.
    """
    mol = as_linear(molecule)
    if kind not in KINDS:
        raise AssignmentError(f"kind must be one of {', '.join(KINDS)} for a linear molecule, "
                              f"got {kind!r}")
    if not outlier_sigma > 0:
        raise AssignmentError(f"outlier_sigma must be > 0, got {outlier_sigma}")
    data = prepare_lines(lines)
    obs = _obs(data)
    iso = mol.main
    opts = {"outlier_sigma": float(outlier_sigma), "match_fraction": float(match_fraction),
            "centrifugal": centrifugal, "temperature": None if temperature is None else float(temperature)}
    free = np.ones(obs.n, dtype=bool)
    if kind == "raman_vibrational":
        free &= obs.x > 0
    spec = _specs(mol, kind)[0]
    lk = _lock_map(locks, obs, spec.name, kind)
    main = _best(obs, spec, iso, free, lk, opts)
    if main is None:
        raise AssignmentError(
            f"no {kind.replace('_', ' ')} band of {iso.name} found among {obs.n} lines: no spacing "
            "pattern of its allowed lines fits; check the molecule and the kind, or lock two lines "
            "by hand with s.set_assignment(line_id, label='R(0)')")
    states = [main]
    msgs = list(data.messages)
    if kind == "parallel" and hot_bands:
        hot = _hot_band(obs, mol, main, free, locks, opts, kind)
        if hot is not None:
            states.append(hot)
        else:
            msgs.append("no hot band from the bending level found among the remaining lines")
    return tables(data, mol, kind, states, msgs, temperature=temperature,
                  excitation_wavenumber=excitation_wavenumber, detector=detector,
                  band_labels=band_labels, locks=locks, cls=LinearAssignment)


def _hot_band(obs: Obs, mol: Linear, main: BandState, free: np.ndarray, locks, opts, kind):
    """A Π–Π hot band among the lines the fundamental left (None when none convinces)."""
    left = free & (main.idx < 0)
    if left.sum() < 10:
        return None
    spec = _hot_spec(mol)
    Bl = main.values["B_lower"]
    nu0 = main.values["band_origin"]
    span = float(np.ptp(obs.x))
    lk = _lock_map(locks, obs, "hot", kind)
    dB = main.values["B_upper"] - Bl

    def prior(st):
        # a bending level's B is within a few 0.1 % of the ground state's (α₂ is small; for CO2,
        # N2O, HCN and C2H2 |B(v2=1)/B0 − 1| < 0.3 %, Herzberg 1945), and the hot band's B′ − B″
        # is close to the fundamental's: a J numbering shifted by one or two moves both further
        v = st.values
        dev = (v["B_lower"] / Bl - 1) / 0.004
        ddb = (v["B_upper"] - v["B_lower"] - dB) / (0.2 * abs(dB) + 2e-4 * Bl)
        return float(min(dev**2, 50.0) + min(ddb**2, 50.0))

    hot = _best(obs, spec, mol.main, left, lk, opts, prior=prior,
                B_range=(0.985 * Bl, 1.015 * Bl), origin_range=(nu0 - 0.25 * span, nu0 + 0.25 * span))
    if hot is None:
        return None
    good = int(hot.good().sum())
    vals = hot.values
    plausible = (abs(vals["B_lower"] / Bl - 1) < 0.015 and abs(vals["B_upper"] / Bl - 1) < 0.03
                 and good >= max(8, 0.1 * main.good().sum()))
    return hot if plausible else None
