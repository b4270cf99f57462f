"""Step kinds for loading, processing, peaks and notes."""

from __future__ import annotations

import numpy as np
import pandas as pd

from .. import processing
from ..errors import SessionStateError
from .steps import Context, State, StepKind, register_step, table_to_json

__all__ = ["Load", "Crop", "ToAbsorbance", "SubtractBaseline", "FindPeaks", "AddPeak",
           "RemovePeak", "Note"]


def _spectrum_result(sp) -> dict:
    return {"npoints": int(sp.x.size), "x_min": float(sp.x[0]), "x_max": float(sp.x[-1]),
            "y_kind": sp.y_kind, "data_sha256": sp.data_sha256()}


@register_step
class Load(StepKind):
    kind = "load"

    def apply(self, state: State, params: dict, ctx: Context):
        src = params["source"]
        if src not in ctx.sources:
            raise SessionStateError(f"load step names source {src!r}, which the session does not hold")
        sp = ctx.sources[src]
        return (State(spectrum=sp), _spectrum_result(sp),
                f"loaded {sp.x.size} points, {sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1 ({sp.y_kind})")


@register_step
class Crop(StepKind):
    kind = "crop"

    def apply(self, state, params, ctx):
        sp = processing.crop(state.require_spectrum(), params["lo"], params["hi"])
        peaks = state.peaks
        keep = (peaks["position"] >= sp.x[0]) & (peaks["position"] <= sp.x[-1])
        peaks = peaks[keep].reset_index(drop=True)
        new = state.evolve(spectrum=sp, baseline=None, peaks=peaks)
        return new, _spectrum_result(sp), f"cropped to {sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1"


@register_step
class ToAbsorbance(StepKind):
    kind = "to_absorbance"

    def apply(self, state, params, ctx):
        sp = processing.to_absorbance(state.require_spectrum())
        return state.evolve(spectrum=sp, baseline=None), _spectrum_result(sp), "converted to absorbance"


@register_step
class SubtractBaseline(StepKind):
    kind = "subtract_baseline"

    def apply(self, state, params, ctx):
        opts = dict(params)
        method = opts.pop("method")
        sp, baseline = processing.subtract_baseline(state.require_spectrum(), method, **opts)
        b = np.asarray(baseline, dtype=float)
        result = _spectrum_result(sp) | {
            "baseline_mean": float(b.mean()), "baseline_min": float(b.min()),
            "baseline_max": float(b.max()), "baseline_first": float(b[0]), "baseline_last": float(b[-1]),
        }
        return (state.evolve(spectrum=sp, baseline=b), result,
                f"subtracted a {method} baseline (mean {b.mean():.4g})")


@register_step
class FindPeaks(StepKind):
    kind = "find_peaks"

    def apply(self, state, params, ctx):
        sp = state.require_spectrum()
        noise = state.noise()
        peaks = processing.find_peaks(sp.x, sp.y, min_snr=params.get("min_snr", 5.0),
                                      min_separation=params.get("min_separation"), noise=noise)
        peaks = peaks.assign(origin="found")
        peaks = peaks.drop(columns=["index"], errors="ignore").reset_index(drop=True)
        cols = [c for c in peaks.columns if c != "origin"]
        result = {"noise": noise, "peaks": table_to_json(peaks[cols])}
        return (state.evolve(peaks=peaks), result,
                f"found {len(peaks)} peaks above SNR {params.get('min_snr', 5.0):g} (noise {noise:.3g})")


@register_step
class AddPeak(StepKind):
    kind = "add_peak"

    def apply(self, state, params, ctx):
        sp = state.require_spectrum()
        pos = float(params["position"])
        if not sp.x[0] <= pos <= sp.x[-1]:
            raise SessionStateError(
                f"add_peak: position {pos:g} cm-1 is outside the spectrum "
                f"({sp.x[0]:.6g}–{sp.x[-1]:.6g} cm-1)")
        noise = state.noise()
        if params.get("snap", True):
            pos = float(processing.nearest_maximum(sp.x, sp.y, pos, noise=noise))
        peaks = state.peaks
        pid = int(peaks["peak_id"].max()) + 1 if len(peaks) else 1
        row = {"peak_id": pid, **processing.peak_row(sp.x, sp.y, pos, noise), "origin": "manual"}
        row.pop("index", None)
        height = row["height"]
        new = pd.concat([peaks, pd.DataFrame([row])], ignore_index=True) if len(peaks) else \
            pd.DataFrame([row])
        new = new.sort_values("position", kind="stable").reset_index(drop=True)
        new["peak_id"] = new["peak_id"].astype("int64")
        result = {"peak_id": pid, "position": pos, "height": height}
        return state.evolve(peaks=new), result, f"added peak {pid} at {pos:.6g} cm-1"


@register_step
class RemovePeak(StepKind):
    kind = "remove_peak"

    def apply(self, state, params, ctx):
        pid = int(params["peak_id"])
        peaks = state.peaks
        if pid not in set(peaks["peak_id"].tolist()):
            known = ", ".join(str(i) for i in peaks["peak_id"].tolist()[:20]) or "none"
            raise SessionStateError(f"remove_peak: no peak with peak_id {pid}; ids are {known}")
        new = peaks[peaks["peak_id"] != pid].reset_index(drop=True)
        return state.evolve(peaks=new), {"removed": pid, "npeaks": len(new)}, f"removed peak {pid}"


@register_step
class Note(StepKind):
    kind = "note"

    def apply(self, state, params, ctx):
        text = str(params["text"])
        first = text.strip().splitlines()[0] if text.strip() else ""
        return state, {}, "note: " + (first[:60] + ("…" if len(first) > 60 else ""))
