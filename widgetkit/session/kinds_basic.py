"""Step kinds for loading, processing and notes (the peak kinds are in :mod:`.kinds_peaks`).

Steps that change the spectrum clear what was derived from it
(:func:`~widgetkit.session.steps.drop_dependents`): a crop keeps the peaks inside
the new range (their values are unchanged) and clears the line fit and the
assignment; a baseline subtraction or a conversion changes every value, so it
clears the peaks too. A new ``find_peaks`` replaces the peaks and so clears the
line fit, the assignment and the locks. Peak ids come from ``State.next_peak_id``
and are never given out twice. Computation modules are imported inside ``apply``
so that reopening a session (``restore``) needs none of them.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import ProcessingError, SessionStateError
from ..formatting import article, plural
from .codec import decode_array, encode_array
from .params import Param, ParamProblem
from .steps import (
    Context,
    RecordMismatch,
    State,
    StepKind,
    cleared_text,
    drop_dependents,
    register_step,
)

__all__ = ["Load", "Crop", "ToAbsorbance", "SubtractBaseline", "Note"]


#: how a summary names each baseline method ("subtracted an ALS baseline")
BASELINE_WORDS = {"als": "ALS", "poly": "polynomial"}


def _spectrum_result(sp) -> dict:
    return {"npoints": int(sp.x.size), "x_min": float(sp.x[0]), "x_max": float(sp.x[-1]),
            "y_kind": sp.y_kind, "data_sha256": sp.data_sha256()}


_SOURCE_FIELDS = ("path", "sha256", "size", "format", "y_kind", "meta", "read_options")


def _no_peaks(state: State) -> pd.DataFrame:
    return state.peaks.iloc[0:0]


def _with_cleared(result: dict, cleared: dict) -> dict:
    return {**result, "cleared": cleared} if cleared else result


@register_step
class Load(StepKind):
    kind = "load"
    tolerance = 0.0  # the source's identity and metadata are reproduced exactly
    parameters = (Param("source", "string", doc="id of the source record"),)

    def apply(self, state: State, params: dict, ctx: Context):
        src = params["source"]
        if src not in ctx.sources:
            raise SessionStateError(f"load step names source {src!r}, which the session does not hold")
        sp = ctx.sources[src]
        rec = {k: v for k, v in ctx.records.get(src, {}).items() if k != "data_sha256"}
        # the source's identity as recorded: verify compares it with the source record, so an
        # edit of a recorded hash, size or metadata value is a mismatch
        result = _spectrum_result(sp) | {"source": {k: rec.get(k) for k in _SOURCE_FIELDS}}
        return (State(spectrum=sp), result,
                f"loaded {plural(sp.x.size, 'point')}, {sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1 ({sp.y_kind})")

    def restore(self, state, params, result, ctx):
        if params["source"] not in ctx.sources:
            return self.apply(state, params, ctx)[0]  # names the missing source
        return State(spectrum=ctx.sources[params["source"]])  # no hashing: verify does that


@register_step
class Crop(StepKind):
    kind = "crop"
    parameters = (Param("lo", "number", unit="cm-1", doc="one end of the range kept"),
                  Param("hi", "number", unit="cm-1", doc="the other end (order free)"))
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        new, cleared, sp = self._cropped(state, params)
        return (new, _with_cleared(_spectrum_result(sp), cleared),
                f"cropped to {sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1" + cleared_text(cleared))

    def restore(self, state, params, result, ctx):
        return self._cropped(state, params)[0]  # the same state, without hashing the result

    @staticmethod
    def _cropped(state: State, params: dict):
        from ..processing import crop

        sp = crop(state.require_spectrum(), params["lo"], params["hi"])
        peaks = state.peaks
        keep = (peaks["position"] >= sp.x[0]) & (peaks["position"] <= sp.x[-1])
        new, cleared = drop_dependents(state, spectrum=sp, baseline=None,
                                       peaks=peaks[keep].reset_index(drop=True))
        return new, cleared, sp


@register_step
class ToAbsorbance(StepKind):
    kind = "to_absorbance"
    parameters = ()
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        from ..processing import to_absorbance

        sp = to_absorbance(state.require_spectrum())
        new, cleared = drop_dependents(state, spectrum=sp, baseline=None, peaks=_no_peaks(state))
        new = new.evolve(from_transmittance=True)
        return (new, _with_cleared(_spectrum_result(sp), cleared),
                "converted to absorbance" + cleared_text(cleared))

    def restore(self, state, params, result, ctx):
        from ..processing import to_absorbance

        sp = to_absorbance(state.require_spectrum())  # the same state, without hashing it
        new = drop_dependents(state, spectrum=sp, baseline=None, peaks=_no_peaks(state))[0]
        return new.evolve(from_transmittance=True)


@register_step
class SubtractBaseline(StepKind):
    kind = "subtract_baseline"
    parameters = (
        Param("method", "choice", choices=("poly", "als"), doc="baseline model"),
        Param("degree", "integer", 3, minimum=0, maximum=50, doc="poly: polynomial degree"),
        Param("k", "number", 3.0, above=0,
              doc="poly: points above k noise sigmas are masked as peaks"),
        Param("noise", "number", None, above=0, nullable=True, doc="poly: noise sigma"),
        Param("max_iter", "integer", None, minimum=1, maximum=1000,
              doc="iterations (poly 100, als 10)"),
        Param("tol", "number", 0.01, above=0, doc="poly: convergence tolerance"),
        Param("lam", "number", 1e5, above=0, doc="als: smoothness"),
        Param("p", "number", 0.01, above=0, below=1, doc="als: asymmetry"),
    )
    #: the options of each method (a test keeps these equal to processing.baseline_options)
    METHOD_OPTIONS = {"poly": ("degree", "k", "noise", "max_iter", "tol"),
                      "als": ("lam", "p", "max_iter")}
    argument_error = ProcessingError

    def check_params(self, params):
        out = super().check_params(params)
        allowed = self.METHOD_OPTIONS[out["method"]]
        for name in out:
            if name != "method" and name not in allowed:
                raise ParamProblem(name, f"is not an option of the {out['method']!r} baseline "
                                         f"(its options: {', '.join(allowed)})")
        return out

    def apply(self, state, params, ctx):
        from ..processing import subtract_baseline

        opts = dict(params)
        method = opts.pop("method")
        sp, baseline = subtract_baseline(state.require_spectrum(), method, **opts)
        b = np.asarray(baseline, dtype=float)
        result = _spectrum_result(sp) | {
            "baseline_mean": float(b.mean()), "baseline_min": float(b.min()),
            "baseline_max": float(b.max()), "baseline_first": float(b[0]), "baseline_last": float(b[-1]),
        }
        result["baseline"] = encode_array(b)  # reopening subtracts it again, without fitting
        new, cleared = drop_dependents(state, spectrum=sp, baseline=b, peaks=_no_peaks(state))
        what = article(BASELINE_WORDS.get(method, method))
        return (new, _with_cleared(result, cleared),
                f"subtracted {what} baseline (mean {b.mean():.4g})" + cleared_text(cleared))

    def restore(self, state, params, result, ctx):
        recorded = result.get("baseline")
        if not isinstance(recorded, dict):
            raise RecordMismatch("the baseline was recorded without its values")
        b, ok = decode_array(recorded, where="subtract_baseline result.baseline")
        sp = state.require_spectrum()
        if not ok or b.shape != sp.y.shape or sp.y_kind == "transmittance" \
                or not np.all(np.isfinite(b)):
            raise RecordMismatch("the recorded baseline does not fit the spectrum")
        new, _ = drop_dependents(state, spectrum=sp.replace(y=sp.y - b), baseline=b,
                                 peaks=_no_peaks(state))
        return new


@register_step
class Note(StepKind):
    kind = "note"
    parameters = (Param("text", "string", doc="the note"),)

    def apply(self, state, params, ctx):
        text = str(params["text"])
        first = text.strip().splitlines()[0] if text.strip() else ""
        return state, {}, "note: " + (first[:60] + ("…" if len(first) > 60 else ""))
