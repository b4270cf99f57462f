"""Assignment of a rovibrational band of a diatomic, with no prior constants.

Pipeline (:func:`assign_rovibrational`):

1. find the band-origin gap and index the lines of one sub-band by m
   (:mod:`._seed`);
2. for each hypothesis of which isotopologue that sub-band belongs to,
   predict the other sub-bands by mass scaling, locate each by an offset
   search, and iterate *predict -> match -> refit*:

   * matching is optimal (``scipy.optimize.linear_sum_assignment``) on the
     Gaussian cost ((obs − calc)/σ)² + ln σ², σ² = σ_obs² + σ_calc², allowed
     only within ``match_fraction`` of the local line spacing; the number of
     matches is maximised first; once a sub-band has a Boltzmann envelope
     (ln(area/(ν̃L)) linear in E″), a line more than 10 times stronger or
     weaker than expected cannot take a place and nearer ones add
     ((ln area − expected)/s)² to the cost;
   * lines of further isotopologues are predicted from the seed sub-band's
     constants scaled by mass (with their own band origin), so close pairs
     keep their order where the seed is extrapolated;
   * an unmatched prediction that agrees with an already matched line as well
     (within 4σ or half its FWHM) makes that line a *blend*: kept in the table,
     left out of the fits;
   * each sub-band is fitted by weighted linear least squares
     (:func:`.bandfit.fit_band`); lines more than ``outlier_sigma`` σ_eff from
     the fit are flagged and refitted without (σ_eff = σ_obs × max(1, robust
     Birge ratio), or the robust scatter without stated errors);
   * rounds stop when the assignment no longer changes;

   the hypothesis with most well-fitted lines, penalised when the areas
   contradict the natural abundances or the origin shifts contradict mass
   scaling, wins; finally the fitted sub-bands are named by the permutation
   of isotopologues most consistent with mass scaling and abundances, and a
   tie (for example one sub-band of a molecule with two equally abundant
   isotopologues) is an error;
3. check plausibility (:mod:`.plausibility`) and report constants with
   standard errors, combination differences, B_e, α_e, r_e, the rotational
   temperature and the abundance ratio, with ``status`` "ok" or "doubtful"
   and the reasons.

Locks (``locks``) are observations that win (:mod:`._rovib_locks`): a locked
line always keeps its label; the band is renumbered around a lock when its
numbering can agree (the result is then doubtful, with the evidence against
it), and otherwise the lock is shown as an outlier with its obs − calc and
left out of the fit.

Hot bands (``hot_bands=True``, :mod:`._seed_strong`, :mod:`._rovib_hot`): the band is also
sought from its strongest lines, which a weaker series beside it cannot mislead, and the hot
band (v′+1) ← (v″+1) of each isotopologue is then assigned among the lines left, from the
band's constants; the band is refined again without the hot band's lines (rare isotopologues,
weaker than the hot band, are sought only then), and lines that hold lines of both bands are
blends.

Limits (found with simulated bands): the band-origin gap must be visible (at
most one of R(0), P(1) missing); spectra without areas that also miss lines
and hold a dense weak isotopologue (13CO in CO) can be mis-indexed. The
result is then doubtful when few lines fit; two locked lines always settle
the indexing.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import AssignmentError
from ._rovib_core import prepare_lines
from ._rovib_hot import expand, find_hot_bands, restrict, subset
from ._rovib_hot_blends import mark_cross_blends
from ._rovib_locks import _problems, parse_locks, solve, solve_again
from ._rovib_report import analyse, refuse_unresolved_lines
from .joint import JointSummary
from .molecule import Diatomic
from .plausibility import refuse_unsuitable_spectrum

__all__ = ["BandAssignment", "assign_rovibrational"]


@dataclass(frozen=True)
class BandAssignment:
    """Result of :func:`assign_rovibrational`.

    Attributes
    ----------
    assignments : DataFrame
        One row per input line (input order): ``line_id, position,
        position_err, isotopologue, v_upper, v_lower, J_upper, J_lower, label,
        m, calc, calc_err, obs_minus_calc, outlier, blended, locked, weight``
        (weight = 1/σ² in the fit, 0 when left out); unassigned lines have
        missing labels.
    constants : DataFrame
        ``isotopologue, name, value, stderr, unit`` (+ ``band``, "1-0" or "2-1", when a
        hot band was found).
    covariance : dict of str -> DataFrame
        Covariance of the fitted band constants of each isotopologue.
    combination_differences : DataFrame
        ``isotopologue, state, J, lines, value, stderr, calc, obs_minus_calc``.
    rounds : int
        Predict–match–refit rounds of the chosen hypothesis.
    messages : list of str
        What was flagged, left out, degraded or cross-checked, and why.
    band : tuple of int
        (v_upper, v_lower) of the band assigned; lines of a hot band found beside it
        carry their own v_upper, v_lower in ``assignments``.
    status : {"ok", "doubtful"}
        "doubtful" when a plausibility check failed in a way the data could
        still explain (see :mod:`widgetkit.levels.plausibility`); ``reasons``
        says which.
    reasons : list of str
        Why the result is doubtful (empty when ok).
    outlier_sigma : float
        The outlier threshold used: |obs − calc| > outlier_sigma × σ_eff, the
        expected scatter (column ``normalised_residual`` = (obs − calc)/σ_eff).
    joint : JointSummary or None
        With ``joint=True``: what the joint isotopologue fit was made of
        (isotopologues, reference, centrifugal treatment, lines, scatter;
        :class:`widgetkit.levels.joint.JointSummary`); None otherwise. A plain
        dict of the same fields (as a session's record holds it) is converted.
    """

    assignments: pd.DataFrame
    constants: pd.DataFrame
    covariance: dict = field(repr=False)
    combination_differences: pd.DataFrame = field(repr=False)
    rounds: int = 0
    messages: list = field(default_factory=list)
    band: tuple = (1, 0)
    status: str = "ok"
    reasons: list = field(default_factory=list)
    outlier_sigma: float = 4.0
    joint: JointSummary | None = None

    def __post_init__(self):
        if isinstance(self.joint, Mapping):
            object.__setattr__(self, "joint", JointSummary.from_dict(self.joint))

    def constant(self, name: str, isotopologue: str | None = None) -> tuple[float, float]:
        """(value, stderr) of one constant (of the first isotopologue listed when not given)."""
        c = self.constants
        sel = c[c["name"] == name]
        if isotopologue is not None:
            sel = sel[sel["isotopologue"] == isotopologue]
        if sel.empty:
            raise KeyError(f"no constant {name!r}" + (f" for {isotopologue}" if isotopologue else ""))
        return float(sel["value"].iloc[0]), float(sel["stderr"].iloc[0])


def assign_rovibrational(
    lines: pd.DataFrame,
    molecule: Diatomic,
    *,
    temperature: float | None = None,
    locks: Mapping | None = None,
    outlier_sigma: float = 4.0,
    max_rounds: int = 20,
    band: tuple[int, int] = (1, 0),
    centrifugal: str = "separate",
    match_fraction: float = 0.3,
    seed_fraction: float = 0.25,
    min_rounds: int = 1,
    resolution: float | None = None,
    technique: str | None = None,
    sample_state: str | None = None,
    joint: bool = False,
    exclude_hidden: bool = True,
    hot_bands: bool = True,
) -> BandAssignment:
    """Assign the P and R lines of a v′ ← v″ band and fit the molecular constants.

    Parameters
    ----------
    lines : DataFrame
        ``line_id, position`` (cm⁻¹) and preferably ``position_err`` (standard
        error, cm⁻¹; weights 1/σ²) and ``area`` (``area_err``, ``fwhm``
        optional): the columns of ``Session.lines``.
    molecule : Diatomic
        Its isotopologues (names, abundances, reduced masses) define the
        sub-bands that are looked for.
    temperature : float, optional
        K; a first guess for the stimulated-emission factor of the Boltzmann
        plot (300 K when not given). The rotational temperature itself is
        fitted from the areas.
    locks : mapping, optional
        line_id -> dict with any of ``isotopologue, v_upper, v_lower, J_upper,
        J_lower, label`` ("R(3)", "P(2)"). A lock with a label or J values
        fixes that line and must name its isotopologue when the molecule has
        several; a lock with only an isotopologue restricts it to that
        sub-band; an empty lock leaves the line unassigned. Locked lines
        always keep their labels (see the module notes). Unnamed v means the
        ``band``.
    outlier_sigma : float
        Lines with |obs − calc| > outlier_sigma × σ_eff are flagged and left out
        of the fit (default 4).
    max_rounds, min_rounds : int
        Bounds on the predict–match–refit rounds.
    band : (int, int)
        (v_upper, v_lower) of the band (default the fundamental 1-0); a single
        band does not tell its vibrational numbering, so give it for an
        overtone or hot band.
    centrifugal : {"separate", "shared", "none"}
        Centrifugal distortion model (D′ and D″, D′ = D″, or none). A sub-band
        with too few lines for it falls back to a simpler one (reported).
    match_fraction : float
        Matching window as a fraction of the local line spacing.
    seed_fraction : float
        Acceptance window of the bootstrap, as a fraction of the spacing.
    resolution : float, optional
        Instrument resolution (FWHM, cm⁻¹), e.g. from the file's ##RESOLUTION.
    technique : {"infrared", "raman"}, optional
        A Raman spectrum is refused (no P and R branches).
    sample_state : {"gas", "liquid", "solid"}, optional
        A liquid or solid sample is refused (no free rotation).
    joint : bool
        After the separate fits, fit all sub-bands together with one set of
        mass-independent constants (:mod:`widgetkit.levels.joint`): the
        constants of each isotopologue are then derived from that set (with
        omega_e and omega_e_x_e, which need two isotopologues), and rows of
        isotopologue "mass-independent" hold the mass-reduced Dunham
        coefficients U_10, U_20, U_01, U_11 (U_02 with centrifugal="shared")
        and r_e. Needs lines of at least two isotopologues (AssignmentError
        otherwise).
    hot_bands : bool
        True (default): the band is also sought from its strongest lines
        (:mod:`._seed_strong`; a hot band's lines beside it fill the band-origin gap
        and halve the apparent spacing), and after the band the hot band
        (v′+1) ← (v″+1) of each isotopologue is looked for among the lines left
        (:mod:`._rovib_hot`): predicted from the band's constants (B″ = B′ of the band,
        B′ smaller by α_e, origin shifted by −2ωexe(v′ − v″) with the handbook
        anharmonicity, or the Pekeris estimate), its lines get its v_upper, v_lower
        and labels, its constants rows of their own; a line that holds lines of both
        bands is marked ``blended`` and left out of both fits. When one is found the
        ``constants`` and ``combination_differences`` gain a column ``band`` ("1-0",
        "2-1") and ``covariance`` a key "<isotopologue> <band>" ("12C-16O 2-1"); when
        none is found (too few lines fit the prediction), its lines stay unassigned and
        ``messages`` says why. False: neither, as before this option existed (a session
        step recorded without the option replays so).
    exclude_hidden : bool
        True (default): a line whose area may hold an unresolved line of another
        isotopologue (a predicted line not found as one of its own, within a few
        widths and with a predicted area above half the area's standard error;
        :mod:`._rovib_hidden`) is left out of T_rot and the area ratios, and a
        message names it. False: every assigned line enters them, as before this
        check existed (a session step recorded without the option replays so).

    Returns
    -------
    BandAssignment

    Raises
    ------
    AssignmentError
        Bad input (missing columns, duplicate ids, non-finite positions),
        contradictory or ambiguous locks (a lock with a label must name its
        isotopologue when the molecule has several), no band-origin gap, too
        few lines for the parameters, an ambiguous isotopologue split, a Raman
        or condensed-phase spectrum, lines as wide as the rotational spacing,
        or impossible constants (B ≤ 0, B outside a factor of two of the
        handbook value); the message says what to do (usually: lock two lines
        by hand with ``s.set_assignment(line_id, label='R(0)',
        isotopologue=...)``).

    Notes
    -----
    Constants reported per isotopologue (cm⁻¹ unless stated): band_origin,
    B_upper, B_lower, D_upper, D_lower (fitted); B_e = B″ + α_e(v″+½),
    alpha_e = (B″ − B′)/(v′ − v″), r_e = sqrt(h/(8π²cμB_e)) (Å);
    B_lower_cd, D_lower_cd, B_upper_cd, D_upper_cd and B_*_cd_diff from the
    combination differences; T_rot (K) from the Boltzmann plot;
    abundance_ratio (minor/most abundant, from the areas, with the expected
    natural value in the messages); n_lines and rms (cm⁻¹).
    """
    if not (isinstance(band, tuple | list) and len(band) == 2 and int(band[0]) > int(band[1]) >= 0):
        raise AssignmentError(f"band must be (v_upper, v_lower) with v_upper > v_lower >= 0, got {band!r}")
    band = (int(band[0]), int(band[1]))
    if not outlier_sigma > 0:
        raise AssignmentError(f"outlier_sigma must be > 0, got {outlier_sigma}")
    refuse_unsuitable_spectrum(technique=technique, sample_state=sample_state, molecule=molecule)
    data = prepare_lines(lines)
    lk = parse_locks(locks, data, molecule, band)
    opts = dict(outlier_sigma=float(outlier_sigma), match_fraction=float(match_fraction),
                centrifugal=centrifugal, band=band, molecule=molecule,
                temperature=None if temperature is None else float(temperature),
                resolution=None if resolution is None else float(resolution),
                joint=bool(joint), exclude_hidden=bool(exclude_hidden), hot_bands=bool(hot_bands))
    refuse_unresolved_lines(data, None, opts)
    run = dict(seed_fraction=seed_fraction, max_rounds=max_rounds, min_rounds=min_rounds)
    hot: list = []
    if opts["hot_bands"]:
        final, hot = _with_hot_bands(data, lk, opts, **run)
        if hot:
            final.messages = list(final.messages) + mark_cross_blends(data, lk, final, hot, opts)
    else:
        final = solve(data, lk, opts, **run)
    refuse_unresolved_lines(data, final, opts)
    return analyse(data, lk, final, opts, BandAssignment, hot=hot)


def _with_hot_bands(data, locks: dict, opts: dict, **run):
    """The band and the hot bands beside it (:mod:`._rovib_hot`).

    A hot band of the most abundant isotopologue can be far stronger than the sub-band of a
    rare one (at 1500 K the hot band of CO is a quarter of the band, 13C-16O a hundredth), and
    the offset search for that sub-band then lands on hot lines. So the band of the most
    abundant isotopologue is assigned first on its own, its hot band sought, and the band with
    all isotopologues refined from that numbering on the lines the hot band leaves; the hot
    bands are then sought again beside it. This is done when the other isotopologues are all
    rarer than a tenth of it (a more abundant one, as 37Cl beside 35Cl, is found before the hot
    band). Otherwise, or without a hot band there, or with locks on another isotopologue's
    lines, the band is assigned as without hot bands and its hot bands are sought beside it,
    the band refined again without their lines."""
    st = _main_first(data, locks, opts, **run)
    if st is not None:
        hot, msgs = find_hot_bands(data, st, locks, opts, max_rounds=run["max_rounds"])
        if any(hb.iso == opts["molecule"].main.name for hb in hot):
            st.messages = list(st.messages) + msgs
            return st, hot
    st = solve(data, locks, opts, **run)
    hot, msgs = find_hot_bands(data, st, locks, opts, max_rounds=run["max_rounds"])
    if hot:
        again = _without(data, locks, st, hot, opts, **run)
        if again is not None:
            st = again
            # the lines the weak sub-bands give up go back to the hot bands
            hot, msgs = find_hot_bands(data, st, locks, opts, max_rounds=run["max_rounds"])
    st.messages = list(st.messages) + msgs
    return st, hot


#: isotopologues rarer than this fraction of the most abundant one are sought after its hot band
_RARE = 0.1


def _main_first(data, locks: dict, opts: dict, **run):
    """The band refined with all isotopologues on the lines the hot band of the most abundant
    one leaves, that band and its hot band found first on their own; None when there is no such
    hot band, no other isotopologue, one a tenth as abundant or more, or locks on another's
    lines."""
    molecule = opts["molecule"]
    main = molecule.main
    others = [i for i in molecule.isotopologues if i.name != main.name]
    # an isotopologue a tenth as abundant or more has a sub-band stronger than most hot bands,
    # found before them (and, left out of the first pass, its lines would be taken for hot ones)
    if not others or any(i.abundance >= _RARE * main.abundance for i in others) \
            or any(v[0] not in (None, main.name) for v in locks.values()):
        return None
    one = dict(opts, molecule=Diatomic(main.atoms[0].symbol, main.atoms[1].symbol,
                                       min_abundance=0.0))
    try:
        first = solve(data, locks, one, **run)
    except AssignmentError:
        return None
    hot, _ = find_hot_bands(data, first, locks, one, max_rounds=run["max_rounds"])
    if not hot:
        return None
    return _without(data, locks, first, hot, opts, **run)


def _without(data, locks: dict, st, hot: list, opts: dict, *, seed_fraction: float,
             max_rounds: int, min_rounds: int):
    """The band refined again from ``st``'s numbering without the lines of the hot bands
    ``hot`` (:func:`._rovib_locks.solve_again`), spread over all lines; None when it fails."""
    mine = np.zeros(data.n, dtype=bool)
    for hb in hot:
        mine[hb.idx] = True
    keep = np.nonzero(~mine)[0]
    where = {int(i): k for k, i in enumerate(keep)}
    sub_locks = {where[i]: v for i, v in locks.items() if i in where}
    try:
        again = solve_again(subset(data, keep), sub_locks, restrict(st, keep), opts,
                            max_rounds=max_rounds, min_rounds=min_rounds)
    except AssignmentError:
        return None
    if _problems(again, opts["molecule"], opts["band"]):
        return None
    return expand(again, keep, data.n)
