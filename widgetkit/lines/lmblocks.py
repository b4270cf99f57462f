"""Levenberg–Marquardt with one damping per independent block of lines (large fits).

Lines whose windows overlap no window of another group form an independent
block (:func:`~.structured.blocks`, the connected components of the window
overlap graph). Their variables meet only through the global ones (baseline,
shared widths, tie targets). Here every block gets its own damping and its own
step acceptance, so the blocks are in effect fitted separately, in one
factorisation of the structured normal equations:

* a trial step is solved with each block's damping on its variables (the
  globals have their own); if the total chi-square fell, it is taken and every
  damping falls, as in plain Levenberg–Marquardt;
* if not, the blocks whose chi-square over their own points did not fall keep
  their old values and their damping rises, while the others take their step
  and their damping falls, provided the total now falls;
* otherwise every damping rises.

A block that does not settle (a line that runs away, a region the model does
not describe) then only slows itself: the rest of the spectrum keeps its
quadratic convergence. With one block this is ordinary Levenberg–Marquardt
with separate damping for the globals. The convergence test is the same as
:func:`.solver.levenberg_marquardt`'s.
"""

from __future__ import annotations

import numpy as np

from .structured import blocks

__all__ = ["levenberg_marquardt_blocks", "point_blocks"]


def point_blocks(model, labels: np.ndarray) -> np.ndarray:
    """Block of every data point (the block whose windows cover it), ``n_blocks`` if none."""
    nb = int(labels.max()) + 1 if labels.size else 0
    lo = np.full(nb, model.x.size)
    hi = np.zeros(nb, dtype=int)
    np.minimum.at(lo, labels, model.starts)
    np.maximum.at(hi, labels, model.ends)
    out = np.full(model.x.size, nb, dtype=int)
    for b in range(nb):  # block spans do not overlap
        out[lo[b]:hi[b]] = b
    return out


def _variable_blocks(line_of: np.ndarray, labels: np.ndarray) -> np.ndarray:
    nb = int(labels.max()) + 1 if labels.size else 0
    return np.where(line_of >= 0, labels[np.maximum(line_of, 0)], nb)


def levenberg_marquardt_blocks(model, v, lo, hi, nfree: int, max_iter: int = 60,
                               max_nfev: int = 150):
    """Block-damped Levenberg–Marquardt on the structured normal equations.

    Same arguments and return value as :func:`.solver.levenberg_marquardt`.
    """
    from .solver import CONVERGENCE_TOL, bounded_gauss_newton

    r = model.residual_vec(v)
    chi = float(r @ r)
    nfev, njev, crit, slow = 1, 0, np.inf, 0
    held = np.zeros(v.size, dtype=bool)
    labels = blocks(model)
    nb = int(labels.max()) + 1
    pblock = point_blocks(model, labels)
    vblock, lam = None, np.full(nb + 1, 1e-3)
    for _ in range(max_iter):
        if nfev >= max_nfev:
            break
        hess, g = model.normal_equations(v, r)
        njev += 1
        if vblock is None:
            vblock = _variable_blocks(hess.line_of, labels)
        gn, pred, held = bounded_gauss_newton(hess, g, v, lo, hi, fast=True)
        crit = pred / max(chi / max(nfree, 1), 1e-300)
        if crit < 1e-3 * CONVERGENCE_TOL:
            vn = np.clip(v + gn, lo, hi)  # one last full Gauss–Newton step
            rn = model.residual_vec(vn)
            nfev += 1
            if float(rn @ rn) <= chi:
                v, r, chi = vn, rn, float(rn @ rn)
            break
        moved = _damped_step(model, hess, g, ~held, v, r, chi, lo, hi, lam, vblock, pblock,
                             max_nfev - nfev)
        nfev += moved[3]
        if moved[0] is None:
            break
        vn, rn, cn = moved[:3]
        slow = slow + 1 if chi - cn <= 1e-10 * chi else 0
        v, r, chi = vn, rn, cn
        if slow >= 3:  # stalled: leave the verdict to the certificate
            break
    names = [model.tmap.var_names[k] for k in np.nonzero(held)[0]]
    return v, crit, names, nfev, njev


def _damped_step(model, hess, g, free, v, r, chi, lo, hi, lam, vblock, pblock, nfev_left):
    """One accepted step with per-block damping (``lam`` updated in place), or None."""
    nb = lam.size - 1
    old = np.bincount(pblock, r * r, minlength=nb + 1)
    nfev = 0
    while np.min(lam) < 1e12 and nfev < max(nfev_left, 1):
        step = hess.solve(g, free, lam[vblock])[0]
        vt = np.clip(v + step, lo, hi)
        rt = model.residual_vec(vt)
        nfev += 1
        ct = float(rt @ rt)
        if np.isfinite(ct) and ct < chi:  # the whole step: every damping falls
            lam[:] = np.maximum(lam * 0.2, 1e-10)
            return vt, rt, ct, nfev
        with np.errstate(invalid="ignore"):
            worse = ~(np.bincount(pblock, rt * rt, minlength=nb + 1) < old)
        worse[nb] = False  # the globals are judged by the total
        if np.any(worse[:nb]) and not np.all(worse[:nb]):
            vm = np.where(worse[vblock], v, vt)  # the blocks that got worse keep their values
            rm = model.residual_vec(vm)
            nfev += 1
            cm = float(rm @ rm)
            if np.isfinite(cm) and cm < chi:
                lam[~worse] = np.maximum(lam[~worse] * 0.2, 1e-10)
                lam[worse] = np.maximum(lam[worse], 1e-6) * 10.0
                return vm, rm, cm, nfev
        lam[:] = np.maximum(lam, 1e-6) * 10.0
    return None, None, None, nfev
