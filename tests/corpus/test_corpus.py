"""The stress corpus (benchmarks/corpus.py): the generator, the classification, and the default
analysis over a small seeded subset (the whole corpus: benchmarks/bench_corpus.py)."""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "benchmarks"))

from corpus import COUNT_SIGMAS, MOLECULES, clean_twin, corpus, make_case, render  # noqa: E402
from corpus_run import classify, run_budgeted, run_corpus, summary  # noqa: E402

#: the CI subset: 20 cases of their own seed, at most 3,000 points each, 8 s per analysis
CI_COUNT, CI_SEED, CI_POINTS, CI_BUDGET = 20, 11, 3_000, 8.0
#: success floor of the CI subset. With the smooth background, the residual search and
#: standard errors beside undetermined lines (rb10b, 2026-12-03) the default analysis reached
#: 16 of 20 on a loaded machine (4 with wrong lines: a fringe of 15 line widths, a time limit
#: reached); it was 15 of 20 before. The floor leaves room for fits cut short by the time
#: limit under load; raise it as the fits improve.
CI_FLOOR = 0.65


def test_a_case_is_drawn_the_same_way_from_its_seed_and_index():
    a, b = make_case(7, seed=5), make_case(7, seed=5)
    assert a == b
    assert make_case(8, seed=5) != a
    ra, rb = render(a), render(b)
    assert np.array_equal(ra.spectrum.y, rb.spectrum.y)


def test_the_corpus_spans_what_it_promises():
    cases = corpus(240, seed=2026)
    assert len(cases) >= 200
    assert {c.molecule for c in cases} == set(MOLECULES)
    steps = np.array([c.step for c in cases])
    snr = np.array([c.snr for c in cases])
    assert steps.min() < 0.01 and steps.max() > 1.0 and np.all((steps >= 0.005) & (steps <= 2))
    assert snr.min() < 20 and snr.max() > 2000 and np.all((snr >= 10) & (snr <= 5000))
    assert {c.y_kind for c in cases} == {"absorbance", "transmittance"}
    for feature in ("poly", "fringe", "impurities", "saturation", "bits"):
        share = np.mean([bool(getattr(c, feature)) for c in cases])
        assert 0.05 < share < 0.7, feature
    assert {c.bands for c in cases} == {((1, 0),), ((2, 0),), ((1, 0), (2, 1))}


def test_the_truth_counts_lines_above_six_sigma_only_and_the_noise_is_as_drawn():
    case = make_case(3, seed=2026, max_points=20_000)
    r = render(case)
    assert np.all(r.heights[r.counted] >= COUNT_SIGMAS * r.sigma)
    assert r.counted.sum() > 0
    # the noise drawn is what the truth says (self-consistency): the residual of the
    # clean twin's shape is not needed, lag-1 differences of a smooth band give sigma*sqrt(2)
    quiet = np.diff(r.spectrum.y)[: 200]
    assert np.std(quiet) / np.sqrt(2) == pytest.approx(r.sigma, rel=0.5)


def _answer(positions, errors):
    return ("ok", {"n_peaks": len(positions), "n_lines": len(positions), "converged": True,
                   "conversion": "", "t_peaks": 0.1, "t_fit": 0.2, "t_total": 0.3, "cpu_total": 0.3,
                   "positions": list(positions), "errors": list(errors), "message": ""})


def test_classify_tells_right_lines_from_displaced_ones_and_refusals_from_crashes():
    case = make_case(3, seed=2026, max_points=20_000)
    r = render(case)
    true = r.positions[r.counted]
    ok = classify(case, r, _answer(true + 0.001, np.full(true.size, 0.001)))
    assert ok.outcome == "success" and ok.n_matched == true.size
    off = classify(case, r, _answer(true + 0.01, np.full(true.size, 0.001)))
    assert (off.outcome, off.reason) == ("failure", "wrong")
    refused = classify(case, r, ("error", "FitError", True, "no usable result", ""))
    assert (refused.outcome, refused.reason) == ("refusal", "FitError")
    crash = classify(case, r, ("error", "IndexError", False, "index 3 is out of bounds", "tb"))
    assert (crash.outcome, crash.reason) == ("failure", "exception")
    assert classify(case, r, None).reason == "hang"


def _sleeps(spectrum):
    time.sleep(30)


def _raises(spectrum):
    raise IndexError("deliberate")


def test_the_runner_stops_an_analysis_over_its_budget_and_reports_a_crash():
    sp = render(make_case(1, seed=2026, max_points=2_000)).spectrum
    t = time.perf_counter()
    assert run_budgeted(sp, 0.5, _sleeps) is None
    assert time.perf_counter() - t < 20  # not a timing claim: the child was killed, not awaited
    kind, name, documented, message, _ = run_budgeted(sp, 20, _raises)
    assert (kind, name, documented, message) == ("error", "IndexError", False, "deliberate")


def test_the_clean_twin_keeps_the_band_and_grid_and_drops_the_stress():
    case = next(c for c in corpus(60, seed=2026) if c.fringe and c.impurities)
    twin = clean_twin(case)
    assert (twin.x_range, twin.step, twin.molecule, twin.bands) == (
        case.x_range, case.step, case.molecule, case.bands)
    assert not (twin.fringe or twin.impurities or twin.poly or twin.bits or twin.saturation)


@pytest.fixture(scope="module")
def ci_results():
    return run_corpus(corpus(CI_COUNT, seed=CI_SEED, max_points=CI_POINTS), budget=CI_BUDGET)


def test_no_spectrum_of_the_subset_raises_an_undocumented_exception(ci_results):
    crashes = [f"case {r.index}: {r.detail[:300]}" for r in ci_results if r.reason == "exception"]
    assert crashes == []


def test_the_subset_meets_its_success_floor(ci_results):
    s = summary(ci_results)
    assert s["success_rate"] >= CI_FLOOR, s
