"""The step kind of line fitting (``Session.fit_lines``).

Its result holds a full record of the :class:`~widgetkit.lines.LineFit`
(``result["record"]``, see :mod:`widgetkit.session.records`), so reopening a
session rebuilds the fit from the record (``restore``: the table, statistics and
settings as recorded, the model curves evaluated from them on first use by
:func:`widgetkit.lines.record.model_curves`) instead of fitting again.
Parameters are declared once (shapes and baselines by name, constraint
expressions checked for grammar, size and evaluability, bounded confidence
intervals and fit size) for live calls and saved files alike.

Budget and replay: every fit runs under a budget of evaluations (``max_nfev``) and
wall time (``time_limit``); the step records both with what was used
(``result["budget"]``: ``nfev``, ``seconds``, ``stopped``). A fit that stopped on
its evaluation cap replays exactly by itself. A fit that stopped on its time limit
would replay differently on a faster or busier machine, so its replay
(:meth:`FitLines.replay`, used by ``verify`` and wherever a recorded fit is
computed again) stops before the evaluation after the recorded ``nfev`` and counts
that as the time limit: the same evaluations, the same result. So does a solve whose
budget ran out while its point still counted as converged (``cut_by_solve``, recorded only
then), and a replay takes no decision by the clock. Seconds are not compared. Progress
(``Session.fit_lines(progress=...)``) is not recorded.
"""

from __future__ import annotations

import contextlib
import contextvars
import re
from collections.abc import Callable, Iterator

import numpy as np
import pandas as pd

from ..errors import FitError, SessionStateError, WidgetkitError
from ..formatting import plural
from .params import Param, ParamProblem, show
from .records import Restored, decode, encode, encode_fields, table_from_json
from .steps import (
    RecordMismatch,
    State,
    StepKind,
    assigned_count,
    cleared_text,
    register_step,
    table_to_json,
)

__all__ = ["FitLines", "MAX_CONF_INTERVAL", "MAX_FIT_CELLS", "SHAPE_WIDTHS", "BASELINE_NAMES",
           "progress_to"]

#: the progress callback of the line fit now running (not recorded: it is not data)
_PROGRESS: contextvars.ContextVar[Callable | None] = contextvars.ContextVar("lines_progress",
                                                                             default=None)


@contextlib.contextmanager
def progress_to(callback: Callable | None) -> Iterator[None]:
    """Send the progress ``(fraction, text)`` of line fits run inside the block to
    ``callback``."""
    token = _PROGRESS.set(callback)
    try:
        yield
    finally:
        _PROGRESS.reset(token)


#: LineFit fields not recorded: the table and statistics are recorded beside the record,
#: the arrays are rebuilt from the spectrum (:func:`widgetkit.lines.record.model_curves`),
#: the lmfit objects and evaluation counts come from running the fit again when asked for
_LINEFIT_NOT_RECORDED = ("table", "chisqr", "redchi", "converged", "result", "params", "nfev",
                         "njev", "x", "y", "model_y", "baseline_y", "components", "residual",
                         "background")
_CURVES = ("x", "y", "model_y", "baseline_y", "components", "residual")
#: columns of LineFit.removed (a test keeps them equal to widgetkit.lines.prune's, which
#: this module must not import: reopening a session imports no fitting code)
REMOVED_COLUMNS = ("line_id", "rule", "reason", "merged_into", "start", "position", "area",
                   "area_err", "fwhm")
#: columns of LineFit.added (kept equal to widgetkit.lines.missed's by a test, as above)
ADDED_COLUMNS = ("line_id", "position", "height", "snr", "reason")

#: most parameters given confidence intervals in one fit (each costs many refits)
MAX_CONF_INTERVAL = 8
#: most model values (lines × points) one fit may hold: its components alone are 8 bytes each
#: (800 MB at this bound), whether fitted or rebuilt from a record
MAX_FIT_CELLS = 100_000_000
#: up to this many line × point pairs a fit's components are dense (beyond, each line is
#: held on its window only: widgetkit.lines.model)
DENSE_PAIRS = 20_000_000
#: the registered line shapes with their width parameters, and the baselines (a test keeps
#: these equal to the registries of widgetkit.lines, which this module must not import)
#: how a summary names each line shape ("fitted 12 Voigt lines")
SHAPE_WORDS = {"gaussian": "Gaussian", "lorentzian": "Lorentzian", "voigt": "Voigt",
               "pseudo_voigt": "pseudo-Voigt"}
