"""Derived line quantities and their uncertainties, computed once from the covariance.

lmfit would carry ``height`` and ``fwhm`` as constraint-expression
parameters and propagate uncertainties to each of them, which costs
O(expressions² × parameters) per fit. Here they are derived once:

* ``height = area · profile(0; widths)`` (peak value of the line),
* ``fwhm`` from the shape (Gaussian ``2 sigma sqrt(2 ln 2)``, Lorentzian
  ``2 gamma``, Voigt exact numerically, pseudo-Voigt the TCH ``f``),

with first-order (delta-method) uncertainties ``var(q) = g^T C g``, ``g`` the
gradient of ``q`` with respect to (area, widths) and ``C`` their covariance,
obtained from the variables' covariance through the exact ``dθ/dv`` of the
constraint expressions (so tied and shared parameters carry their share).

For a large fit the variables' covariance is sparse (only the entries a line
fit needs, :mod:`.structured`); the parameters' covariance is then a
:class:`~.structured.ParameterCovariance` computed entry by entry, never an
n × n matrix.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import scipy.sparse as sp

from .params import ThetaMap, line_prefix
from .shapes import Shape
from .structured import ParameterCovariance

__all__ = ["line_table", "parameter_covariance"]


def parameter_covariance(tmap: ThetaMap, v: np.ndarray, covar: np.ndarray | None):
    """Values and covariance of every parameter (variables, fixed and tied).

    Returns
    -------
    values : dict name -> (value, index)
    cov : ndarray (n_params, n_params), ParameterCovariance (sparse ``covar``) or None
        Indexed as ``cov[i, j]`` with integer arrays either way.
    """
    values, jac = tmap.all_values_and_jacobian(v)
    if covar is None:
        return values, None
    if sp.issparse(covar):
        return values, ParameterCovariance(jac, covar)
    jd = jac.toarray()
    return values, jd @ covar @ jd.T


def line_table(shape: Shape, line_ids: Sequence, values: dict, cov: np.ndarray | None
               ) -> pd.DataFrame:
    """The line table: line_id, position, area, height, fwhm, widths, each with ``_err``."""
    m = len(line_ids)
    idx = {k: [values[line_prefix(i) + k][1] for i in line_ids] for k in shape.param_names}
    val = {k: np.array([values[line_prefix(i) + k][0] for i in line_ids])
           for k in shape.param_names}
    widths = [val[w] for w in shape.widths]
    g = shape.gradient(np.zeros(m), val["area"], 0.0, *widths)
    height = g[0]
    h_grad = np.vstack([g[1:2], g[3:]])  # d/d area, d/d widths
    fwhm, f_grad_w = shape.fwhm_grad(*widths)
    f_grad = np.vstack([np.zeros((1, m)), f_grad_w])

    def err(name):
        if cov is None:
            return np.full(m, np.nan)
        k = np.array(idx[name])
        return np.sqrt(np.clip(cov[k, k], 0.0, None))

    h_err = np.full(m, np.nan)
    f_err = np.full(m, np.nan)
    if cov is not None and m:
        kk = np.array([idx[s] for s in ["area", *shape.widths]]).T  # (m, 1 + n_widths)
        c = np.asarray(cov[kk[:, :, None], kk[:, None, :]])  # every line's block at once
        h_err = np.sqrt(np.clip(np.einsum("im,mij,jm->m", h_grad, c, h_grad), 0.0, None))
        f_err = np.sqrt(np.clip(np.einsum("im,mij,jm->m", f_grad, c, f_grad), 0.0, None))
    cols = {
        "line_id": list(line_ids),
        "position": val["position"], "position_err": err("position"),
        "area": val["area"], "area_err": err("area"),
        "height": height, "height_err": h_err,
        "fwhm": fwhm, "fwhm_err": f_err,
    }
    for w in shape.widths:
        cols[w] = val[w]
        cols[w + "_err"] = err(w)
    return pd.DataFrame(cols)
