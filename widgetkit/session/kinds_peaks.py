"""Step kinds for peaks: the search (``find_peaks``) and the hand edits (``add_peak``,
``remove_peak``).

Peak ids come from ``state.next_peak_id`` and only grow; each of these steps clears the line
fit and the assignment that were made from the previous peaks (see
:func:`~widgetkit.session.steps.drop_dependents`).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import ProcessingError, SessionStateError
from ..formatting import plural
from .kinds_basic import _with_cleared
from .params import Param
from .records import table_from_json
from .steps import (
    RecordMismatch,
    State,
    StepKind,
    cleared_text,
    drop_dependents,
    register_step,
    table_to_json,
)

__all__ = ["FindPeaks", "AddPeak", "RemovePeak", "peak_context"]


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


def peak_context(state: State, noise_region=None, fringe: bool | None = None):
    """The peak-search context (noise, local baseline, width) of the state's spectrum,
    computed once per spectrum, noise region and fringe setting (None: look for a fringe
    when the last peak search found one)."""
    if fringe is None:
        fringe = state.fringe is not None
    key = ("peak_context", None if noise_region is None else tuple(noise_region), bool(fringe))
    if key not in state._cache:
        from .. import processing

        sp = state.require_spectrum()
        state._cache[key] = processing.peak_context(
            sp.x, sp.y, noise_region=noise_region, direction=_direction(sp),
            width=_resolution(sp), fringe=bool(fringe))
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
        Param("fringe", "boolean", False,
              doc="set an interference fringe of the baseline aside (absent in a record: "
                  "off; Session.find_peaks turns it on)"),
    )
    argument_error = ProcessingError

    def apply(self, state, params, ctx):
        from ..processing import search_peaks

        sp = state.require_spectrum()
        context = peak_context(state, params.get("noise_region"), bool(params.get("fringe")))
        search = search_peaks(
            sp.x, sp.y, min_snr=params.get("min_snr"), min_separation=params.get("min_separation"),
            min_prominence=params.get("min_prominence"), context=context)
        found, cut = _without_cut_lines(search.table, sp.x)
        peaks = found.assign(origin="found")
        peaks = peaks.drop(columns=["index"], errors="ignore").reset_index(drop=True)
        peaks = _renumber(peaks, state.next_peak_id)
        cols = [c for c in peaks.columns if c != "origin"]
        new, cleared = drop_dependents(state, peaks=peaks)
        new = new.evolve(next_peak_id=state.next_peak_id + len(peaks),
                         peak_min_snr=params.get("min_snr"), fringe=context.fringe)
        result = _with_cleared({"noise": search.noise.sigma, "search": search.to_json(),
                                "peaks": table_to_json(peaks[cols])}, cleared)
        how = "automatic" if params.get("min_snr") is None else "given"
        summary = (f"found {plural(len(peaks), 'peak')} with SNR ≥ {search.min_snr:.3g} ({how}); "
                   f"{search.noise.describe()}")
        if context.fringe is not None:
            summary += f"; {context.fringe.describe()}"
        if cut:  # recorded only when there are some, so earlier results stay as they were
            result["cut_by_edge"] = cut
            what = ("a line cut by the edge, whose position" if len(cut) == 1 else
                    "lines cut by the edge, whose positions")
            summary += (f"; left out {plural(len(cut), 'maximum', 'maxima')} within half a line "
                        f"width of the end of the data (at {', '.join(f'{c:.6g}' for c in cut)} "
                        f"cm-1: {what} cannot be measured)")
        return new, result, summary + cleared_text(cleared)

    def restore(self, state, params, result, ctx):
        peaks = _recorded_peaks(result.get("peaks"), state.next_peak_id)
        new, _ = drop_dependents(state, peaks=peaks.assign(origin="found"))
        return new.evolve(next_peak_id=state.next_peak_id + len(peaks),
                          peak_min_snr=params.get("min_snr"), fringe=_recorded_fringe(result))


def _recorded_fringe(result):
    """The fringe a recorded peak search set aside (None when it found none)."""
    search = result.get("search") if isinstance(result, dict) else None
    rec = search.get("fringe") if isinstance(search, dict) else None
    if rec is None:
        return None
    from ..processing.fringe import Fringe

    try:
        return Fringe.from_json(rec)
    except (TypeError, KeyError, ValueError) as exc:
        raise RecordMismatch(f"the recorded fringe of the peak search is unreadable: {exc}") \
            from None


def _without_cut_lines(table: pd.DataFrame, x: np.ndarray) -> tuple[pd.DataFrame, list[float]]:
    """The peaks whose top lies at least half their FWHM inside the data, and the positions of
    the others: a maximum within half a line width of the first or last point is a line cut by
    the edge of the data (by a crop through it, say) or the rising wing of one outside it; its
    position, and anything fitted or assigned from it, would measure the edge, not the line."""
    if len(table) == 0 or "fwhm" not in table:
        return table, []
    pos = table["position"].to_numpy(float)
    half = 0.5 * np.nan_to_num(table["fwhm"].to_numpy(float), nan=0.0)
    cut = (pos - x[0] < half) | (x[-1] - pos < half)
    return table[~cut], [float(p) for p in pos[cut]]


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

    noise_s = float(context.noise.at(pos)) * context.gain  # the noise where the peak is
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
            sp.x, sp.y, pos, float(context.noise.at(pos)), baseline=context.baseline,
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
