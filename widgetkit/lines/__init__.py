"""Line-shape fitting: fast, certified multi-line fits on lmfit.

``fit(x, y, positions, shape="voigt", ...)`` fits lines plus a baseline and
returns a :class:`LineFit` holding the line table, the lmfit result, the model
and its components. Line shapes are area-normalised with analytic
derivatives (:mod:`.shapes`), registered by name in :data:`SHAPES`; baselines
in :data:`BASELINES`. Each line is evaluated on a window around its centre,
the Jacobian is sparse and analytic, and convergence is checked by our own
test, not the solver's flag (:mod:`.fitting`).

The names below load on first use, so that importing a light module of this
package (:mod:`.expressions`, say, to check a constraint in a saved session)
does not import lmfit.
"""

from __future__ import annotations

import importlib
from typing import Any

__all__ = [
    "fit",
    "LineFit",
    "SHAPES",
    "Shape",
    "BASELINES",
    "Baseline",
    "DEFAULT_WINDOW",
    "CONVERGENCE_TOL",
    "DEFAULT_MAX_NFEV",
    "DEFAULT_TIME_LIMIT",
    "Budget",
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

#: public name -> the module (in this package) that defines it
_WHERE = {
    "fit": "fitting", "LineFit": "fitting", "DEFAULT_WINDOW": "fitting",
    "CONVERGENCE_TOL": "fitting", "DEFAULT_MAX_NFEV": "budget", "DEFAULT_TIME_LIMIT": "budget",
    "Budget": "budget", "BASELINES": "baselines", "Baseline": "baselines",
    "check_expression": "expressions", "estimate_noise": "..processing.noise",
    **{name: "shapes" for name in ("SHAPES", "Shape", "doppler_sigma", "gaussian", "lorentzian",
                                   "olivero_fwhm", "pseudo_voigt", "tch_parameters", "voigt",
                                   "voigt_fwhm")},
}


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        where = _WHERE[name]
        module = importlib.import_module(where if where.startswith(".") else "." + where,
                                         __name__)
        value = getattr(module, name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'widgetkit.lines' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
