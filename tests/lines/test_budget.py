"""A line fit always ends: the evaluation cap, the time limit, progress, and a fit stopped
by either is kept with its uncertainties (self-consistency checks on the invented band of
conftest.py; no outside reference values)."""

from __future__ import annotations

import numpy as np
import pytest

import widgetkit as wk
import widgetkit.lines as wl
from widgetkit.lines import budget as budget_module


class FakeClock:
    """perf_counter that moves one second per reading (a time limit reached after a
    known amount of work, independent of the machine)."""

    def __init__(self):
        self.now = 0.0

    def __call__(self):
        self.now += 1.0
        return self.now


def test_an_evaluation_cap_stops_the_fit_and_keeps_it_with_uncertainties(band, starts):
    res = wl.fit(band.x, band.y, starts, max_nfev=5)
    assert not res.converged and res.stopped == "evaluations"
    assert res.nfev == 5
    assert "budget of 5 evaluations was spent" in res.message
    assert "lmfit" not in res.message and "ftol" not in res.message
    assert np.all(np.isfinite(res.table["position"]))
    assert np.all(np.isfinite(res.table["position_err"]))   # covariance at the stopping point
    assert res.spec["max_nfev"] == 5 and res.spec["time_limit"] == wl.DEFAULT_TIME_LIMIT


def test_the_same_fit_unbudgeted_converges_in_more_evaluations(band, starts):
    res = wl.fit(band.x, band.y, starts)
    assert res.converged and res.stopped == "converged"
    assert res.nfev > 5 and res.message.startswith("converged")
    assert "evaluations" in res.message and "lmfit" not in res.message


def test_a_cap_inside_the_trust_region_stage_keeps_that_stage_best(band, starts):
    full = wl.fit(band.x, band.y, starts, max_passes=1, time_limit=None)
    stage_one = wl.fit(band.x, band.y, starts, max_passes=1, max_nfev=full.nfev - 1,
                       time_limit=None)
    assert stage_one.nfev == full.nfev - 1
    # it stopped in the refinement, whose start is the converged stage-one point: kept
    # there, and our certificate still calls it converged
    assert stage_one.chisqr == pytest.approx(full.chisqr, rel=1e-6)
    assert stage_one.converged and stage_one.stopped == "converged"


def test_a_time_limit_stops_the_fit_and_says_so(band, starts, monkeypatch):
    monkeypatch.setattr(budget_module.time, "perf_counter", FakeClock())
    res = wl.fit(band.x, band.y, starts, time_limit=6.0)
    assert res.stopped == "time" and not res.converged
    assert 0 < res.nfev < 15
    assert "time limit of 6 s was reached" in res.message
    assert np.isfinite(res.chisqr)


