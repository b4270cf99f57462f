"""Plausibility checks an assignment must pass before its constants are reported.

Each check either refuses (raises :class:`~widgetkit.errors.AssignmentError`
with what was wrong and what to do) when no data could make the result right,
or returns a *reason* (a sentence) that marks the result ``status="doubtful"``
when the data could still be right (an enriched sample, a non-thermal
population, locks that override the automatic numbering).

Checks and their sources:

* **spectrum kind** — a Raman spectrum (``technique == "raman"`` or an x axis
  of Raman shifts) has O, Q and S branches, not P and R (ΔJ = 0, ±2 for a
  Raman transition of a linear molecule; Herzberg, *Spectra of Diatomic
  Molecules*, ch. III); molecules in a liquid or solid do not rotate freely,
  so there are no resolved P and R lines to assign: refused;
* **resolution** — a line-by-line assignment needs lines narrower than the
  rotational spacing, about B′ + B″ ≈ 2B near the band origin: the
  instrument resolution or the median fitted FWHM at or above the spacing is
  refused, with a pointer to the band-contour fit and to the P–R branch
  separation Δν_PR ≈ √(8kTB/hc) = 2.358 √(B T) cm⁻¹ (B in cm⁻¹, T in K; the
  maxima of the Boltzmann envelopes of the two branches at J_max ≈ √(kT/2hcB);
  Herzberg, *Spectra of Diatomic Molecules*, ch. III, from memory);
* **B > 0** — a rotational constant is h/(8π²cI) with I > 0: a fitted B ≤ 0
  is refused;
* **no dipole** — a homonuclear diatomic (two atoms of one isotope) has no
  permanent or vibrationally induced electric dipole moment, so no infrared
  P/R band: refused for the rovibrational kind (a Raman spectrum?);
* **handbook B** — for a molecule in :data:`widgetkit.simulate.HANDBOOK`, B of
  any isotopologue is the handbook B_v scaled by μ_handbook/μ (B ∝ 1/μ in the
  Born–Oppenheimer approximation); a fitted B outside a factor of 1.5 of it
  is refused (wrong molecule, or lines indexed every other one, which gives
  twice B);
* **handbook ωe** — likewise a progression's ωe against the handbook ωe
  scaled by ρ = sqrt(μ_handbook/μ) (ωe ∝ 1/√μ): outside a factor of 1.25 is
  refused (a labelling off by one vibrational quantum gives about v/(v±1)
  times the true ωe);
* **isotopologue abundance** — the area ratio of two sub-bands, corrected for
  Boltzmann and Hönl–London factors, against the ratio of natural abundances
  (periodictable, IUPAC): off by more than a factor of three (and by more than
  three standard errors) is doubtful (an enriched sample, or lines of another
  band taken for an isotopologue);
* **hot bands** — a band v′ ← v″ with v″ ≥ 1 against its cold partner
  (v′ − v″) ← 0: in the harmonic approximation with a dipole linear in q the
  area ratio is C(v″+Δv, Δv) · exp(−c₂(G(v″) − G(0))/T) · ν_hot/ν_cold
  (|⟨v+Δv|q^Δv|v⟩|² ∝ (v+1)…(v+Δv); Boltzmann factor with c₂ = hc/k from
  scipy.constants); ten times more than that at the given temperature (or,
  without one, a population that needs more than
  :data:`HOT_BAND_MAX_TEMPERATURE`) is doubtful;
* **branch maxima** — two comparably strong, broad "bands" of a handbook
  molecule as far apart as Δν_PR are probably the P and R maxima of one
  unresolved band: doubtful, with a pointer to the band-contour fit;
* **degrees of freedom** — a fit with as many data as parameters has no
  uncertainties (NaN) and is doubtful.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..errors import AssignmentError
from .contour import PR_COEFFICIENT, expected_pr_separation
from .molecule import Diatomic, Isotopologue, isotope

__all__ = [
    "spectrum_context", "refuse_unsuitable_spectrum", "handbook_constants", "expected_B",
    "rotational_problems", "vibrational_problem", "refuse_unresolved", "abundance_reason",
    "expected_pr_separation", "PR_COEFFICIENT", "UnresolvedLines",
    "hot_band_ratio", "hot_band_reasons", "branch_pair_reason", "HOT_BAND_MAX_TEMPERATURE",
    "HOT_BAND_MARGIN", "ABUNDANCE_FACTOR", "HANDBOOK_B_FACTOR", "HANDBOOK_OMEGA_FACTOR",
]

#: without a given temperature, a hot band needing a hotter vibrational population is doubtful (K)
HOT_BAND_MAX_TEMPERATURE = 2500.0
#: an isotopologue area ratio this many times off its natural value is doubtful
ABUNDANCE_FACTOR = 3.0
#: a fitted B this many times off the mass-scaled handbook B_e is refused (inside the factor of
#: two asked for: lines indexed every other one give exactly twice B, which must not pass)
HANDBOOK_B_FACTOR = 1.5
#: a fitted ωe this many times off the mass-scaled handbook ωe is refused
HANDBOOK_OMEGA_FACTOR = 1.25

_CONDENSED = ("liquid", "solid")


def spectrum_context(meta: Mapping | None) -> dict:
    """The keyword arguments of the assignment functions that a spectrum's metadata gives.

    Reads the typed keys the readers set (each optional): ``resolution``
    (cm⁻¹), ``technique`` (``"infrared"``/``"raman"``), ``x_axis``
    (``"raman_shift"`` makes the technique Raman) and ``sample_state``.

    Returns
    -------
    dict with ``resolution``, ``technique``, ``sample_state`` (None where not known).
    """
    meta = meta or {}
    res = meta.get("resolution")
    try:
        res = float(res) if res is not None else None
    except (TypeError, ValueError):
        res = None
    if res is not None and not (math.isfinite(res) and res > 0):
        res = None
    tech = meta.get("technique")
    tech = str(tech).lower() if tech else None
    if str(meta.get("x_axis") or "").lower() == "raman_shift":
        tech = "raman"
    state = meta.get("sample_state")
    return {"resolution": res, "technique": tech,
            "sample_state": str(state).lower() if state else None}


def refuse_unsuitable_spectrum(*, technique: str | None, sample_state: str | None,
                               kind: str = "rovibrational", molecule: Diatomic | None = None) -> None:
    """Refuse P/R assignment of a Raman spectrum or of a molecule without a dipole moment, and
    rotational assignment of a condensed sample."""
    if technique == "raman":
        raise AssignmentError(
            f"assign_band(kind={kind!r}) labels P and R lines of an infrared absorption band, but "
            "this is a Raman spectrum (its metadata say so, or x is a Raman shift): Raman lines "
            "follow ΔJ = 0, ±2 (O, Q and S branches), and P/R labels would give wrong constants; "
            "use kind='raman_rotational' or kind='raman_vibrational'")
    if molecule is not None and molecule.main.atoms[0].symbol == molecule.main.atoms[1].symbol:
        raise AssignmentError(
            f"assign_band(kind={kind!r}) labels the P and R lines of an infrared band, but "
            f"{molecule.main.name} is homonuclear: it has no electric dipole moment, so no "
            "infrared P/R band; if this is a Raman spectrum use kind='raman_vibrational' or "
            "kind='raman_rotational'")
    if sample_state in _CONDENSED:
        raise AssignmentError(
            f"assign_band(kind={kind!r}) needs free rotation, but the sample is a {sample_state} "
            "(the file's ##STATE): molecules in a liquid or solid show no resolved P and R lines; "
            "assign band centres with kind='progression' instead")


def _handbook_isotopologue(key: str):
    parts = key.split("-")
    if len(parts) != 2:
        return None
    try:
        a, b = isotope(parts[0]), isotope(parts[1])
    except AssignmentError:
        return None
    return a, b


def handbook_constants(iso: Isotopologue) -> tuple[dict, str] | None:
    """Handbook constants of a molecule with the same two elements, mass-scaled to ``iso``.

    Looks through :data:`widgetkit.simulate.HANDBOOK` (handbook values; see its
    docstring for their source and confidence) for an entry of the same pair of
    elements and scales it by ρ = sqrt(μ_entry/μ_iso)
    (:func:`widgetkit.levels.scale_constants`).

    Returns
    -------
    (constants, handbook key) or None when the molecule is not there.
    """
    from ..simulate.handbook import HANDBOOK  # a data table; imported late (simulate imports levels)
    from .molecule import scale_constants

    elements = sorted(a.element for a in iso.atoms)
    for key, consts in HANDBOOK.items():
        pair = _handbook_isotopologue(key)
        if pair is None or sorted(p.element for p in pair) != elements:
            continue
        mu = pair[0].mass * pair[1].mass / (pair[0].mass + pair[1].mass)
        return scale_constants(dict(consts), math.sqrt(mu / iso.reduced_mass)), key
    return None


def expected_B(iso: Isotopologue, v: int = 0) -> tuple[float, str] | None:
    """Handbook B_v = B_e − α_e(v+½) of ``iso`` (mass-scaled), and the handbook key; or None."""
    hb = handbook_constants(iso)
    if hb is None or "B_e" not in hb[0]:
        return None
    c, key = hb
    return float(c["B_e"] - c.get("alpha_e", 0.0) * (v + 0.5)), key


def rotational_problems(values: Mapping[str, float], iso: Isotopologue, band) -> list[str]:
    """What makes fitted band constants impossible (empty when none): B ≤ 0, or B outside a
    factor of :data:`HANDBOOK_B_FACTOR` of the mass-scaled handbook value."""
    out = []
    for name, v in (("B_lower", band[1]), ("B_upper", band[0])):
        B = float(values.get(name, np.nan))
        if not B > 0:
            out.append(f"{iso.name}: {name} = {B:.4g} cm-1 is not positive; a rotational constant "
                       "h/(8π²cI) cannot be")
            continue
        exp = expected_B(iso, v)
        if exp is not None and not (1 / HANDBOOK_B_FACTOR <= B / exp[0] <= HANDBOOK_B_FACTOR):
            out.append(f"{iso.name}: {name} = {B:.4g} cm-1 is {B / exp[0]:.2g} times the handbook "
                       f"value {exp[0]:.4g} cm-1 (B_e of {exp[1]} scaled by mass), outside a factor "
                       f"of {HANDBOOK_B_FACTOR:g}")
    return out


def vibrational_problem(omega_e: float, iso: Isotopologue | None) -> str | None:
    """Why a fitted ωe is impossible for ``iso`` (None when it is not): outside a factor of
    :data:`HANDBOOK_OMEGA_FACTOR` of the handbook ωe scaled by ρ = sqrt(μ_handbook/μ)."""
    hb = None if iso is None else handbook_constants(iso)
    if hb is None or "omega_e" not in hb[0]:
        return None
    want = float(hb[0]["omega_e"])
    if 1 / HANDBOOK_OMEGA_FACTOR <= omega_e / want <= HANDBOOK_OMEGA_FACTOR:
        return None
    return (f"ωe = {omega_e:.5g} cm-1 is {omega_e / want:.2g} times the handbook value "
            f"{want:.5g} cm-1 for {iso.name} (ωe of {hb[1]} scaled by mass), outside a factor of "
            f"{HANDBOOK_OMEGA_FACTOR:g}")


class UnresolvedLines(AssignmentError):
    """Line-by-line assignment refused because the rotational lines are not resolved; the
    session adds the quick P–R estimate measured on the spectrum to the message."""


def refuse_unresolved(*, spacing: float, resolution: float | None, fwhm: float | None,
                      molecule: Diatomic, source: str, temperature: float | None) -> None:
    """Refuse when the resolution or the median line width reaches the rotational spacing."""
    T = temperature or 296.0
    for what, width in (("the instrument resolution", resolution),
                        ("the median fitted line width (FWHM)", fwhm)):
        if width is None or not np.isfinite(width) or not spacing > 0 or width < spacing:
            continue
        B = 0.5 * spacing
        raise UnresolvedLines(
            f"{what}, {width:.3g} cm-1, is not below the rotational line spacing of "
            f"{molecule.main.name}, about {spacing:.3g} cm-1 ({source}): the rotational lines are "
            "not resolved, so they cannot be assigned one by one. Fit the band contour instead, "
            "s.fit_band_model(molecule, ...), or estimate B from the separation of the P and R "
            f"branch maxima, Δν ≈ 2.358 √(B T) cm-1 (about {expected_pr_separation(B, T):.3g} cm-1 at "
            f"{T:g} K for B = {B:.3g} cm-1)")


def abundance_reason(name: str, main: str, ratio: float, err: float, natural: float) -> str | None:
    """A reason when an isotopologue area ratio is far from the natural abundance ratio."""
    if not (np.isfinite(ratio) and ratio > 0 and natural > 0):
        return None
    f = ratio / natural
    big = abs(math.log(f)) > math.log(ABUNDANCE_FACTOR)
    significant = not np.isfinite(err) or err <= 0 or abs(ratio - natural) > 3 * err
    if not (big and significant):
        return None
    return (f"the sub-band named {name} is {f:.2g} times {'stronger' if f > 1 else 'weaker'} "
            f"than natural abundance implies (area ratio to {main} {ratio:.3g}, natural "
            f"{natural:.3g}, periodictable): an isotope-enriched sample, or lines of another band "
            "or molecule taken for an isotopologue")


def hot_band_ratio(v_upper: int, v_lower: int, g_hot: float, position_hot: float,
                   position_cold: float, temperature: float) -> float:
    """Expected area ratio of hot band v′ ← v″ to its cold partner (v′ − v″) ← 0.

    C(v″+Δv, Δv) · exp(−c₂ g_hot / T) · ν_hot/ν_cold, with g_hot = G(v″) − G(0) in cm⁻¹
    (see the module docstring).
    """
    from .candidates import C2

    dv = v_upper - v_lower
    return (math.comb(v_lower + dv, dv) * math.exp(-C2 * g_hot / temperature)
            * position_hot / position_cold)


#: a hot band may be this many times stronger than its harmonic Boltzmann estimate
HOT_BAND_MARGIN = 10.0


def hot_band_reasons(positions, labels, areas, omega, temperature: float | None) -> list[str]:
    """Hot bands stronger than their Boltzmann factor allows (see the module docstring).

    Parameters
    ----------
    positions : array_like, shape (n,)
        Band centres, cm⁻¹.
    labels : array_like of int, shape (n, 2)
        (v_upper, v_lower) of each band; negative for unlabelled bands.
    areas : array_like, shape (n,), or None
        Band areas (without them only the presence of each hot band's cold partner is checked).
    omega : sequence of float
        ωe, ωexe (, ωeye) in cm⁻¹, for G(v″) − G(0).
    temperature : float or None
        K. Without it, a band is doubtful when its area ratio needs a vibrational temperature
        above :data:`HOT_BAND_MAX_TEMPERATURE`.

    Returns
    -------
    list of str, one reason per hot band that fails: its cold partner is not among the bands,
    or it is too strong for its Boltzmann factor.
    """
    from .candidates import C2

    x = np.asarray(positions, dtype=float)
    a = np.full(len(x), np.nan) if areas is None else np.asarray(areas, dtype=float)
    w = list(omega) + [0.0] * (3 - len(omega))
    G = lambda v: w[0] * (v + 0.5) - w[1] * (v + 0.5) ** 2 + w[2] * (v + 0.5) ** 3  # noqa: E731
    where = {(int(vu), int(vl)): i for i, (vu, vl) in enumerate(np.asarray(labels)) if vu >= 0}
    out = []
    for (vu, vl), i in sorted(where.items()):
        j = where.get((vu - vl, 0))
        g = G(vl) - G(0)
        if vl < 1:
            continue
        if j is None:
            out.append(f"hot band {vu}-{vl} at {x[i]:.1f} cm-1 is labelled, but {vu - vl}-0, from "
                       f"the more populated v″ = 0 and so much stronger, is not among the bands")
            continue
        if not (a[i] > 0 and a[j] > 0 and g > 0):
            continue
        ratio = a[i] / a[j]
        head = f"hot band {vu}-{vl} at {x[i]:.1f} cm-1 has {ratio:.3g} times the area of {vu - vl}-0"
        if temperature:
            allowed = hot_band_ratio(vu, vl, g, x[i], x[j], temperature)
            if ratio > HOT_BAND_MARGIN * allowed:
                out.append(f"{head}, but the Boltzmann factor at {temperature:g} K allows about "
                           f"{allowed:.2g} (harmonic estimate; up to {HOT_BAND_MARGIN:g} times that "
                           "is accepted): the labels may be wrong (the two branch maxima of one "
                           "band?), or the population is not thermal")
            continue
        c = hot_band_ratio(vu, vl, 0.0, x[i], x[j], 1.0)
        t = C2 * g / math.log(c / ratio) if ratio < c else math.inf
        if t > HOT_BAND_MAX_TEMPERATURE:
            need = "no thermal population at all" if math.isinf(t) else f"a temperature of {t:.0f} K"
            out.append(f"{head}: that needs {need} (harmonic estimate, above "
                       f"{HOT_BAND_MAX_TEMPERATURE:g} K); the labels may be wrong (the two branch "
                       "maxima of one band?); give temperature= if the sample was that hot")
    return out


def branch_pair_reason(positions, areas, widths, molecule: Diatomic | None,
                       temperature: float | None) -> str | None:
    """Two neighbouring, comparably strong, broad bands as far apart as the P and R branch maxima
    of one unresolved band of a handbook molecule (:func:`pr_separation`) are probably those."""
    if molecule is None:
        return None
    exp = expected_B(molecule.main, 0)
    if exp is None:
        return None
    T = temperature or 296.0
    d_exp = expected_pr_separation(exp[0], T)
    x = np.asarray(positions, dtype=float)
    a = np.full(len(x), np.nan) if areas is None else np.asarray(areas, dtype=float)
    w = np.full(len(x), np.nan) if widths is None else np.asarray(widths, dtype=float)
    o = np.argsort(x)
    for i, j in zip(o[:-1], o[1:], strict=True):
        d = x[j] - x[i]
        similar = not (a[i] > 0 and a[j] > 0) or 1 / 3 <= a[i] / a[j] <= 3
        broad = not (np.isfinite(w[i]) and np.isfinite(w[j])) or min(w[i], w[j]) >= 0.25 * d
        if 0.6 * d_exp <= d <= 1.6 * d_exp and similar and broad:
            return (f"the bands at {x[i]:.1f} and {x[j]:.1f} cm-1 are {d:.0f} cm-1 apart, about the "
                    f"P–R branch separation of one unresolved band of {molecule.main.name} "
                    f"(2.358 √(B T) = {d_exp:.0f} cm-1 for the handbook B at {T:g} K): they may "
                    "be the two branch maxima of one band, not two bands; fit the band contour "
                    "with s.fit_band_model(molecule, ...)")
    return None