SHAPE_WIDTHS = {"gaussian": ("sigma",), "lorentzian": ("gamma",), "voigt": ("sigma", "gamma"),
                "pseudo_voigt": ("sigma", "gamma")}
SHAPE_NAMES = tuple(SHAPE_WIDTHS)
BASELINE_NAMES = ("auto", "none", "constant", "linear", "poly2", "exponential")
_CONSTRAINT_KEYS = ("value", "min", "max", "vary", "expr")


def _dense_band_hint(sp) -> str:
    """A hint for a spectrum whose every point the noise measure takes as line-free: either
    pure noise, or a dense band with no gap (at low resolution), whose lines' own scatter
    then passes for noise and hides them. Only for the message (nothing is recorded)."""
    from ..processing import measure_noise

    try:
        est = measure_noise(sp.x, sp.y)
    except WidgetkitError:  # a hint never hides the message it joins
        return ""
    if est.method != "line-free points" or est.line_free_fraction < 0.99:
        return ""
    return (f". The noise ({est.sigma:.3g}) was measured with every point taken as "
            "line-free: if the spectrum holds only a dense band with no gap between its lines, "
            "that is the lines' own scatter and it hides them; give find_peaks a flat stretch "
            "(noise_region=(lo, hi) in cm-1) or crop a wider range with some baseline")


def _check_constraints(constraints: dict | None) -> None:
    """Constraint entries well formed, every expression readable and evaluable in its
    parts made of numbers (names are checked against the fit's parameters when it runs)."""
    from ..lines.expressions import check_grammar

    for name, spec in (constraints or {}).items():
        field = f"constraints.{name}"
        try:
            if name == "doppler":
                if not isinstance(spec, dict) or not {"temperature", "mass"} <= set(spec):
                    raise ParamProblem(field, "must be {'temperature': K, 'mass': u} (and "
                                              f"optionally 'lines'), got {show(spec)}")
                for key in ("temperature", "mass"):
                    Param(key, "number", above=0).check(spec[key], f"{field}.{key}")
            elif isinstance(spec, str):
                check_grammar(spec, name)
            elif isinstance(spec, dict):
                extra = sorted(set(spec) - set(_CONSTRAINT_KEYS))
                if extra:
                    raise ParamProblem(field, f"has unknown keys {extra}; use "
                                              f"{', '.join(_CONSTRAINT_KEYS)}")
                if isinstance(spec.get("expr"), str) and spec["expr"]:
                    check_grammar(spec["expr"], name)
            elif isinstance(spec, bool) or not isinstance(spec, (int, float)):
                raise ParamProblem(field, "must be an expression, a number or a dict of "
                                          f"{', '.join(_CONSTRAINT_KEYS)}, got {show(spec)}")
        except FitError as exc:
            raise ParamProblem(field, str(exc)) from None