def test_a_time_limited_fit_is_replayed_exactly_to_its_evaluation_count(band, starts,
                                                                        monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(budget_module.time, "perf_counter", FakeClock())
        first = wl.fit(band.x, band.y, starts, time_limit=6.0)
    again = wl.fit(band.x, band.y, starts, time_limit=6.0, replay_nfev=first.nfev)
    assert again.stopped == "time" and again.nfev == first.nfev
    assert again.chisqr == first.chisqr
    np.testing.assert_array_equal(again.table["position"], first.table["position"])


def test_progress_reports_the_share_of_the_budget_and_what_happens(band, starts):
    calls = []
    wl.fit(band.x, band.y, starts, progress=lambda f, t: calls.append((f, t)))
    assert calls and calls[0][1] == "fitting 12 lines"
    assert all(0.0 <= f <= 1.0 and isinstance(t, str) for f, t in calls)


def test_a_fit_stuck_on_noise_lines_ends_within_its_evaluation_cap(band):
    # forty starting positions where there is only noise, one shared width: a fit with
    # no good minimum, the kind that ran for minutes without a cap
    rng = np.random.default_rng(5)
    noise_lines = rng.uniform(band.x[0] + 1, band.x[-1] - 1, 40)
    # time_limit=None: the evaluation cap alone decides, whatever the machine's load
    res = wl.fit(band.x, band.y, np.r_[band.positions, noise_lines], shared_width=True,
                 max_nfev=80, time_limit=None, prune=False)
    assert res.nfev <= 80 and res.stopped == "evaluations"
    assert len(res.table) == 52 and np.isfinite(res.chisqr)
    pruned = wl.fit(band.x, band.y, np.r_[band.positions, noise_lines], shared_width=True,
                    max_nfev=80, time_limit=None)
    assert all(n <= 80 for n in pruned.solve_nfev) and pruned.nfev == sum(pruned.solve_nfev)
    # stopped far from its minimum: its lines are not judged, and it says so
    assert len(pruned.solve_nfev) == 1 and pruned.removed.empty
    assert any(f.startswith("not pruned") for f in pruned.flags["fit"])


@pytest.mark.parametrize("kw", [{"max_nfev": 0}, {"max_nfev": 2.5}, {"max_nfev": True},
                                {"time_limit": -1.0}, {"time_limit": "soon"}])
def test_a_bad_budget_is_refused_before_fitting(band, starts, kw):
    with pytest.raises(wk.FitError, match=next(iter(kw))):
        wl.fit(band.x, band.y, starts, **kw)


def test_a_budget_of_none_means_no_cap(band, starts):
    res = wl.fit(band.x, band.y, starts, max_nfev=None, time_limit=None)
    assert res.converged and res.spec["max_nfev"] is None and res.spec["time_limit"] is None


def test_the_stages_after_the_first_solve_share_what_the_limit_left():
    from widgetkit.lines.budget import LATE_SHARE, REFIT_SHARE, stage_seconds

    # the repeat after pruning: what is left of the limit, at least a quarter of it
    assert stage_seconds(8.0, 2.0, late=False) == 6.0
    assert stage_seconds(8.0, 8.0, late=False) == REFIT_SHARE * 8.0
    # later stages: what is left of 1.25 times the limit, at least a tenth of it, ...
    assert stage_seconds(8.0, 8.0, late=True) == 2.0
    assert stage_seconds(8.0, 9.5, late=True) == LATE_SHARE * 8.0
    # ... but never past 1.3 times the limit since the fit began (first solve + repeat +
    # two later stages at their least share would reach 1.45 times it)
    assert stage_seconds(8.0, 10.0, late=True) == pytest.approx(0.4)
    assert stage_seconds(8.0, 10.5, late=True) == 0.0
    assert stage_seconds(None, 3.0, late=True) is None
    # the repeat after pruning keeps to it too (a first solve that used 1.2 times the
    # limit left the repeat its quarter, which took it to 1.5 times)
    assert stage_seconds(8.0, 9.6, late=False) == pytest.approx(0.8)
    assert stage_seconds(8.0, 11.0, late=False) == 0.0


def test_a_refinement_that_wanders_from_a_converged_point_is_not_kept(band, starts,
                                                                      monkeypatch):
    # the trust-region refinement after a converged first stage was seen (real spectra,
    # many widths on their bounds) to wander for hundreds of evaluations and end where
    # our certificate no longer calls the fit converged: the first stage's point is kept
    from widgetkit.lines import _lmfit_sparse

    good = wl.fit(band.x, band.y, starts, prune=False, time_limit=None)
    real = _lmfit_sparse.SparseMinimizer.least_squares

    def wander(self, params=None, **kws):  # leaves the point and stops early on tolerances
        name = next(n for n in params if n.endswith("_position"))
        params[name].value += 0.05
        return real(self, params=params, ftol=0.5, xtol=0.5, gtol=0.5)

    monkeypatch.setattr(_lmfit_sparse.SparseMinimizer, "least_squares", wander)
    res = wl.fit(band.x, band.y, starts, prune=False, time_limit=None)
    assert res.converged and res.stopped == "converged"
    assert np.allclose(res.table["position"], good.table["position"], rtol=0, atol=1e-6)
    assert res.chisqr == pytest.approx(good.chisqr, rel=1e-6)


def test_a_pass_that_used_its_iterations_while_improving_is_followed_by_another(
        band, starts, monkeypatch):
    """Stage one runs another Levenberg-Marquardt pass after one that ran out of iterations
    without converging (it was still on its way), up to ``max_passes``; with three
    iterations a pass, this band needs more than one pass (self-consistency)."""
    from widgetkit.lines import solver

    calls = []
    real = solver.levenberg_marquardt

    def counting(*args, **kwargs):
        out = real(*args, **kwargs)
        calls.append(out[1])  # the certificate each pass ended with
        return out

    monkeypatch.setattr(solver, "LM_MAX_ITER", 3, raising=False)
    monkeypatch.setattr(solver, "levenberg_marquardt",
                        lambda *a, **k: counting(*a, **{"max_iter": 3, **k}))
    res = wl.fit(band.x, band.y, starts + 0.05, prune=False, add_missed=False)
    assert len(calls) > 1 and calls[0] >= solver.CONVERGENCE_TOL  # the first stopped short
    assert len(calls) <= 4  # max_passes
    assert res.converged
