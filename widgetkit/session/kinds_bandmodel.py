"""The step kind of the band-model fit (:func:`widgetkit.bandmodel.fit_spectrum`).

The recorded result holds the fitted parameters with their standard errors and status,
the constants, the correlation matrix, the convolution domain, the status and its
reasons, and every parameter value: :meth:`FitBandModel.restore` rebuilds the fit from
it with one model evaluation (no fit) when a session is reopened; ``verify`` re-runs
the fit and compares.
"""

from __future__ import annotations

import contextlib
import contextvars
from collections.abc import Callable, Iterator

from ..errors import AssignmentError, FitError, WidgetkitError
from ..fitmarks import unmarked
from ..formatting import plural
from .kinds_analysis import molecule_from_param
from .params import Param
from .steps import RecordMismatch, State, StepKind, register_step, table_to_json

__all__ = ["FitBandModel", "progress_to", "plain_bands"]

#: the progress callback of the fit now running (not recorded: it is not data)
_PROGRESS: contextvars.ContextVar[Callable | None] = contextvars.ContextVar("band_progress",
                                                                             default=None)


@contextlib.contextmanager
def progress_to(callback: Callable | None) -> Iterator[None]:
    """Send the progress of band-model fits run inside the block to ``callback``."""
    token = _PROGRESS.set(callback)
    try:
        yield
    finally:
        _PROGRESS.reset(token)


def plain_bands(band):
    """(1, 0) or [(1, 0), (2, 1)] as JSON lists (other values go on to be refused)."""
    try:
        if len(band) == 2 and all(isinstance(v, int) for v in band):
            return [int(band[0]), int(band[1])]
        return [[int(a), int(b)] for a, b in band]
    except (TypeError, ValueError):
        return band


def _result(fit) -> dict:
    corr = fit.correlation
    return {
        "status": fit.status, "reasons": list(fit.reasons), "converged": bool(fit.converged),
        "domain": fit.domain, "redchi": float(fit.redchi), "error_scale": float(fit.error_scale),
        "structured_residual": bool(fit.structured_residual),
        "error_factors": {str(k): float(v) for k, v in fit.error_factors.items()},
        "parameters": table_to_json(fit.parameters[["name", "value", "stderr", "status", "unit"]]),
        "constants": table_to_json(unmarked(fit.constants)),
        "correlation": {"names": list(corr.columns), "matrix": corr.to_numpy().tolist()},
        "messages": [str(m) for m in fit.messages],
        "structure_temperature": float(fit.spec.get("structure_temperature", 0.0)),
    }


def band_molecule(value):
    """The molecule of a band-model step: a formula is a diatomic ("CO", "HCl", "H35Cl") or,
    when it is none and names three or more atoms in their order along the axis ("OCO",
    "HCN"), a :class:`~widgetkit.Linear`; a molecule's ``to_dict()`` as for the assignment.
    A formula that is neither is a :class:`FitError` saying how to write both."""
    if not isinstance(value, str):
        return molecule_from_param(value)
    try:
        return molecule_from_param(value)
    except AssignmentError as diatomic:
        try:
            linear = molecule_from_param(value, "parallel")
        except AssignmentError as exc:
            raise FitError(f"molecule {value!r}: {diatomic}; nor is it a linear molecule: {exc}"
                           ) from None
        if len(linear.atoms) < 3:
            raise FitError(f"molecule {value!r}: {diatomic}") from None
        return linear


_INSTRUMENTS = ("gaussian", "triangular", "boxcar", "sinc", "sinc2")


