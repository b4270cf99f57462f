"""Line-shape fitting: fast, certified multi-line fits on lmfit.

``fit(x, y, positions, shape="voigt", ...)`` fits lines plus a baseline and
returns a :class:`LineFit` holding the line table, the lmfit result, the model
and its components. Line shapes are area-normalised with analytic
derivatives (:mod:`.shapes`), registered by name in :data:`SHAPES`; baselines
in :data:`BASELINES`. Each line is evaluated on a window around its centre,
the Jacobian is sparse and analytic, and convergence is checked by our own
test, not the solver's flag (:mod:`.fitting`).
"""

from __future__ import annotations

from .baselines import BASELINES, Baseline
from .expressions import check_expression
from .fitting import CONVERGENCE_TOL, DEFAULT_WINDOW, LineFit, fit
from .shapes import (
    SHAPES,
    Shape,
    doppler_sigma,
    gaussian,
    lorentzian,
    olivero_fwhm,
    pseudo_voigt,
    tch_parameters,
    voigt,
    voigt_fwhm,
)
from .start import estimate_noise

__all__ = [
    "fit",
    "LineFit",
    "SHAPES",
    "Shape",
    "BASELINES",
    "Baseline",
    "DEFAULT_WINDOW",
    "CONVERGENCE_TOL",
    "gaussian",
    "lorentzian",
    "voigt",
    "pseudo_voigt",
    "voigt_fwhm",
    "olivero_fwhm",
    "tch_parameters",
    "doppler_sigma",
    "estimate_noise",
    "check_expression",
]
