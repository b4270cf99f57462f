"""The runner of the stress corpus (:mod:`corpus`): the default analysis of each spectrum in a
child process with a wall-time budget, the outcome, and a summary.

Use from a script or a test with this folder on ``sys.path``::

    from corpus import corpus
    from corpus_run import run_corpus, summary
    results = run_corpus(corpus(20, seed=7, max_points=6000), budget=30)
    print(summary(results))
"""

from __future__ import annotations

import math
import multiprocessing as mp
import time
import traceback
from dataclasses import dataclass

import numpy as np
from corpus import BUDGET, MATCH_SIGMAS, SUCCESS_FRACTION, Case, Rendered, render


@dataclass
class CaseResult:
    """What happened to one case."""

    index: int
    label: str
    outcome: str                 # "success", "refusal" or "failure"
    reason: str = ""             # failure: "wrong", "hang", "exception"; refusal: error class
    detail: str = ""
    n_points: int = 0
    n_counted: int = 0
    n_matched: int = 0           # within MATCH_SIGMAS position standard errors
    n_near: int = 0              # within half a FWHM, whatever the standard error
    n_peaks: int = 0
    n_lines: int = 0
    n_extra: int = 0             # fitted lines near no simulated line or impurity
    converged: bool | None = None
    conversion: str = ""
    t_peaks: float = math.nan
    t_fit: float = math.nan
    t_total: float = math.nan
    cpu_total: float = math.nan  # processor time of the analysis (all threads): fair under load


def analyse(spectrum) -> dict:
    """The default analysis: a session, transmittance to absorbance (the dips as they are
    when that is refused), ``find_peaks()``, ``fit_lines()``. Returns plain values."""
    import widgetkit as wk
    from widgetkit.errors import SpectrumFormatError

    t0, c0 = time.perf_counter(), time.process_time()
    s = wk.Session(spectrum)
    conversion = ""
    if spectrum.y_kind == "transmittance":
        try:
            s.to_absorbance()
            conversion = "absorbance"
        except SpectrumFormatError:
            conversion = "refused (T <= 0): dips analysed in transmittance"
    t1 = time.perf_counter()
    peaks = s.find_peaks()
    t2 = time.perf_counter()
    out = {"conversion": conversion, "n_peaks": len(peaks), "t_peaks": t2 - t1}
    lines = s.fit_lines()
    t3 = time.perf_counter()
    fit = s.line_fit
    out.update(n_lines=len(lines), t_fit=t3 - t2, t_total=t3 - t0,
               cpu_total=time.process_time() - c0,
               positions=lines["position"].to_numpy(dtype=float).tolist(),
               errors=lines["position_err"].to_numpy(dtype=float).tolist(),
               converged=bool(getattr(fit, "converged", True)),
               message=str(getattr(fit, "message", "")))
    return out


def _child(conn, spectrum, target) -> None:
    try:
        conn.send(("ok", target(spectrum)))
    except BaseException as exc:  # noqa: BLE001 - everything is reported to the parent
        from widgetkit.errors import WidgetkitError

        conn.send(("error", type(exc).__name__, isinstance(exc, WidgetkitError), str(exc)[:600],
                   traceback.format_exc()[-3000:]))
    finally:
        conn.close()


def run_budgeted(spectrum, budget: float, target=analyse):
    """``target(spectrum)`` (default :func:`analyse`) in a forked child: ``("ok", value)``,
    ``("error", class name, documented, message, traceback)``, or None when it ran over
    ``budget`` seconds (the child is then killed)."""
    ctx = mp.get_context("fork")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_child, args=(child, spectrum, target), daemon=True)
    proc.start()
    child.close()
    try:
        if not parent.poll(budget):
            return None
        return parent.recv()
    except EOFError:
        return ("error", "ChildDied", False, f"the analysis process ended with code "
                f"{proc.exitcode} without an answer", "")
    finally:
        if proc.is_alive():
            proc.kill()
        proc.join(5)
        parent.close()


