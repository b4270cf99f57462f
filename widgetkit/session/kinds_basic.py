"""Step kinds for loading, processing, peaks and notes.

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
from .codec import decode_array, encode_array
from .params import Param, ParamProblem
from .records import table_from_json
from .steps import (
    Context,
    RecordMismatch,
    State,
    StepKind,
    cleared_text,
    drop_dependents,
    register_step,
    table_to_json,
)

__all__ = ["Load", "Crop", "ToAbsorbance", "SubtractBaseline", "FindPeaks", "AddPeak",
           "RemovePeak", "Note"]


def _spectrum_result(sp) -> dict:
    return {"npoints": int(sp.x.size), "x_min": float(sp.x[0]), "x_max": float(sp.x[-1]),
            "y_kind": sp.y_kind, "data_sha256": sp.data_sha256()}


_SOURCE_FIELDS = ("path", "sha256", "size", "format", "y_kind", "meta", "read_options")


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
                f"loaded {sp.x.size} points, {sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1 ({sp.y_kind})")

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
        return (new, _with_cleared(_spectrum_result(sp), cleared),
                "converted to absorbance" + cleared_text(cleared))

    def restore(self, state, params, result, ctx):
        from ..processing import to_absorbance

        sp = to_absorbance(state.require_spectrum())  # the same state, without hashing it
        return drop_dependents(state, spectrum=sp, baseline=None, peaks=_no_peaks(state))[0]


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
        return (new, _with_cleared(result, cleared),
                f"subtracted a {method} baseline (mean {b.mean():.4g})" + cleared_text(cleared))

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


def _direction(sp) -> str:
    """Dips for transmittance, peaks otherwise."""
    return "down" if sp.y_kind == "transmittance" else "up"


def _resolution(sp) -> float | None:
    """The instrument resolution (cm-1) when the file says it."""
    value = (sp.meta or {}).get("resolution")
    try:
        r = float(value)
    except (TypeError, ValueError):
        return None
    return r if np.isfinite(r) and r > 0 else None


def peak_context(state: State, noise_region=None):
    """The peak-search context (noise, local baseline, width) of the state's spectrum,
    computed once per spectrum and noise region."""
    key = ("peak_context", None if noise_region is None else tuple(noise_region))
    if key not in state._cache:
        from .. import processing

        sp = state.require_spectrum()
        state._cache[key] = processing.peak_context(
            sp.x, sp.y, noise_region=noise_region, direction=_direction(sp),
            width=_resolution(sp))
    return state._cache[key]


@register_step
class FindPeaks(StepKind):
    kind = "find_peaks"
    parameters = (
        Param("min_snr", "number", None, above=0, maximum=1e9, nullable=True,
              doc="smallest height above the local baseline, in noise sigmas (null: "
                  "automatic, from the length of the spectrum)"),
        Param("min_separation", "number", None, minimum=0, nullable=True, unit="cm-1",
              doc="smallest distance between peaks"),
        Param("noise_region", "range", None, nullable=True, unit="cm-1",
              doc="a flat stretch to measure the noise on"),
        Param("min_prominence", "number", None, minimum=0, maximum=1e9, nullable=True,
              doc="smallest prominence, in noise sigmas of the data searched"),
    )
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        from ..processing import search_peaks

        sp = state.require_spectrum()
        context = peak_context(state, params.get("noise_region"))
        search = search_peaks(
            sp.x, sp.y, min_snr=params.get("min_snr"), min_separation=params.get("min_separation"),
            min_prominence=params.get("min_prominence"), context=context)
        peaks = search.table.assign(origin="found")
        peaks = peaks.drop(columns=["index"], errors="ignore").reset_index(drop=True)
        peaks = _renumber(peaks, state.next_peak_id)
        cols = [c for c in peaks.columns if c != "origin"]
        new, cleared = drop_dependents(state, peaks=peaks)
        new = new.evolve(next_peak_id=state.next_peak_id + len(peaks))
        result = _with_cleared({"noise": search.noise.sigma, "search": search.to_json(),
                                "peaks": table_to_json(peaks[cols])}, cleared)
        how = "automatic" if params.get("min_snr") is None else "given"
        summary = (f"found {len(peaks)} peaks with snr ≥ {search.min_snr:.3g} ({how}); "
                   f"{search.noise.describe()}")
        return new, result, summary + cleared_text(cleared)

    def restore(self, state, params, result, ctx):
        peaks = _recorded_peaks(result.get("peaks"), state.next_peak_id)
        new, _ = drop_dependents(state, peaks=peaks.assign(origin="found"))
        return new.evolve(next_peak_id=state.next_peak_id + len(peaks))


def _renumber(peaks: pd.DataFrame, first: int) -> pd.DataFrame:
    """Peak ids ``first, first + 1, ...`` in table order."""
    out = peaks.copy()
    out["peak_id"] = np.arange(first, first + len(out), dtype=np.int64)
    return out


def _recorded_peaks(columns, first: int) -> pd.DataFrame:
    """The peak table of a recorded ``find_peaks`` result, checked against the id counter."""
    table = table_from_json(columns or {}, where="find_peaks result.peaks")
    needed = {"peak_id", "position", "height", "snr"}
    if not needed <= set(table.columns):
        raise RecordMismatch(f"peak table lacks {sorted(needed - set(table.columns))}")
    if table["peak_id"].tolist() != list(range(first, first + len(table))):
        raise RecordMismatch("recorded peak ids do not follow the session's id counter")
    return table.astype({"peak_id": "int64"})


def _no_peaks(state: State) -> pd.DataFrame:
    return state.peaks.iloc[0:0]


def _with_cleared(result: dict, cleared: dict) -> dict:
    return {**result, "cleared": cleared} if cleared else result


#: a click snaps to a top standing at least this many (smoothed) noise sigmas out
SNAP_SIGMAS = 3.0


def _local_width(peaks, pos: float, context, dx: float) -> float:
    """About one line width (cm-1) near ``pos``: the nearest found peak's FWHM, else the
    spectrum's typical width, else three samples."""
    if len(peaks) and "fwhm" in peaks:
        fw = peaks["fwhm"].to_numpy(dtype=float)
        ok = np.isfinite(fw) & (fw > 0)
        if ok.any():
            d = np.abs(peaks["position"].to_numpy(dtype=float)[ok] - pos)
            return float(fw[ok][int(np.argmin(d))])
    if np.isfinite(context.width):
        return float(context.width) * dx
    return 3.0 * dx


