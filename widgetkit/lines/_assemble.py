"""Result assembly of a line fit: the line table with uncertainties, the public
baseline coefficients, the model curves and the per-line warnings (flags)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._setup import Problem
from ._solve import Solution
from .derived import line_table, parameter_covariance
from .params import line_prefix

__all__ = ["assemble"]

#: chi-square this many times its expectation from the noise flags the whole fit
CHI_FLAG = 1.5


def _line_flags(prob: Problem, sol: Solution, table: pd.DataFrame, flags: dict) -> None:
    ids, dx = prob.ids, prob.dx
    owner = {line_prefix(i): i for i in ids} if sol.at_bound else {}
    for name in sol.at_bound:
        # a line's parameter is its prefix and one word ("l12_position"); anything else
        # (a baseline coefficient, a shared width) belongs to the fit
        lid = owner.get(name[:name.rfind("_") + 1], None)
        if lid is None:  # (a width name with "_" in it: search, as before)
            lid = next((i for i in ids if name.startswith(line_prefix(i))), "fit")
        flags.setdefault(lid, []).append(f"{name} ended at its bound")
    t_fwhm, t_area, t_err = (table[c].to_numpy() for c in ("fwhm", "area", "area_err"))
    for k in np.nonzero(t_fwhm < dx)[0]:
        flags.setdefault(ids[k], []).append(
            f"fitted FWHM {t_fwhm[k]:.3g} is below the sampling step {dx:.3g}: a spike "
            "fitted to noise?")
    for k in np.nonzero(np.isfinite(t_err) & (np.abs(t_area) < 3.0 * t_err))[0]:
        flags.setdefault(ids[k], []).append(
            f"area {t_area[k]:.3g} is not significant (standard error {t_err[k]:.3g})")


def assemble(prob: Problem, sol: Solution) -> dict:
    """The :class:`~.fitting.LineFit` fields that come from the solution (all but the
    verdict, settings and budget fields)."""
    res, model, tmap, bl = sol.result, prob.model, prob.tmap, prob.baseline
    flags = {k: list(v) for k, v in prob.flags.items()}
    v = model.variables(res.params)
    theta = tmap.values(v)
    values, cov_all = parameter_covariance(tmap, v, getattr(res, "covar", None))
    table = line_table(prob.shape, prob.ids, values, cov_all)
    nb = len(bl.params)
    bc = theta[len(theta) - nb:]
    bcov = None
    if cov_all is not None and nb:
        k = [values[n][1] for n in bl.params]
        bcov = cov_all[np.ix_(k, k)]
    bvals, berrs = bl.public(bc, bcov, prob.x_ref)
    _line_flags(prob, sol, table, flags)
    bg = 0.0 if prob.background is None else prob.background.values
    model_y = model.evaluate(theta) + bg
    if prob.ws is None and prob.noise > 0 and res.nfree > 0:
        ratio = res.redchi / prob.noise**2
        if ratio > CHI_FLAG:
            flags.setdefault("fit", []).append(
                f"chi-square is {ratio:.2f} x its expected value from the noise "
                f"({prob.noise:.3g}): missing lines, wrong shape or baseline?")
    return dict(
        table=table, result=res, params=res.params, chisqr=float(res.chisqr),
        redchi=float(res.redchi), nfev=sol.nfev, converged=sol.converged,
        flags={k: tuple(f) for k, f in flags.items()}, x=prob.xs, y=prob.ys, model_y=model_y,
        baseline_y=bl.evaluate(model.u, bc) + bg, components=model.components(theta),
        residual=prob.ys - model_y, spec=prob.spec,
        baseline_params=pd.DataFrame({"name": list(bl.public_names), "value": bvals,
                                      "stderr": berrs}),
        noise=prob.noise, background=prob.background, njev=sol.njev, stopped=sol.stopped,
        seconds=sol.seconds)