def classify(case: Case, rendered: Rendered, answer) -> CaseResult:
    """The outcome of ``answer`` (from the child) against the truth (module :mod:`corpus`)."""
    res = CaseResult(index=case.index, label=case.label(), outcome="failure",
                     n_points=int(rendered.spectrum.x.size),
                     n_counted=int(rendered.counted.sum()))
    if answer is None:
        res.reason, res.detail = "hang", "over the time budget"
        return res
    if answer[0] == "error":
        _, name, documented, message, tb = answer
        if documented:
            res.outcome, res.reason, res.detail = "refusal", name, message
        else:
            res.reason, res.detail = "exception", f"{name}: {message}\n{tb}"
        return res
    a = answer[1]
    for k in ("n_peaks", "n_lines", "converged", "conversion", "t_peaks", "t_fit", "t_total",
              "cpu_total"):
        setattr(res, k, a[k])
    pos, err = np.asarray(a["positions"]), np.asarray(a["errors"])
    true = rendered.positions[rendered.counted]
    fv = rendered.fwhm[rendered.counted]
    if pos.size and true.size:
        d = np.abs(pos[None, :] - true[:, None])
        j = np.argmin(d, axis=1)
        dist = d[np.arange(true.size), j]
        e = err[j]
        res.n_matched = int(np.sum(np.isfinite(e) & (e > 0) & (dist <= MATCH_SIGMAS * e)))
        res.n_near = int(np.sum(dist <= 0.5 * fv))
    everything = np.concatenate([rendered.positions, rendered.impurity_positions])
    if pos.size and everything.size:
        widest = float(np.max(rendered.fwhm, initial=case.step))
        res.n_extra = int(np.sum(np.min(np.abs(pos[:, None] - everything[None, :]), axis=1)
                                 > max(widest, 2 * case.step)))
    if res.n_counted == 0:
        res.outcome, res.detail = "success", "no line of the band can be counted (all blended)"
    elif res.n_matched >= SUCCESS_FRACTION * res.n_counted:
        res.outcome = "success"
    else:
        res.reason = "wrong"
        res.detail = (f"{res.n_matched} of {res.n_counted} counted lines within "
                      f"{MATCH_SIGMAS:g} standard errors ({res.n_near} within half a FWHM); "
                      f"{res.n_peaks} peaks, {res.n_lines} lines, converged {res.converged}; "
                      f"{a['message'][:200]}")
    return res


def run_case(case: Case, budget: float = BUDGET) -> CaseResult:
    """Render ``case`` and run the default analysis on it within ``budget`` seconds."""
    rendered = render(case)
    return classify(case, rendered, run_budgeted(rendered.spectrum, budget))


def warm_up() -> None:
    """Import what the analysis needs once in the parent, so that no child's time counts
    the imports (the children are forked from the parent)."""
    import lmfit  # noqa: F401

    import widgetkit.lines.fitting  # noqa: F401
    import widgetkit.processing.peaks  # noqa: F401
    import widgetkit.session  # noqa: F401


def run_corpus(cases, budget: float = BUDGET, progress=None) -> list[CaseResult]:
    """:func:`run_case` over ``cases``; ``progress(i, n, result)`` after each."""
    warm_up()
    out = []
    for i, case in enumerate(cases):
        out.append(run_case(case, budget))
        if progress is not None:
            progress(i + 1, len(cases), out[-1])
    return out


def reproduction(case: Case, max_points: int) -> str:
    """A few lines of Python that rerun ``case`` (for a findings file)."""
    return (f"import sys; sys.path.insert(0, 'benchmarks')\n"
            f"from corpus import make_case, render; from corpus_run import analyse\n"
            f"r = render(make_case({case.index}, seed={case.seed}, max_points={max_points}))\n"
            f"print(analyse(r.spectrum))")


def summary(results: list[CaseResult]) -> dict:
    """Counts by outcome and the distribution of the analysis time (finished cases)."""
    n = len(results)
    by = {k: sum(r.outcome == k for r in results) for k in ("success", "refusal", "failure")}
    reasons: dict[str, int] = {}
    for r in results:
        if r.outcome != "success":
            reasons[f"{r.outcome}: {r.reason}"] = reasons.get(f"{r.outcome}: {r.reason}", 0) + 1
    unchecked = sum(r.outcome == "success" and r.n_counted == 0 for r in results)
    times = {}
    for key in ("t_total", "cpu_total"):
        t = np.array([getattr(r, key) for r in results if math.isfinite(getattr(r, key))])
        if t.size:
            times[key] = {"median": float(np.median(t)), "p95": float(np.quantile(t, 0.95)),
                          "max": float(t.max()), "over_10s": int(np.sum(t > 10.0))}
    return {"cases": n, **by, "success_rate": by["success"] / n if n else math.nan,
            "unchecked": unchecked, "reasons": reasons, "time": times.get("t_total", {}),
            "cpu": times.get("cpu_total", {})}
