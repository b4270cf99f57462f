"""The budget of a line fit: evaluations and wall time, with progress.

Every evaluation of the model by either solver stage goes through
:meth:`Budget.spend`, which refuses the evaluation (raises :class:`BudgetSpent`)
when the fit has used ``max_nfev`` evaluations or ``time_limit`` seconds. Both
limits are checked at the same place, before an evaluation, so a fit that ran out
of time after N evaluations is reproduced exactly by a fit capped at N evaluations:
that is how a recorded fit is replayed (``replay_nfev``: stop before evaluation
N + 1 and call it the time limit, whatever the clock says).

The budget also remembers the best point evaluated since the last
:meth:`Budget.mark` (lowest sum of squared residuals): both solver stages only
accept points that lower it, so it is where the stage stood when it was stopped.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..errors import FitError

__all__ = ["Budget", "BudgetSpent", "DEFAULT_MAX_NFEV", "DEFAULT_TIME_LIMIT", "STOP_REASONS",
           "auto_time_limit"]

#: default cap on model evaluations of one solve, over both solver stages (a converged
#: 12-line fit takes about 15; a fit stuck on a band it cannot describe was measured at
#: 10 ms an evaluation on 15 lines and 300 points: some 10 s for this many)
DEFAULT_MAX_NFEV = 1000
#: default wall-time limit: ``"auto"``, :data:`AUTO_SECONDS` plus :data:`AUTO_PER_LINE`
#: per line (5.2 s for 24 lines, 55 s for 5,000), for the whole fit
DEFAULT_TIME_LIMIT = "auto"
AUTO_SECONDS = 5.0
AUTO_PER_LINE = 0.01
#: a repeated fit (after pruning) gets at least this share of the limit
REFIT_SHARE = 0.25
#: a later stage (lines from the residual, the weighted solve) gets what is left of
#: (1 + REFIT_SHARE) times the limit, and at least this share of it
LATE_SHARE = 0.1
#: ... but no solve after the first runs past this many times the limit since the fit
#: began (two later stages at their least share took fits of 200 lines past 10 s)
TOTAL_SHARE = 1.3


def stage_seconds(time_limit: float | None, used: float, late: bool) -> float | None:
    """Seconds a solve after the first may use (None: no limit): the repeat after pruning
    what the limit left, at least :data:`REFIT_SHARE` of it; a later stage what
    ``(1 + REFIT_SHARE)`` times the limit left, at least :data:`LATE_SHARE` of it; neither
    past :data:`TOTAL_SHARE` times the limit (a solve with nothing left stops at once and
    the fit before it is kept: measured, a refit after a first solve that used its whole
    limit ran to 1.5 times it). ``used``: seconds since the fit began."""
    if time_limit is None:
        return None
    if late:
        share = max((1.0 + REFIT_SHARE) * time_limit - used, LATE_SHARE * time_limit)
    else:
        share = max(time_limit - used, REFIT_SHARE * time_limit)
    return max(min(share, TOTAL_SHARE * time_limit - used), 0.0)


def auto_time_limit(n_lines: int) -> float:
    """The ``"auto"`` time limit of a fit of ``n_lines`` lines, seconds."""
    return AUTO_SECONDS + AUTO_PER_LINE * int(n_lines)
#: how a fit ended: at the minimum, stopped by a solver's own tolerance before it, by the
#: evaluation cap, by the time limit, or by a solver failure
STOP_REASONS = ("converged", "tolerance", "evaluations", "time", "failed")
#: least time between two progress reports, seconds
PROGRESS_EVERY = 0.25


class BudgetSpent(Exception):
    """Raised by :meth:`Budget.spend` (internal: the fit catches it and keeps its best)."""


@dataclass
class _Best:
    chi: float = np.inf
    v: np.ndarray | None = None


class Budget:
    """Counts evaluations and time; refuses an evaluation past either limit.

    Parameters
    ----------
    max_nfev : int or None
        Most model evaluations (None: no cap).
    time_limit : float or None
        Most seconds of wall time from the creation of the budget (None: no limit).
    progress : callable or None
        ``progress(fraction, text)``, at most every :data:`PROGRESS_EVERY` seconds;
        ``fraction`` in [0, 1] is the larger share of either limit used.
    replay_nfev : int or None
        Replay of a fit that ran out of time: the time limit is reached before
        evaluation ``replay_nfev + 1`` instead of by the clock.
    """

    def __init__(self, max_nfev: int | None = DEFAULT_MAX_NFEV,
                 time_limit: float | None = DEFAULT_TIME_LIMIT,
                 progress: Callable[[float, str], object] | None = None,
                 replay_nfev: int | None = None, replaying: bool = False):
        self.max_nfev = None if max_nfev is None else int(max_nfev)
        #: a replay of a recorded fit: the clock decides nothing (:meth:`short_of`)
        self.replaying = bool(replaying) or replay_nfev is not None
        self.time_limit = None if time_limit is None else float(time_limit)
        self.progress = progress
        self.replay_nfev = None if replay_nfev is None else int(replay_nfev)
        self.t0 = time.perf_counter()
        self.nfev = 0
        self.stopped: str | None = None
        self.stage = "fitting"
        self.stage_cap: int | None = None
        self._best = _Best()
        self._last_report = -np.inf

    @property
    def seconds(self) -> float:
        """Wall time since the budget was created."""
        return time.perf_counter() - self.t0

    def _out_of_time(self) -> bool:
        if self.replay_nfev is not None:
            return self.nfev >= self.replay_nfev
        return self.time_limit is not None and self.seconds >= self.time_limit

    def spend(self) -> None:
        """Account for one evaluation about to be made, or raise :class:`BudgetSpent`."""
        if self.stopped is not None:
            raise BudgetSpent(self.stopped)
        if self.stage_cap is not None and self.nfev >= self.stage_cap:
            raise BudgetSpent("stage")  # the stage's share is spent, the fit's is not
        if self.max_nfev is not None and self.nfev >= self.max_nfev:
            self.stopped = "evaluations"
        elif self._out_of_time():
            self.stopped = "time"
        if self.stopped is not None:
            raise BudgetSpent(self.stopped)
        self.nfev += 1

    def short_of(self, share: float) -> bool:
        """Whether less than ``share`` of the time limit is left (never in a replay, where
        the recorded counts stop the fit where it stopped)."""
        return (not self.replaying and self.time_limit is not None
                and self.time_limit - self.seconds < share * self.time_limit)

    def run_out(self) -> None:
        """Count the time as spent now: the next evaluation raises :class:`BudgetSpent`."""
        self.stopped = "time"

    def disarm(self) -> str | None:
        """End the fit's accounting: returns how it stopped (None: not by the budget) and
        lifts both limits (later evaluations, such as confidence-interval refits, are
        not part of the fit)."""
        stopped, self.stopped = self.stopped, None
        self.max_nfev = self.time_limit = self.replay_nfev = self.stage_cap = None
        self.progress = None
        return stopped

    def fraction(self) -> float:
        """Share of the budget used: the larger of the evaluation and the time share."""
        parts = [0.0]
        if self.max_nfev:
            parts.append(self.nfev / self.max_nfev)
        if self.time_limit:
            parts.append(self.seconds / self.time_limit)
        return float(min(max(parts), 1.0))

    def report(self, text: str | None = None, *, force: bool = False) -> None:
        """Send progress (throttled unless ``force``)."""
        if self.progress is None:
            return
        now = time.perf_counter()
        if not force and now - self._last_report < PROGRESS_EVERY:
            return
        self._last_report = now
        if text is None:
            text = (f"{self.stage}: {self.nfev} evaluations, {self.seconds:.1f} s"
                    + ("" if not np.isfinite(self._best.chi)
                       else f", chi-square {self._best.chi:.4g}"))
        self.progress(self.fraction(), text)

    # ------------------------------------------------------------- best point
    def mark(self, stage: str | None = None, share: int | None = None) -> None:
        """Start a new stage: forget the best point (the objective may have changed);
        ``share`` caps the evaluations of this stage (None: the fit's budget only)."""
        self._best = _Best()
        if stage is not None:
            self.stage = stage
        self.stage_cap = None if share is None else self.nfev + int(share)

    def seen(self, v: np.ndarray, r: np.ndarray) -> None:
        """Remember ``v`` if its residual ``r`` is the best since :meth:`mark`."""
        chi = float(r @ r)
        if np.isfinite(chi) and chi < self._best.chi:
            self._best = _Best(chi, np.array(v, dtype=float, copy=True))
        self.report()

    @property
    def best(self) -> np.ndarray | None:
        """Variables of the best point since :meth:`mark` (None before any)."""
        return self._best.v


class Counted:
    """A :class:`~.model.WindowedModel` whose residual evaluations are paid from a
    :class:`Budget` (every other attribute is the model's own)."""

    def __init__(self, model, budget: Budget):
        self._model, self._budget = model, budget

    def __getattr__(self, name):
        if name.startswith("__") or name in ("_model", "_budget"):
            raise AttributeError(name)  # copy and pickle look these up before __init__
        return getattr(self._model, name)

    def __setattr__(self, name, value):
        if name in ("_model", "_budget"):
            object.__setattr__(self, name, value)
        else:
            setattr(self._model, name, value)  # the model's state is the model's

    def residual_vec(self, v: np.ndarray) -> np.ndarray:
        self._budget.spend()
        r = self._model.residual_vec(v)
        self._budget.seen(v, r)
        return r

    def residual(self, params) -> np.ndarray:
        return self.residual_vec(self._model.variables(params))


def budget_number(value, name: str, *, integer: bool):
    if value is None:
        return None
    ok = (not isinstance(value, bool) and isinstance(value, (int, float, np.number))
          and value > 0 and (not integer or float(value).is_integer()))
    if not ok:
        kind = "a whole number" if integer else "a number of seconds"
        raise FitError(f"{name} must be {kind} above 0 or None, got {value!r}")
    return int(value) if integer else float(value)


def replay_counts(replay_nfev) -> list:
    """``replay_nfev`` for each of the (at most four) solves."""
    if replay_nfev is None:
        return [None] * 4
    if isinstance(replay_nfev, (int, np.integer)):
        return [int(replay_nfev), None, None, None]
    out = [None if n is None else int(n) for n in list(replay_nfev)[:4]]
    return out + [None] * (4 - len(out))