@register_step
class FitLines(StepKind):
    kind = "fit_lines"
    # an iterative solver: identical on one machine, tiny differences across BLAS builds
    tolerance = 1e-6
    parameters = (
        Param("shape", "choice", "voigt", choices=SHAPE_NAMES, doc="line shape"),
        Param("shared_width", ("boolean", "choice", "mapping"), False, choices=("sigma", "gamma"),
              doc="one width for all lines, one width kind, or groups of line ids"),
        Param("baseline", "choice", "linear", choices=BASELINE_NAMES, nullable=True,
              doc="baseline fitted with the lines ('auto': linear on a smooth background "
                  "when the line-free points need one; absent in a record: linear)"),
        Param("region", "range", None, nullable=True, unit="cm-1", doc="fit only lo <= x <= hi"),
        Param("window", "number", 100.0, above=1, nullable=True,
              doc="evaluation window, in half widths"),
        Param("heights", "numbers", None, nullable=True, null_items=True,
              doc="starting heights (null: estimate)"),
        Param("widths", "numbers", None, nullable=True, null_items=True, unit="cm-1",
              doc="starting FWHM (null: estimate)"),
        Param("noise", "number", None, above=0, nullable=True, doc="noise sigma of y"),
        Param("constraints", "mapping", None, nullable=True,
              doc="ties, fixed values, bounds, 'doppler' (see widgetkit.lines.params)"),
        Param("weights", "numbers", None, nullable=True, max_items=100_000_000,
              doc="residual weights, 1/sigma per point"),
        Param("conf_interval", "strings", None, nullable=True, max_items=MAX_CONF_INTERVAL,
              doc="parameters given confidence intervals"),
        Param("max_passes", "integer", 4, minimum=1, maximum=50, doc="solver restarts"),
        Param("max_nfev", "integer", 1000, minimum=1, maximum=10_000_000,
              doc="most model evaluations of one solve"),
        Param("time_limit", ("number", "choice"), "auto", choices=("auto",), above=0,
              maximum=86_400.0, unit="s",
              doc="most seconds of wall time ('auto': 5 s + 0.01 s per line)"),
        Param("prune", "boolean", True,
              doc="remove the lines the data cannot support and fit again once"),
        Param("weighting", "choice", "none", choices=("none", "auto"),
              doc="'auto': weight for the noise of absorbance computed from transmittance "
                  "when the spectrum was converted (absent in a record: none)"),
        Param("add_missed", "boolean", False,
              doc="add the lines found in the residual and fit again (absent in a record: "
                  "off; Session.fit_lines turns it on)"),
        Param("strict", "boolean", False,
              doc="refuse a fit that has not converged instead of keeping it"),
    )
    argument_error = FitError

    def check_params(self, params):
        out = super().check_params(params)
        _check_constraints(out.get("constraints"))
        return out

    def apply(self, state: State, params: dict, ctx):
        return self._fit(state, params, None)

    def replay(self, state: State, params: dict, result: dict, ctx):
        """As :meth:`apply`; a fit recorded as stopped by its time limit stops at the
        recorded number of evaluations instead (module docstring)."""
        budget = result.get("budget") if isinstance(result, dict) else None
        budget = budget if isinstance(budget, dict) else {}
        counts = budget.get("nfev_by_solve") or [budget.get("nfev")]
        stops = budget.get("stopped_by_solve") or [budget.get("stopped")]
        cuts = list(budget.get("cut_by_solve") or []) + [False] * 4
        caps = [n if ((s == "time" or cut is True) and isinstance(n, int)
                      and not isinstance(n, bool) and n >= 0) else None
                for n, s, cut in zip(list(counts)[:4], list(stops)[:4], cuts)]
        # a list, even of None only: the fit knows it is a replay (the clock decides nothing)
        return self._fit(state, params, caps)

    def _fit(self, state: State, params: dict, replay_nfev: list | None):
        from .. import lines

        sp = state.require_spectrum()
        peaks = state.peaks
        opts = dict(params)
        region = opts.get("region")
        if region is not None:
            lo, hi = sorted(float(v) for v in region)
            peaks = peaks[(peaks["position"] >= lo) & (peaks["position"] <= hi)]
        if len(peaks) == 0:
            where = "" if region is None else f" inside the region {region}"
            raise SessionStateError(
                f"fit_lines: there are no peaks{where} to fit; run find_peaks() or add_peak() "
                f"first{_dense_band_hint(sp) if len(state.peaks) == 0 else ''}")
        _check_fit_size(peaks["fwhm"].to_numpy(dtype=float) if "fwhm" in peaks
                        else np.full(len(peaks), np.nan), sp, region, opts.get("window", 100.0))
        strict = bool(opts.pop("strict", False))
        if opts.pop("weighting", "none") == "auto" and state.from_transmittance \
                and opts.get("weights") is None:
            opts["weights"] = "from_transmittance"
        fit = lines.fit(sp.x, sp.y, peaks["position"].to_numpy(dtype=float),
                        line_ids=[int(i) for i in peaks["peak_id"]], progress=_PROGRESS.get(),
                        keep=_by_hand(peaks), replay_nfev=replay_nfev,
                        added_ids_from=int(state.next_peak_id),
                        added_min_snr=state.peak_min_snr, fringe=state.fringe, **opts)
        usable = np.all(np.isfinite(fit.table["position"])) and np.isfinite(fit.chisqr)
        if not fit.converged and (strict or not usable):
            why = "strict=True asks for a converged fit" if usable else "the result holds " \
                "values that are not finite"
            err = FitError(f"the line fit did not converge ({fit.message}) and {why}; the "
                           "previous lines are kept. Try fewer lines, a region, or different "
                           "starting peaks")
            err.fit = fit
            raise err
        result = {"lines": table_to_json(fit.table), "chisqr": float(fit.chisqr),
                  "redchi": float(fit.redchi), "converged": bool(fit.converged),
                  "record": _record(fit),
                  "budget": {"max_nfev": fit.spec.get("max_nfev"),
                             "time_limit": fit.spec.get("time_limit"), "nfev": int(fit.nfev),
                             "seconds": float(fit.seconds), "stopped": fit.stopped,
                             "nfev_by_solve": [int(n) for n in fit.solve_nfev],
                             "stopped_by_solve": list(fit.solve_stopped),
                             # recorded only when a solve's budget ran out and its point
                             # still counts as converged, so earlier records stay as they were
                             **({"cut_by_solve": [bool(c) for c in fit.solve_cut]}
                                if any(c and s != "time" for c, s in
                                       zip(fit.solve_cut, fit.solve_stopped)) else {})},
                  "removed": table_to_json(fit.removed[["line_id", "rule", "reason",
                                                        "merged_into"]])}
        cleared = {} if state.assignment is None else {"assignment": assigned_count(state.assignment)}
        if cleared:
            result["cleared"] = cleared
        shape = SHAPE_WORDS.get(opts.get("shape", "voigt"), opts.get("shape", "voigt"))
        summary = (f"fitted {plural(len(fit.table), shape + ' line')}, "
                   f"reduced chi-square {fit.redchi:.3g}")
        if len(fit.removed):
            summary += "; " + _removed_text(fit.removed)
        if len(fit.added):
            summary += (f"; added {plural(len(fit.added), 'line')} found in the residual at "
                        + ", ".join(f"{p:.6g}" for p in fit.added["position"]) + " cm-1")
        if not fit.converged:
            summary += f"; NOT converged ({_timeless(fit.message)})"
        summary += cleared_text(cleared)
        # ids of lines added from the residual are never given to a later peak
        next_id = max([int(state.next_peak_id)] + [int(i) + 1 for i in fit.added["line_id"]])
        return (state.evolve(line_fit=fit, assignment=None, next_peak_id=next_id), result,
                summary)

    #: diagnostics that legitimately differ between machines (the solver's last step size)
    volatile = ("record.fields.message", "record.fields.seconds", "budget.seconds")

    def restore(self, state, params, result, ctx):
        rec = result.get("record")
        if not isinstance(rec, dict) or rec.get("type") != "LineFit":
            raise RecordMismatch("the line fit was recorded without its record")
        fields = decode(rec.get("fields"), where="fit_lines result.record")
        table = table_from_json(result.get("lines", {}), where="fit_lines result.lines")
        spec = fields.get("spec")
        if not isinstance(spec, dict) or "line_id" not in table:
            raise RecordMismatch("the line fit record lacks its settings or line ids")
        _check_fit_record(state, table, spec, fields.get("added"))
        sp = state.require_spectrum()
        _check_fit_size(table["fwhm"].to_numpy(dtype=float), sp, spec.get("region"),
                        spec.get("window"))
        curves: dict = {}
        background = fields.pop("background", None)

        def curve(name):
            def compute():
                if not curves:
                    from ..lines.record import model_curves

                    bp = fields.get("baseline_params")
                    curves.update(model_curves(
                        sp.x, sp.y, table, shape=spec["shape"], baseline=spec["baseline"],
                        baseline_values=[] if bp is None else bp["value"].tolist(),
                        window=spec.get("window"), region=spec.get("region"),
                        background=background))
                return curves[name]
            return compute

        budget = result.get("budget") if isinstance(result.get("budget"), dict) else {}
        converged = bool(result.get("converged"))
        fields.update(table=table, chisqr=result.get("chisqr"), redchi=result.get("redchi"),
                      converged=converged, nfev=budget.get("nfev"), njev=None)
        fields.setdefault("stopped", "converged" if converged else "tolerance")
        fields.setdefault("removed", pd.DataFrame({c: [] for c in REMOVED_COLUMNS}))
        fields.setdefault("added", pd.DataFrame({c: [] for c in ADDED_COLUMNS}))
        fields.setdefault("seconds", budget.get("seconds"))
        lazy = {n: curve(n) for n in _CURVES}
        lazy["background"] = lambda: None if background is None else _background(
            background, curve("x")())
        restored = Restored("LineFit", fields, lazy=lazy,
                            real=lambda: self.replay(state, params, result, ctx)[0].line_fit)
        added = fields.get("added")
        next_id = max([int(state.next_peak_id)] + [int(i) + 1 for i in (
            [] if added is None or "line_id" not in added else added["line_id"])])
        return state.evolve(line_fit=restored, assignment=None, next_peak_id=next_id)


