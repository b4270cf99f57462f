"""Naming the fitted sub-bands of a rovibrational band by isotopologue (private; split from
:mod:`._rovib_match`, no change of behaviour): the permutation of isotopologues most
consistent with mass scaling (origin shifts) and natural abundances (areas) wins; a tie is
an error."""

from __future__ import annotations

import itertools

import numpy as np

from ..errors import AssignmentError
from ._rovib_core import Lines, State
from ._seed import scaled_band_constants

__all__ = ["relabel"]


def _pair_penalty(data, st, a_name, b_name, ma, mb, mu, ab, band) -> float:
    """How badly sub-band ``mb`` named ``b_name`` fits mass scaling and abundance from ``ma``."""
    rho = float(np.sqrt(mu[a_name] / mu[b_name]))
    pred, anh = scaled_band_constants(ma.values, band[0], band[1], rho)
    want = pred["band_origin"] - ma.values["band_origin"]
    got = mb.values["band_origin"] - ma.values["band_origin"]
    tol = 0.25 * abs(want) + abs(anh) + 3 * float(np.sqrt(ma.cov5[0, 0] + mb.cov5[0, 0])) + 1e-9
    pen = min(((got - want) / tol) ** 2, 50.0)
    good = ~st.outlier & ~st.blended & np.isfinite(data.area) & (data.area > 0)
    la = {(int(st.Ju[i]), int(st.Jl[i])): data.area[i] for i in np.nonzero(good & (st.iso == ma.tag))[0]}
    lb = {(int(st.Ju[i]), int(st.Jl[i])): data.area[i] for i in np.nonzero(good & (st.iso == mb.tag))[0]}
    common = sorted(set(la) & set(lb))
    if len(common) >= 2:
        r = sum(lb[k] for k in common) / sum(la[k] for k in common)
        pen += min(float((np.log(r / (ab[b_name] / ab[a_name])) / 0.35) ** 2), 50.0)
    return pen


def relabel(data: Lines, st: State, molecule, band, locks: dict) -> State:
    """Name the fitted sub-bands by the isotopologue assignment most consistent with mass
    scaling (origin shifts) and abundances (areas); a tie is an error."""
    names = list(st.models)
    if len(names) < 2:
        isos = sorted(molecule.isotopologues, key=lambda i: -i.abundance)
        locked = any(v[0] is not None and v[1] is not None for v in locks.values())
        if len(names) == 1 and len(isos) > 1 and not locked \
                and isos[1].abundance > 0.9 * isos[0].abundance:
            raise AssignmentError(
                f"ambiguous isotopologue split: one sub-band is seen and {isos[0].name} and "
                f"{isos[1].name} are about equally abundant, so it could be either; lock one line "
                f"by hand, e.g. s.set_assignment(line_id, isotopologue='{isos[0].name}', "
                "label='R(0)')")
        return st
    mu = {i.name: i.reduced_mass for i in molecule.isotopologues}
    ab = {i.name: i.abundance for i in molecule.isotopologues}
    for n in names:
        st.models[n].tag = n
    pool = [i.name for i in molecule.isotopologues]
    options = []
    for perm in itertools.permutations(pool, len(names)):
        new = dict(zip(names, perm, strict=True))
        if any(v[0] is not None and v[1] is not None and new.get(st.iso[i], v[0]) != v[0]
               for i, v in locks.items()):
            continue
        pen = 0.0
        for a, b in itertools.combinations(names, 2):
            if st.models[a].kind == "scaled" or st.models[b].kind == "scaled":
                continue
            pen += _pair_penalty(data, st, new[a], new[b], st.models[a], st.models[b], mu, ab, band)
        # prior: the strongest (first found) sub-band is most likely the most abundant one
        pen += 2.0 * float(np.log(max(ab.values()) / ab[new[st.seed_iso]]))
        options.append((pen, perm, new))
    if not options:
        return st
    options.sort(key=lambda t: (t[0], t[1]))
    if len(options) > 1 and options[1][0] - options[0][0] < 1.0:
        a, b = options[0][2], options[1][2]
        raise AssignmentError(
            "ambiguous isotopologue split: the sub-bands fit as "
            + ", ".join(f"{a[n]}" for n in names) + " or as " + ", ".join(f"{b[n]}" for n in names)
            + " about equally well; lock one line of each by hand, e.g. "
            f"s.set_assignment(line_id, isotopologue='{a[names[0]]}', label='R(0)')")
    new = options[0][2]
    if all(k == v for k, v in new.items()):
        return st
    st.iso = np.array([new.get(v, v) if v is not None else None for v in st.iso], dtype=object)
    st.models = {new[k]: m for k, m in st.models.items()}
    st.seed_iso = new[st.seed_iso]
    st.messages = [m for m in st.messages]
    return st
