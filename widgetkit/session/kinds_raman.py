"""Step kind for the Raman-shift axis (``Session.to_raman_shift``)."""

from __future__ import annotations

from ..errors import ProcessingError
from .kinds_basic import _spectrum_result, _with_cleared
from .params import Param
from .steps import State, StepKind, cleared_text, drop_dependents, register_step

__all__ = ["ToRamanShift"]


@register_step
class ToRamanShift(StepKind):
    """Absolute wavenumber -> Raman shift. The x axis changes entirely, so the baseline,
    peaks, line fit, assignment and locks of the previous state no longer apply and are
    cleared (the result says which were present)."""

    kind = "to_raman_shift"
    parameters = (
        Param("excitation", "number", above=0, doc="the laser line, in unit"),
        Param("unit", "string", "nm", doc="unit of excitation: 'nm' or 'cm-1'"),
        Param("medium", "choice", None, choices=("air", "vacuum"), nullable=True,
              doc="where a wavelength was measured"),
        Param("axis_medium", "choice", "vacuum", choices=("air", "vacuum"),
              doc="where the file's own wavelengths were measured"),
    )
    argument_error = ProcessingError

    def apply(self, state: State, params: dict, ctx):
        from .. import processing

        sp = processing.to_raman_shift(state.require_spectrum(), params["excitation"],
                                       unit=params.get("unit", "nm"), medium=params.get("medium"),
                                       axis_medium=params.get("axis_medium", "vacuum"))
        new, cleared = drop_dependents(state, spectrum=sp, baseline=None,
                                       peaks=state.peaks.iloc[0:0])
        nu0 = sp.meta["excitation_wavenumber"]
        result = _with_cleared(_spectrum_result(sp) | {"excitation_wavenumber": nu0}, cleared)
        summary = (f"Raman shift from the laser line at {nu0:.6g} cm-1 (vacuum): "
                   f"{sp.x[0]:.6g} to {sp.x[-1]:.6g} cm-1" + cleared_text(cleared))
        return new, result, summary
