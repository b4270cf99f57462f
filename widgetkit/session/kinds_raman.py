"""Step kind for the Raman-shift axis (``Session.to_raman_shift``)."""

from __future__ import annotations

from .. import processing
from .kinds_basic import _spectrum_result
from .steps import State, StepKind, register_step

__all__ = ["ToRamanShift"]


@register_step
class ToRamanShift(StepKind):
    """Absolute wavenumber -> Raman shift. The x axis changes entirely, so the baseline,
    peaks, line fit, assignment and locks of the previous state no longer apply and are
    cleared (the result says which were present)."""

    kind = "to_raman_shift"

    def apply(self, state: State, params: dict, ctx):
        sp = processing.to_raman_shift(state.require_spectrum(), params["excitation"],
                                       unit=params.get("unit", "nm"), medium=params.get("medium"),
                                       axis_medium=params.get("axis_medium", "vacuum"))
        cleared = [name for name, there in (
            ("baseline", state.baseline is not None), ("peaks", len(state.peaks) > 0),
            ("line fit", state.line_fit is not None), ("assignment", state.assignment is not None),
            ("locks", bool(state.locks))) if there]
        new = State(spectrum=sp)
        nu0 = sp.meta["excitation_wavenumber"]
        result = _spectrum_result(sp) | {"excitation_wavenumber": nu0, "cleared": cleared}
        summary = (f"Raman shift from the laser line at {nu0:.6g} cm-1 (vacuum): "
                   f"{sp.x[0]:.6g} to {sp.x[-1]:.6g} cm-1"
                   + (f"; cleared {', '.join(cleared)}" if cleared else ""))
        return new, result, summary
