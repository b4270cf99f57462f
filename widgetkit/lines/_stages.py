"""The stages of a line fit after its first solve (:func:`~.fitting.fit`): pruning the lines
the data cannot support (:mod:`.prune`), adding the lines found in the residual
(:mod:`.missed`) and the last solve weighted for absorbance from transmittance
(:mod:`.reweight`). Each stage that fits again gets its share of the time limit
(:func:`.budget.stage_seconds`) and its own replay count."""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np

from ._assemble import assemble
from ._setup import Problem, set_up
from ._solve import solve
from .budget import Budget, stage_seconds
from .missed import refit_with_missed
from .prune import (
    MAX_PRUNED,
    find_unsupported,
    noise_scale,
    protected_by_constraints,
    subset_args,
    worse_without,
)
from .reweight import refit_weighted

__all__ = ["Run", "prune_stage", "missed_stage", "weighted_stage"]


@dataclass
class Run:
    """One fit through its stages: the problem, fields and solution kept so far, every solve
    run, the widths sharing and holds of the kept problem, and the budget settings."""

    prob: Problem
    fields: dict
    solves: list
    shared: object
    args: dict
    max_nfev: int | None
    time_limit: float | None
    progress: object
    replays: list
    max_passes: int
    held: dict = field(default_factory=dict)
    said: dict = field(default_factory=dict)  # line id -> texts the stages flagged
    started: float | None = None  # time.perf_counter() when the fit began
    replaying: bool = False  # a replay of a recorded fit (the clock decides nothing)

    @property
    def sol(self):
        return self.solves[self.kept]

    kept: int = 0

    def used(self) -> float:
        """Seconds used: the solves', or the wall time since the fit began when that is
        known (it also counts the set-up and the results between solves)."""
        solves = float(sum(s.seconds for s in self.solves))
        return solves if self.started is None else max(solves, time.perf_counter() - self.started)

    def budget(self, text: str, late: bool = False) -> Budget:
        """The budget of the next solve (:func:`.budget.stage_seconds`), with its progress
        line."""
        left = stage_seconds(self.time_limit, self.used(), late)
        b = Budget(self.max_nfev, left, self.progress, self.replays[len(self.solves)],
                   replaying=self.replaying)
        b.report(text, force=True)
        return b

    def keep(self, prob, fields) -> None:
        """The last solve is the one kept, with its problem and fields; what the stages
        said so far (:meth:`flag`) stays with the lines still there and the fit."""
        self.prob, self.fields, self.kept = prob, fields, len(self.solves) - 1
        ids = set(fields["table"]["line_id"]) | {"fit"}
        for lid, texts in self.said.items():
            if lid in ids:
                self._add(lid, texts)

    def flag(self, lid, *texts) -> None:
        """Add ``texts`` to the flags of line ``lid`` (or ``"fit"``), for good."""
        self.said.setdefault(lid, []).extend(texts)
        self._add(lid, texts)

    def _add(self, lid, texts) -> None:
        flags = {k: list(v) for k, v in self.fields["flags"].items()}
        flags.setdefault(lid, []).extend(t for t in texts if t not in flags.get(lid, ()))
        self.fields["flags"] = {k: tuple(v) for k, v in flags.items()}


def prune_stage(run: Run, *, heights, widths, keep, constraints, conf_interval) -> list:
    """Remove (and hold) what the data cannot support and fit again once; the first fit
    stays when the data needed what was removed, or when it converged and the repeat
    stopped short. Returns the removals kept."""
    prob, first_sol = run.prob, run.sol
    named = {"ci": [conf_interval] if isinstance(conf_interval, str)
             else list(conf_interval or [])}
    protected = (set(keep or ()) | protected_by_constraints(prob.ids, constraints)
                 | protected_by_constraints(prob.ids, named))
    removals, kept_flags, restarts = find_unsupported(
        run.fields["table"], first_sol.result.params, prob.shape.widths, prob.positions,
        prob.starts.fwhm, protected, noise_scale(prob, first_sol))
    if len(removals) > max(2, MAX_PRUNED * len(prob.ids)):
        kept_flags = {"fit": [
            f"not pruned: {len(removals)} of {len(prob.ids)} lines failed a test of what "
            f"the data can support (more than {MAX_PRUNED:.0%}): the line shape, the "
            "baseline or the peaks do not suit this spectrum; every line is kept"]}
        removals, restarts = [], {}
    if removals or restarts:
        gone = {r.line_id for r in removals}
        kept = [i for i in prob.ids if i not in gone]
        mask, sub, shared = subset_args(kept, prob.ids, {"heights": heights, "widths": widths},
                                        run.shared)
        starts = np.array([restarts.get(i, {}).get("start", p)
                           for i, p in zip(prob.ids, prob.positions)])
        held = {i: h for i, h in restarts.items() if len(h) > 1}
        again = set_up(prob.xs, prob.ys, starts[mask], shared_width=shared, line_ids=kept,
                       noise=prob.noise, **sub, holds=held, background=prob.background,
                       **{**run.args, "region": None, "weights": prob.ws}, extra_spec={})
        budget = run.budget(f"fitting again without {len(removals)} unsupported lines"
                            + (f", {len(held)} held" if held else ""))
        run.solves.append(solve(again, budget, run.max_passes))
        # a hold may raise chi-square on purpose (a line kept from swallowing a fringe)
        worse = None if held else worse_without(first_sol, run.solves[-1], prob, again)
        unkept = {}
        if worse is None and first_sol.converged and not run.solves[-1].converged:
            # a converged fit is never traded for one that stopped short
            worse = (f"pruning undone: the fit without {len(removals)} lines"
                     + (f" and with {len(held)} held" if held else "")
                     + f" stopped before converging ({run.solves[-1].stopped}); the first "
                     "fit, which converged, is kept with every line")
            unkept = {r.line_id: [f"not removed although {r.reason}"] for r in removals}
        if worse is not None:  # the data supports what was removed: keep the first fit
            removals, kept_flags = [], {**unkept, "fit": [worse]}
        else:
            run.keep(again, assemble(again, run.solves[-1]))
            run.shared, run.held = shared, held
    for lid, texts in kept_flags.items():
        run.flag(lid, *texts)
    return removals


def missed_stage(run: Run, first_id, min_snr=None) -> list:
    """Add the lines found in the residual when the data asks for them; returns the added
    (id, Missed) pairs."""
    stage = refit_with_missed(
        run.prob, run.fields, run.sol, shared_width=run.shared, holds=run.held, args=run.args,
        budget=lambda text: run.budget(text, late=True), max_passes=run.max_passes,
        first_id=first_id, min_snr=min_snr)
    if stage.solution is not None:
        run.solves.append(stage.solution)
    if stage.added:
        run.keep(stage.prob, stage.fields)
        return stage.added
    if stage.flag:
        run.flag("fit", stage.flag)
    return []


def weighted_stage(run: Run) -> None:
    """The last solve, weighted for absorbance computed from transmittance."""
    last = refit_weighted(
        run.prob, run.fields, shared_width=run.shared, holds=run.held, args=run.args,
        budget=run.budget("fitting again with the noise of absorbance from transmittance",
                          late=True), max_passes=run.max_passes,
        previous_converged=run.sol.converged)
    run.solves.append(last.solution)
    if last.prob is not None:
        run.keep(last.prob, last.fields)
    elif last.flag:
        run.flag("fit", last.flag)