def _snap(sp, pos: float, context, width: float) -> float | None:
    """The top of the line at ``pos`` when it is within ``width`` and stands out (climbing
    the smoothed data above the local baseline, peaks up); None otherwise."""
    from .. import processing

    noise_s = context.noise.sigma * context.gain
    try:
        top = float(processing.nearest_maximum(sp.x, context.signal, pos, search=width,
                                               noise=noise_s))
    except ProcessingError:
        return None  # no maximum within one line width
    return top if np.interp(top, sp.x, context.signal) >= SNAP_SIGMAS * noise_s else None


@register_step
class AddPeak(StepKind):
    kind = "add_peak"
    parameters = (Param("position", "number", unit="cm-1", doc="where the peak is"),
                  Param("snap", "boolean", True,
                        doc="move it to the top of its line, when within one line width"))
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        from .. import processing

        sp = state.require_spectrum()
        pos = float(params["position"])
        if not sp.x[0] <= pos <= sp.x[-1]:
            raise SessionStateError(
                f"add_peak: position {pos:g} cm-1 is outside the spectrum "
                f"({sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1)")
        context = peak_context(state)
        dx = float(np.median(np.diff(sp.x)))
        peaks = state.peaks
        width = _local_width(peaks, pos, context, dx)
        top = _snap(sp, pos, context, width) if params.get("snap", True) else None
        pos = pos if top is None else top
        if len(peaks):
            d = np.abs(peaks["position"].to_numpy(dtype=float) - pos)
            k = int(np.argmin(d))
            if d[k] <= max(1.5 * dx, 0.25 * width):
                other = peaks.iloc[k]
                raise SessionStateError(
                    f"add_peak: {pos:.6g} cm-1 is already taken by peak "
                    f"{int(other['peak_id'])} at {float(other['position']):.6g} cm-1 (closer than "
                    f"a quarter of the line width, {width:.3g} cm-1); remove that peak first or "
                    "place the new one further away")
        pid = state.next_peak_id
        row = {"peak_id": pid, **processing.peak_row(
            sp.x, sp.y, pos, context.noise.sigma, baseline=context.baseline,
            direction=context.direction), "origin": "manual"}
        row.pop("index", None)
        row["fwhm"] = width
        new, cleared = _with_row(state, row)
        result = _with_cleared({"peak_id": pid, "position": pos, "height": row["height"],
                                "snr": row["snr"], "prominence": row["prominence"],
                                "fwhm": width, "baseline": row["baseline"],
                                "snapped": top is not None}, cleared)
        where = "" if top is not None or not params.get("snap", True) else \
            " (no top within one line width: kept where it was put)"
        return new, result, f"added peak {pid} at {pos:.6g} cm-1{where}" + cleared_text(cleared)

    def restore(self, state, params, result, ctx):
        pid = result.get("peak_id")
        if pid != state.next_peak_id or not isinstance(result.get("position"), float):
            raise RecordMismatch("recorded peak id or position does not fit the session")
        if "prominence" not in result:
            raise RecordMismatch("the peak was recorded without its prominence")
        row = {"peak_id": pid, "origin": "manual",
               **{k: result.get(k) for k in ("position", "height", "snr", "prominence", "fwhm",
                                             "baseline") if k in result}}
        return _with_row(state, {k: (np.nan if v is None else v) for k, v in row.items()})[0]


