"""The labelling search of :func:`widgetkit.levels.fit_progression` (private): candidate
labels, the design of G(v′) − G(v″), the exact two-band hypotheses, one labelling's fit with
outlier rejection, and its criterion (see the module docstring of :mod:`.progression`)."""

from __future__ import annotations

import numpy as np

from ..errors import AssignmentError
from ._lsq import robust_scale, weighted_lstsq

__all__ = ["labellings", "_labels", "_design", "_fit_labelling", "_criterion", "_P_MISS", "_P_OUT",
           "_P_HOT", "_P_HANDBOOK"]

_P_MISS, _P_OUT, _P_HOT, _P_HANDBOOK = 10.0, 25.0, 25.0, 1000.0


def _labels(v_max: int, hot_max: int) -> np.ndarray:
    return np.array([(vu, vl) for vl in range(hot_max + 1) for vu in range(vl + 1, v_max + 1)])


def _design(lab: np.ndarray, k: int) -> np.ndarray:
    hu, hl = lab[:, 0] + 0.5, lab[:, 1] + 0.5
    cols = [hu - hl, -(hu**2 - hl**2), hu**3 - hl**3]
    return np.column_stack(cols[:k])


def _expected(lab: set) -> set:
    exp = {(1, 0)}
    for vu, vl in lab:
        if vl > 0:
            exp.add((vu - 1, vl - 1))
        elif vu > 1:
            exp.add((vu - 1, 0))
    return exp - {(a, b) for a, b in exp if a <= b}


def _fit_labelling(x, s, lab, k, outlier_sigma, absolute):
    n = len(x)
    A = _design(lab, k)
    out = np.zeros(n, dtype=bool)
    for _ in range(6):
        use = ~out
        f = weighted_lstsq(A[use], x[use], s[use] if absolute else None)
        r = x - A @ f.beta
        if f.dof >= 2:
            sc_ = max(1.0, robust_scale(r[use] / s[use])) if absolute else robust_scale(r[use])
            zz = np.abs(r) / (s * sc_ if absolute else max(sc_, 1e-12))
            new = zz > outlier_sigma
        else:
            new = np.zeros(n, dtype=bool)
        if np.array_equal(new, out) or new.sum() > n - k - 1:
            break
        out = new
    return f, r, out


def _criterion(f, r, out, s, lab, k, hot: int = 0) -> float:
    use = ~out
    chi2 = float(np.sum((r[use] / s[use]) ** 2))
    n = int(use.sum())
    present = {tuple(map(int, t)) for t in lab}
    miss = len(_expected(present) - present)
    return chi2 + k * np.log(max(n, 2)) + _P_MISS * miss + _P_OUT * int(out.sum()) \
        + _P_HOT * hot + 1e-3 * float(lab.sum())


def labellings(x, s, L, locks, *, max_anharmonicity: float, max_labellings: int, v_max: int,
               hot_max: int) -> list[tuple]:
    """Distinct labellings (rows of label indices into ``L``, −1 for a band left out) from every
    pair of bands and pair of labels, the ``max_labellings`` nearest to their exact two-band
    solutions."""
    n = len(x)
    A2 = _design(L, 2)
    # all pair hypotheses at once
    ia, ib = np.triu_indices(n, 1)
    la, lb = np.nonzero(~np.eye(len(L), dtype=bool))
    a11, a12 = A2[la, 0][None, :], A2[la, 1][None, :]
    a21, a22 = A2[lb, 0][None, :], A2[lb, 1][None, :]
    det = a11 * a22 - a12 * a21
    ya, yb = x[ia][:, None], x[ib][:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        we = (ya * a22 - a12 * yb) / det
        wx = (a11 * yb - a21 * ya) / det
    ok = np.isfinite(we) & (we > 0) & (wx > 0) & (wx <= max_anharmonicity * we)
    we, wx = we[ok], wx[ok]
    if we.size == 0:
        raise AssignmentError(
            "no labelling of these band centres is consistent with G(v) = ωe(v+½) − ωexe(v+½)² "
            f"with 0 < ωexe/ωe ≤ {max_anharmonicity}; check the values or raise max_anharmonicity")
    pred = we[:, None] * A2[None, :, 0] + wx[:, None] * A2[None, :, 1]  # (H, L)
    d = np.abs(x[None, :, None] - pred[:, None, :])  # (H, n, L)
    near = np.argmin(d, axis=2)
    L_index = {tuple(map(int, t)): k for k, t in enumerate(L)}
    for b, lab_b in (locks or {}).items():
        key = (int(lab_b[0]), int(lab_b[1]))
        if key not in L_index:
            raise AssignmentError(f"locked label {key[0]}-{key[1]} is outside v_upper <= {v_max}, "
                                  f"v_lower <= {hot_max}; raise v_max/hot_max or change the lock")
        near[:, int(b)] = L_index[key]
    # rank hypotheses by their (capped) distances and refit only the best distinct labellings
    dmin = np.take_along_axis(d, near[:, :, None], axis=2)[:, :, 0]
    pre = np.sum(np.minimum((dmin / s[None, :]) ** 2, 2500.0), axis=1)
    order = np.argsort(pre, kind="stable")
    uniq, first = np.unique(near[order], axis=0, return_index=True)
    best = np.argsort(first, kind="stable")[:max_labellings]
    uniq, first = uniq[best], order[first[best]]
    # two bands nearest to one label: the nearer keeps it, the other is left out (-1)
    rows = []
    for u, h in zip(uniq, first, strict=True):
        u = u.copy()
        vals, counts = np.unique(u, return_counts=True)
        for v in vals[counts > 1]:
            idx = np.nonzero(u == v)[0]
            locked_here = [i for i in idx if locks and int(i) in locks]
            keep = locked_here[0] if locked_here else idx[np.argmin(d[h, idx, v])]
            u[idx[idx != keep]] = -1
        rows.append(tuple(u.tolist()))
    return sorted(set(rows))
