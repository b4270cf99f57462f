"""The line-fit step under a budget: recorded, kept, refused only with strict=True, and
replayed exactly by verify also when the time limit stopped it (self-consistency checks on
the invented three-line band of conftest.py)."""

from __future__ import annotations

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.lines import budget as budget_module


class FakeClock:
    """perf_counter that moves one second per reading."""

    def __init__(self):
        self.now = 0.0

    def __call__(self):
        self.now += 1.0
        return self.now


@pytest.fixture
def peaked(session):
    session.find_peaks(min_snr=10)
    return session


def test_a_fit_stopped_by_its_evaluation_cap_is_kept_recorded_and_verified(peaked):
    peaked.fit_lines(shape="gaussian", max_nfev=2)
    fit = peaked.line_fit
    assert not fit.converged and fit.stopped == "evaluations" and len(peaked.lines) == 3
    rec = peaked._steps[-1]
    assert rec.params["max_nfev"] == 2
    assert rec.result["budget"]["nfev"] == 2 and rec.result["budget"]["stopped"] == "evaluations"
    assert rec.result["budget"]["time_limit"] == "auto"
    assert "NOT converged (the budget of 2 evaluations was spent" in rec.summary
    assert " s)" not in rec.summary   # no seconds in what verify compares
    assert peaked.verify().ok


def test_a_fit_stopped_by_its_time_limit_replays_to_the_recorded_evaluations(peaked,
                                                                          monkeypatch):
    with monkeypatch.context() as m:
        m.setattr(budget_module.time, "perf_counter", FakeClock())
        peaked.fit_lines(shape="gaussian", time_limit=2.5)
    rec = peaked._steps[-1]
    assert rec.result["budget"]["stopped"] == "time" and peaked.line_fit.stopped == "time"
    used = rec.result["budget"]["nfev"]
    assert 0 < used < 10
    # with the real clock the same fit converges: only the recorded count makes replay exact
    assert peaked.verify().ok


def test_without_the_replay_count_a_time_limited_fit_would_not_verify(peaked, monkeypatch):
    from widgetkit.session.kinds_lines import FitLines

    with monkeypatch.context() as m:
        m.setattr(budget_module.time, "perf_counter", FakeClock())
        peaked.fit_lines(shape="gaussian", time_limit=2.5)
    monkeypatch.setattr(FitLines, "replay", lambda self, st, p, r, ctx: self.apply(st, p, ctx))
    report = peaked.verify()
    assert not report.ok and any("budget" in m or "converged" in m for m in report.mismatches)


def test_strict_refuses_a_budget_stopped_fit_and_keeps_the_previous_lines(peaked):
    peaked.fit_lines(shape="gaussian")
    before = peaked.lines.copy()
    with pytest.raises(wk.FitError, match="strict=True") as info:
        peaked.fit_lines(shape="gaussian", max_nfev=1, strict=True)
    assert info.value.fit.stopped == "evaluations"
    assert peaked.lines.equals(before)


def test_progress_reaches_the_callback_and_is_not_recorded(peaked):
    calls = []
    peaked.fit_lines(shape="gaussian", progress=lambda f, t: calls.append((f, t)))
    assert calls and calls[0] == (pytest.approx(calls[0][0]), "fitting 3 lines")
    assert "progress" not in peaked._steps[-1].params


def test_a_reopened_budget_stopped_fit_says_how_it_stopped(peaked, tmp_path):
    peaked.fit_lines(shape="gaussian", max_nfev=2)
    path = tmp_path / "budget.session.json"
    peaked.save(path)
    again = wk.Session.load(path)
    fit = again.line_fit
    assert fit.stopped == "evaluations" and fit.nfev == 2 and not fit.converged
    np.testing.assert_allclose(again.lines["position"], peaked.lines["position"])
    assert again.verify().ok


@pytest.mark.parametrize("kw, words", [({"max_nfev": 0}, "max_nfev"),
                                       ({"time_limit": 0}, "time_limit"),
                                       ({"time_limit": "later"}, "time_limit")])
def test_a_bad_budget_is_refused_and_nothing_changes(peaked, kw, words):
    n = len(peaked._steps)
    with pytest.raises(wk.FitError, match=words):
        peaked.fit_lines(**kw)
    assert len(peaked._steps) == n


def test_the_size_check_counts_what_a_large_fit_holds_on_its_windows():
    from widgetkit.session.kinds_lines import MAX_FIT_CELLS, _held_cells

    # 5,000 narrow lines (FWHM 0.1 cm-1) on 1e6 points 0.01 cm-1 apart: each line is held
    # on its window of 100 half widths either side (1,001 points), not on every point
    held = _held_cells(np.full(5000, 0.1), 1_000_000, 0.01, 100.0)
    assert held == 5000 * 1001 and held < MAX_FIT_CELLS < 5000 * 1_000_000
    # broad lines whose windows cover the spectrum hold every point: still refused
    assert _held_cells(np.full(2000, 50.0), 100_000, 0.01, 100.0) == 2000 * 100_000
    # small fits are dense (every line on every point), and a missing width is the median
    assert _held_cells([0.1, np.nan], 1000, 0.01, 100.0) == 2000


def test_a_trust_region_stage_left_too_little_time_is_skipped_and_replayed_as_such(
        peaked, monkeypatch):
    from widgetkit.lines import _solve

    # every fit counts as short of time after stage one, and is not small enough for the
    # exact trust-region subproblem: the fit keeps stage one's point, as if the time had
    # run out at the trust-region stage's first evaluation
    monkeypatch.setattr(_solve, "DENSE_TR_WORK", 0)
    with monkeypatch.context() as m:
        m.setattr(_solve, "TR_MIN_SHARE", 2.0)
        peaked.fit_lines(shape="gaussian", prune=False)
    fit = peaked.line_fit
    budget = peaked._steps[-1].result["budget"]
    assert fit.converged and fit.solve_cut == (True,)
    assert budget["cut_by_solve"] == [True] and budget["stopped_by_solve"] == ["converged"]
    cut_nfev = budget["nfev"]
    # with time to spare the same fit runs the stage and evaluates more
    peaked.fit_lines(shape="gaussian", prune=False)
    assert peaked.line_fit.nfev > cut_nfev and "cut_by_solve" not in \
        peaked._steps[-1].result["budget"]
    # the replay of the cut fit follows its record, not today's clock (which has time)
    assert peaked.verify().ok
