"""Locks of the rovibrational assignment (private): reading them, and choosing,
among the numberings the band allows, the one that honours them.

A lock is an observation that wins. Positions alone do not fix the running
number m of a band: the band model is a quartic in m, and a quartic stays a
quartic when m -> m + k, so a renumbered band fits its lines equally well;
only the band-origin gap (no line at m = 0), the areas and plausibility tell
the numberings apart. A lock that disagrees with the automatic numbering is
therefore tried as a renumbering of the whole band (the other isotopologues
follow by mass scaling). The candidates are

* the automatic numbering (from the band-origin gap, locks ignored);
* the numbering bootstrapped from two or more locked lines of one isotopologue;
* the automatic numbering shifted by each k = m(lock) − m(automatic) a lock
  asks for;

and the chosen one is, in this order: plausible (every fitted B > 0 and, for a
handbook molecule, within a factor of 1.5 of the mass-scaled handbook value,
:func:`.plausibility.rotational_problems`), with both branches (two well-fitted
P and R lines at least), honouring most locks (a locked line
is honoured when it is not an outlier of its sub-band), best score (lines
fitted, agreement with mass scaling and abundances); a numbering that fits
fewer than 3/4 of the lines the best one fits is ranked after the others
whatever locks it honours. A lock that the chosen
numbering cannot agree with keeps its label and is shown as an outlier with
its obs − calc, left out of the fit. A numbering other than the automatic one
is marked doubtful, with the evidence.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..errors import AssignmentError
from ._rovib_core import Lines, State, seed_model
from ._rovib_match import refine
from ._rovib_relabel import relabel
from ._seed import lock_seed, m_to_J, natural_seed, shift_index
from ._seed_strong import strong_seed
from .candidates import format_label, parse_label
from .molecule import Diatomic
from .plausibility import rotational_problems

__all__ = ["parse_locks", "solve", "solve_again"]

#: the seeds found from the lines alone (the band-origin gap, the strongest lines), not locks
_FROM_THE_BAND = ("automatic", "strong")
#: a candidate numbering must fit at least this fraction of the lines the best one fits
MIN_GOOD_FRACTION = 0.75

NO_GAP = ("no band-origin gap found: no pair of neighbouring lines looks like P(1), R(0) with "
          "P(2), R(1) beyond; lock two lines by hand with s.set_assignment(line_id, "
          "label='R(0)', isotopologue=...) and s.set_assignment(line_id, label='P(1)', "
          "isotopologue=...); if the rotational lines are not resolved (as wide as their "
          "spacing), fit the band contour with s.fit_band_model(molecule) instead; a band of a "
          "linear polyatomic (CO2-like, every other line missing) is assigned with "
          "kind='parallel' and a wk.Linear molecule")


def parse_locks(locks: Mapping | None, data: Lines, molecule: Diatomic, band) -> dict:
    """line index -> (isotopologue, J_upper or None, J_lower or None).

    A lock with J values (or a label) must name its isotopologue when the
    molecule has several (an ambiguous lock is refused, naming them); a lock
    with no fields at all leaves the line unassigned.
    """
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
            try:  # as the trade writes it, "H35Cl" or "H³⁵Cl"
                iso = molecule.isotopologue(iso).name
            except AssignmentError:
                raise AssignmentError(f"lock of line {lid!r}: {iso!r} is not an isotopologue of "
                                      f"{molecule}; known: {', '.join(names)}") from None
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
            if iso is None:
                if len(names) > 1:
                    raise AssignmentError(
                        f"ambiguous lock of line {lid!r}: {molecule} has the isotopologues "
                        f"{', '.join(names)} and the lock does not say which one "
                        f"{format_label(ju, jl)} belongs to; name it, e.g. "
                        f"s.set_assignment({lid!r}, label={format_label(ju, jl)!r}, "
                        f"isotopologue={names[0]!r})")
                iso = names[0]
            key = (iso, ju, jl)
            if key in seen:
                raise AssignmentError(
                    f"contradictory locks: lines {seen[key]!r} and {lid!r} are both locked as "
                    f"{format_label(ju, jl)} of {iso}; clear one with s.clear_assignment(line_id)")
            seen[key] = lid
        out[where[lid]] = (iso, ju, jl)
    return out


def _m(ju: int, jl: int) -> int:
    return jl + 1 if ju > jl else -jl


def _refine_seed(data: Lines, locks: dict, g: dict, seed_iso: str | None, opts: dict, *,
                 max_rounds: int, min_rounds: int) -> State:
    """Refine one seed indexing under every isotopologue hypothesis; the best, named."""
    molecule = opts["molecule"]
    names = [i.name for i in molecule.isotopologues]
    seed = seed_model(data, g, centrifugal=opts["centrifugal"], outlier_sigma=opts["outlier_sigma"])
    trials = []
    for k_iso in ([seed_iso] if seed_iso is not None else names):
        st = refine(data, locks, {k_iso: seed}, k_iso, opts, max_rounds=min(2, max_rounds),
                    min_rounds=1)
        trials.append((st.score, names.index(k_iso), k_iso))
    trials.sort(key=lambda t: (-t[0], t[1]))
    k_iso = trials[0][2]
    final = refine(data, locks, {k_iso: seed}, k_iso, opts, max_rounds=max_rounds,
                   min_rounds=min_rounds)
    if final.ambiguous:
        raise AssignmentError(final.ambiguous[0])
    return relabel(data, final, molecule, opts["band"], locks)


def _lock_shifts(data: Lines, locks: dict, st: State) -> list[int]:
    """The renumberings k the locks ask for: a locked line lying on line m of its sub-band's
    prediction (within 0.3 of the local spacing) but locked as m + k."""
    out = set()
    for i, (iso, ju, jl) in locks.items():
        model = st.models.get(iso)
        if ju is None or model is None:
            continue
        jm = max(model.jmax, ju, jl) + 2
        ms = np.r_[np.arange(-jm, 0), np.arange(1, jm + 1)]
        calc, _ = model.predict(*m_to_J(ms))
        j = int(np.argmin(np.abs(calc - data.x[i])))
        step = np.abs(np.diff(calc))
        spacing = float(np.median(step[max(j - 2, 0): j + 2])) if len(step) else 0.0
        if abs(calc[j] - data.x[i]) <= 0.3 * spacing:
            k = _m(ju, jl) - int(ms[j])
            if k:
                out.add(k)
    return sorted(out, key=abs)


def _indexing(data: Lines, st: State, locks: dict, pos_of: np.ndarray) -> dict[int, int]:
    """{m: index into the ascending positions} of the good, unlocked lines of the seed sub-band."""
    sel = ((st.iso == st.seed_iso) & ~st.outlier & ~st.blended
           & np.array([i not in locks for i in range(data.n)], dtype=bool))
    return {_m(int(st.Ju[i]), int(st.Jl[i])): int(pos_of[i]) for i in np.nonzero(sel)[0]}


def _problems(st: State, molecule: Diatomic, band) -> list[str]:
    out = []
    for name, model in st.models.items():
        if model.kind == "fit":
            out += rotational_problems(model.values, molecule.isotopologue(name), band)
    return out


def _n_good(st: State) -> int:
    return int(np.sum((st.iso != None) & ~st.outlier & ~st.blended))  # noqa: E711


def _two_branches(st: State) -> bool:
    """At least two well-fitted P and two R lines in the first sub-band: a ¹Σ–¹Σ band has both
    branches, about equally strong near the origin (a renumbering that turns one branch into the
    other cannot agree with the band)."""
    good = (st.iso == st.seed_iso) & ~st.outlier & ~st.blended
    return int(np.sum(good & (st.Ju > st.Jl))) >= 2 and int(np.sum(good & (st.Ju < st.Jl))) >= 2


def _honoured(locks: dict, st: State) -> int:
    return sum(1 for i, v in locks.items()
               if v[1] is not None and not st.outlier[i] and np.isfinite(st.calc[i]))


def solve(data: Lines, locks: dict, opts: dict, *, seed_fraction: float, max_rounds: int,
          min_rounds: int) -> State:
    """Run every candidate numbering and return the chosen one (module docstring), with the
    reasons for doubt about it in ``State.reasons``."""
    molecule = opts["molecule"]
    band = opts["band"]
    names = [i.name for i in molecule.isotopologues]
    xs, area_s = data.x[data.order], data.area[data.order]
    pos_of = np.empty(data.n, dtype=int)
    pos_of[data.order] = np.arange(data.n)
    cleared = frozenset(int(pos_of[i]) for i, v in locks.items() if v[0] is None and v[1] is None)
    by_iso: dict[str, dict[int, int]] = {}
    for i, (iso, ju, jl) in locks.items():
        if ju is not None:
            by_iso.setdefault(iso, {})[_m(ju, jl)] = int(pos_of[i])
    mu0 = molecule.main.reduced_mass
    partners = tuple(float(np.sqrt(mu0 / i.reduced_mass)) for i in molecule.isotopologues[1:])
    seeds = []
    ls = lock_seed(xs, by_iso, names, frac=seed_fraction,
                   forbidden=frozenset(int(pos_of[i]) for i in locks), area=area_s)
    if ls is not None:
        seeds.append(("locks", ls[1], ls[0]))
    g = natural_seed(xs, area_s, frac=seed_fraction, forbidden=cleared, partners=partners)
    if g is not None:
        seeds.append(("automatic", g, None))
    if opts.get("hot_bands"):
        # weaker series beside the band (a hot band) can mislead the gap search: the band is
        # also sought from its strongest lines (:mod:`._seed_strong`)
        gs = strong_seed(xs, area_s, frac=seed_fraction, forbidden=cleared, partners=partners)
        if gs is not None and len(gs) >= 4 and gs != g:
            seeds.append(("strong", gs, None))
    if not seeds:
        raise AssignmentError(NO_GAP)
    tried: list[tuple[str, State]] = []
    failures: list[AssignmentError] = []

    def run(tag, g, iso):
        try:
            tried.append((tag, _refine_seed(data, locks, g, iso, opts, max_rounds=max_rounds,
                                            min_rounds=min_rounds)))
        except AssignmentError as exc:
            failures.append(exc)

    for tag, g, iso in seeds:
        run(tag, g, iso)
    base = next((st for tag, st in tried if tag == "automatic"), tried[0][1] if tried else None)
    if base is not None and locks:
        for k in _lock_shifts(data, locks, base):
            run(f"shift {k:+d}", shift_index(_indexing(data, base, locks, pos_of), k),
                base.seed_iso)
    if not tried:
        raise failures[0]
    # a numbering that leaves many more lines unexplained than the best one cannot agree with
    # the band, whatever locks it honours
    most = max(_n_good(st) for _, st in tried)
    ranked = sorted(tried, key=lambda t: (not _problems(t[1], molecule, band),
                                          _two_branches(t[1]),
                                          _n_good(t[1]) >= MIN_GOOD_FRACTION * most,
                                          _honoured(locks, t[1]), t[1].score,
                                          t[0] in _FROM_THE_BAND, t[0] == "automatic"),
                    reverse=True)
    tag, st = ranked[0]
    problems = _problems(st, molecule, band)
    if problems:
        raise AssignmentError(
            "the assignment gives impossible constants: " + "; ".join(problems) + ". Check the "
            "molecule (lines of another molecule? a linear polyatomic band is assigned with "
            "kind='parallel' and a wk.Linear molecule) and the band numbering, or lock lines by "
            "hand with s.set_assignment(line_id, label='R(0)', isotopologue=...)")
    st.reasons = _lock_reasons(data, locks, st, tag, base, molecule)
    return st


def _lock_reasons(data: Lines, locks: dict, st: State, tag: str, base: State | None,
                  molecule: Diatomic) -> list[str]:
    out = []
    main = next((n for n in (i.name for i in molecule.isotopologues) if n in st.models), None)
    if tag not in _FROM_THE_BAND and base is not None and main in base.models and main in st.models:
        v0 = base.models[main].values["band_origin"]
        v1 = st.models[main].values["band_origin"]
        spacing = base.models[main].values["B_upper"] + base.models[main].values["B_lower"]
        if abs(v1 - v0) > 0.5 * spacing:
            ids = ", ".join(str(data.ids[i]) for i, v in locks.items() if v[1] is not None)
            how = "numbered from the locks" if tag == "locks" else tag.replace("shift", "m shifted by")
            j = int(np.argmin(np.abs(data.x - v1)))
            at = (f"; a line is observed at {data.x[j]:.3f} cm-1, on this band origin, where a "
                  "¹Σ–¹Σ band has none" if abs(data.x[j] - v1) < 0.1 * spacing else "")
            out.append(
                f"the numbering follows the lock(s) on line(s) {ids}, not the band-origin gap: "
                f"without them the band origin of {main} would be {v0:.3f} cm-1, with them "
                f"{v1:.3f} cm-1 ({how}){at}; check the locks")
    for i, (iso, ju, jl) in locks.items():
        if ju is not None and st.outlier[i]:
            omc = data.x[i] - st.calc[i]
            out.append(f"line {data.ids[i]} is locked as {format_label(ju, jl)} of {iso} but the band "
                       f"cannot agree with it: obs − calc = {omc:+.4f} cm-1; the lock is kept, the "
                       "line is flagged as an outlier and left out of the fit")
    return out


def solve_again(data: Lines, locks: dict, st: State, opts: dict, *, max_rounds: int,
                min_rounds: int) -> State:
    """The band refined again on ``data`` (a subset of the lines ``st`` was found on, with the
    locks renumbered to it), from the numbering ``st`` gave its first sub-band: only what the
    lines left out change (a weak isotopologue's sub-band that had taken them); ``st``'s
    reasons for doubt are kept."""
    pos_of = np.empty(data.n, dtype=int)
    pos_of[data.order] = np.arange(data.n)
    g = {_m(int(st.Ju[i]), int(st.Jl[i])): int(pos_of[i]) for i in range(data.n)
         if st.iso[i] == st.seed_iso and not st.outlier[i] and not st.blended[i]
         and i not in locks}
    again = _refine_seed(data, locks, g, st.seed_iso, opts, max_rounds=max_rounds,
                         min_rounds=min_rounds)
    again.reasons = list(st.reasons)
    return again
