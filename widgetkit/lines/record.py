"""A line fit's curves rebuilt from its recorded values (fast reopen of a session).

A saved session records each line fit's table (areas, positions, widths), its
baseline coefficients and its settings. :func:`model_curves` evaluates the
model from those numbers on the data, without fitting: the same windowed
evaluation as :mod:`.model`, with each window and far wing taken from the
final values (the fit fixed them from the values of its last pass, so the
curves agree with the fitted ones to far below the noise).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from .background import Background
from .baselines import get_baseline
from .model import WindowedModel
from .shapes import get_shape

__all__ = ["model_curves"]


def model_curves(x, y, table: pd.DataFrame, *, shape: str, baseline: str | None,
                 baseline_values: Sequence[float], window: float | None,
                 region: Sequence[float] | None = None,
                 background: Mapping | None = None) -> Mapping[str, np.ndarray]:
    """Model, baseline, components and residual of a fit from its recorded values.

    Parameters
    ----------
    x, y : ndarray, shape (n,)
        The spectrum the fit was made on (x ascending, cm⁻¹).
    table : DataFrame
        The fit's line table: ``area``, ``position`` and the shape's width columns
        (``sigma``, ``gamma``), one row per line.
    shape, baseline : str
        Registered line shape and baseline names (:data:`~widgetkit.lines.SHAPES`,
        :data:`~widgetkit.lines.BASELINES`).
    baseline_values : sequence of float
        The public baseline coefficients ``b0, b1, ...`` (the fit's ``baseline_params``),
        evaluated in their public form (for example ``b0 + b1 x``).
    window : float or None
        Evaluation window in half widths, as the fit used.
    region : (lo, hi), optional
        The fit's region; only data with ``lo <= x <= hi`` is used.
    background : mapping, optional
        The recorded smooth background (:meth:`.background.Background.to_json`) of a
        fit with ``baseline="auto"``.

    Returns
    -------
    dict
        ``x, y, model_y, baseline_y, residual`` (shape (n_used,)) and ``components``
        (shape (n_lines, n_used)), as the :class:`~widgetkit.lines.LineFit` fields.
    """
    shp, bl = get_shape(shape), get_baseline("linear" if baseline == "auto" else baseline)
    xs, ys = np.asarray(x, dtype=float), np.asarray(y, dtype=float)
    if region is not None:
        lo, hi = sorted(float(r) for r in region)
        keep = (xs >= lo) & (xs <= hi)
        xs, ys = xs[keep], ys[keep]
    m = len(table)
    lines = [table[name].to_numpy(dtype=float) for name in shp.param_names]
    bc = np.asarray(list(baseline_values), dtype=float)
    theta = np.concatenate([*lines, bc])
    model = WindowedModel(xs, ys, None, shp, bl, 0.0, m, None, window)
    model.set_windows(theta)
    model.set_wings(theta)
    bg = 0.0 if background is None else Background.from_json(background, xs).values
    model_y = model.evaluate(theta) + bg
    return {"x": xs, "y": ys, "model_y": model_y, "baseline_y": bl.evaluate(xs, bc) + bg,
            "components": model.components(theta), "residual": ys - model_y}