@register_step
class FitBandModel(StepKind):
    kind = "fit_band_model"
    # an iterative solver: identical on one machine, tiny differences across BLAS builds
    tolerance = 1e-6
    argument_error = FitError
    parameters = (
        Param("molecule", ("string", "mapping"), doc="formula ('CO') or {'atoms': [...]}"),
        Param("band", "json", [1, 0], doc="(v_upper, v_lower) or a list of them"),
        Param("temperature", "number", None, above=0, maximum=1e5, nullable=True, unit="K",
              doc="start value of T"),
        Param("resolution", "number", None, minimum=0, maximum=1e4, nullable=True, unit="cm-1",
              doc="instrument resolution (default: the file's)"),
        Param("instrument", "choice", "gaussian", choices=_INSTRUMENTS, doc="line shape"),
        Param("isotopologues", ("string", "strings", "mapping"), "natural",
              doc="'natural', 'free', 'main', names or name -> abundance"),
        Param("fix", "mapping", None, nullable=True, doc="parameters held at values"),
        Param("start", "mapping", None, nullable=True, doc="start values"),
        Param("free", "strings", None, nullable=True, doc="parameters freed"),
        Param("baseline", "choice", "linear", choices=("none", "constant", "linear", "poly2",
                                                       "poly3"), nullable=True),
        Param("y_kind", "choice", None, choices=("absorbance", "transmittance"), nullable=True),
        Param("joint", "boolean", True, doc="mass-independent constants"),
        Param("centrifugal", "choice", "shared", choices=("shared", "separate", "none")),
        Param("shape", "choice", "doppler", choices=("doppler", "voigt")),
        Param("lorentz_hwhm", "number", None, minimum=0, nullable=True, unit="cm-1"),
        Param("convolve", "choice", "auto", choices=("auto", "absorbance", "transmittance")),
        Param("kind", "choice", None, choices=("parallel", "perpendicular"), nullable=True,
              doc="band type (only parallel bands are modelled)"),
        Param("max_nfev", "integer", 3000, minimum=3, maximum=100_000),
        Param("max_time", "number", 60.0, above=0, maximum=86_400.0, unit="s"),
        Param("widen_errors", "boolean", False,
              doc="widen each standard error for a structured residual (absent in a record: "
                  "off, errors scaled by one factor as then; Session.fit_band_model turns it on)"),
        Param("check_contour", "boolean", False,
              doc="compare the model's P-R branch maxima with the data's (absent in a record: "
                  "off, as then; Session.fit_band_model turns it on)"),
        Param("second_look", "boolean", False,
              doc="implausible estimated constants judged against estimates from the fitted "
                  "B (absent in a record: off, as then; Session.fit_band_model turns it on)"),
    )

    def apply(self, state: State, params: dict, ctx):
        from .. import bandmodel

        sp = state.require_spectrum()
        opts = dict(params)
        molecule = band_molecule(opts.pop("molecule"))
        # the function's default is on; a record without the key was made before it existed
        opts["widen_errors"] = bool(opts.get("widen_errors", False))
        opts["check_contour"] = bool(opts.get("check_contour", False))
        opts["second_look"] = bool(opts.get("second_look", False))
        fit = bandmodel.fit_spectrum(sp, molecule, progress=_PROGRESS.get(), **opts)
        summary = (f"band model of {' '.join(molecule.atoms)}: {fit.status}, "
                   f"{plural(int((fit.parameters['status'] == 'free').sum()), 'parameter')} fitted, "
                   f"reduced chi-square {fit.redchi:.3g} ({fit.domain} domain)")
        return state.evolve(band_model=fit), _result(fit), summary

    def restore(self, state: State, params: dict, result: dict, ctx) -> State:
        """The state after the step, from its recorded result (one model evaluation); a
        record that does not fit the spectrum raises RecordMismatch (the session refits)."""
        from .. import bandmodel

        opts = dict(params)
        try:
            molecule = band_molecule(opts.pop("molecule"))
            fit = bandmodel.restore_fit(state.require_spectrum(), molecule, opts, result)
        except (WidgetkitError, KeyError, ValueError, TypeError, IndexError) as exc:
            raise RecordMismatch(f"fit_band_model: {exc}") from None
        return state.evolve(band_model=fit)