def _with_row(state: State, row: dict) -> tuple[State, dict]:
    """The state with one more peak (sorted by position; the id counter moves on; the line
    fit and assignment, made without it, are cleared) and what was cleared."""
    peaks = state.peaks
    new = pd.concat([peaks, pd.DataFrame([row])], ignore_index=True) if len(peaks) else \
        pd.DataFrame([row])
    new = new.sort_values("position", kind="stable").reset_index(drop=True)
    new["peak_id"] = new["peak_id"].astype("int64")
    out, cleared = drop_dependents(state, peaks=new)
    return out.evolve(next_peak_id=int(row["peak_id"]) + 1), cleared


@register_step
class RemovePeak(StepKind):
    kind = "remove_peak"
    parameters = (Param("peak_id", "integer", minimum=1, doc="the peak removed"),)
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        pid = int(params["peak_id"])
        peaks = state.peaks
        if pid not in set(peaks["peak_id"].tolist()):
            known = ", ".join(str(i) for i in peaks["peak_id"].tolist()[:20]) or "none"
            raise SessionStateError(f"remove_peak: no peak with peak_id {pid}; ids are {known}")
        new, cleared = drop_dependents(
            state, peaks=peaks[peaks["peak_id"] != pid].reset_index(drop=True))
        cleared.pop("peaks", None)  # the removed peak is the point of the step
        result = _with_cleared({"removed": pid, "npeaks": len(new.peaks)}, cleared)
        return new, result, f"removed peak {pid}" + cleared_text(cleared)


@register_step
class Note(StepKind):
    kind = "note"
    parameters = (Param("text", "string", doc="the note"),)

    def apply(self, state, params, ctx):
        text = str(params["text"])
        first = text.strip().splitlines()[0] if text.strip() else ""
        return state, {}, "note: " + (first[:60] + ("…" if len(first) > 60 else ""))