def _record(fit) -> dict:
    """The record of a LineFit: its fields but the curves, and the smooth background
    (``baseline="auto"``) as its spline."""
    rec = encode_fields(fit, skip=_LINEFIT_NOT_RECORDED)
    if fit.background is not None:
        rec["fields"]["background"] = encode(fit.background.to_json())
    return rec


def _background(d, x):
    from ..lines.background import Background

    return Background.from_json(d, x)


def _by_hand(peaks) -> list[int] | None:
    """Ids of the peaks added by hand (``add_peak``): a fit never removes them."""
    if "origin" not in peaks:
        return None
    ids = [int(i) for i in peaks.loc[peaks["origin"] == "manual", "peak_id"]]
    return ids or None


def _removed_text(removed) -> str:
    """``removed 2 lines the data cannot support: 7 (area ...), 9 (collapsed onto line 8)``."""
    parts = [f"{lid} ({reason})" for lid, reason in zip(removed["line_id"], removed["reason"])]
    n = len(parts)
    return (f"removed {n} line{'s' if n != 1 else ''} the data cannot support, fitted again: "
            + ", ".join(parts))


def _timeless(message: str) -> str:
    """A fit's message without its opening "not converged:" and the closing "(N evaluations,
    T s)": the summary is compared
    on replay, and seconds differ between runs."""
    text = re.sub(r"^not converged:\s*", "", str(message))
    return re.sub(r"\s*\(\d+ evaluations?, [0-9.]+ s\)$", "", text)


def _held_cells(fwhm, n: int, dx: float, window) -> int:
    """Model values a fit of lines of FWHM ``fwhm`` on ``n`` points holds: every line on
    every point up to :data:`DENSE_PAIRS` pairs, beyond that each line on its window
    (``window`` half widths each side; the components are then sparse)."""
    m = len(fwhm)
    if m * n <= DENSE_PAIRS or window is None:
        return m * n
    f = np.asarray(fwhm, dtype=float)
    fill = np.nanmedian(f) if np.any(np.isfinite(f)) else 20.0 * dx
    f = np.where(np.isfinite(f) & (f > 0), f, fill)
    return int(np.sum(np.minimum(n, np.ceil(float(window) * f / max(dx, 1e-300)) + 1)))


def _check_fit_size(fwhm, sp, region, window=100.0) -> None:
    keep = np.ones(sp.x.size, dtype=bool) if region is None else (
        (sp.x >= min(region)) & (sp.x <= max(region)))
    n = int(np.count_nonzero(keep))
    dx = float(np.median(np.diff(sp.x[keep]))) if n > 1 else 1.0
    held = _held_cells(fwhm, n, dx, window)
    if held > MAX_FIT_CELLS:
        raise FitError(f"fit_lines: {len(fwhm):,} lines on {n:,} points is more than one fit "
                       f"can hold (about {held:,} model values, at most {MAX_FIT_CELLS:,}); "
                       "fit a region at a time (region=(lo, hi)) or remove peaks")


def _check_fit_record(state: State, table, spec: dict, added=None) -> None:
    """The recorded fit must be of the peaks this state holds (ids and positions), plus
    the lines it added from its residual (``added``, a table with ``line_id``)."""
    peaks = state.peaks
    ids = [int(i) for i in spec.get("line_ids") or []]
    by_id = dict(zip(peaks["peak_id"].tolist(), peaks["position"].tolist()))
    positions = spec.get("positions") or []
    if len(ids) != len(positions) or any(by_id.get(i) != p for i, p in zip(ids, positions)):
        raise RecordMismatch("the recorded fit was made from peaks this state does not hold")
    extra = set() if added is None or "line_id" not in added else {
        int(i) for i in added["line_id"].tolist()}
    if not set(table["line_id"].tolist()) <= set(ids) | extra:
        raise RecordMismatch("the recorded lines are not among the fitted peaks")
    needed = ["area", "position", *SHAPE_WIDTHS.get(spec.get("shape"), ("?",))]
    if not set(needed + ["height", "fwhm"]) <= set(table.columns) or not np.all(
            np.isfinite(table[needed].to_numpy(dtype=float))):
        raise RecordMismatch("the recorded line table lacks finite values of its parameters")
