"""Warm starts: a spectrum that fails on its own is run again from its neighbour's lines."""

import pytest

import widgetkit as wk
from widgetkit.series.worker import _locks, _missing_peaks, warm_adjuster
from widgetkit.session.recipe import line_hints

from .simulated import simulate, work_out


@pytest.fixture(scope="module")
def neighbour():
    return work_out(simulate(330.0, 501))


def test_the_adjuster_adds_missing_peaks_widths_and_two_locks(neighbour):
    hints = line_hints(neighbour.state)
    weak = wk.Session(simulate(340.0, 502, strength=0.1))  # a thin fill: weak lines are missed
    weak.subtract_baseline("poly", degree=2)
    weak.find_peaks(min_snr=10)
    missing = _missing_peaks(weak.state, hints)
    assert missing, "the weak spectrum should miss some of the neighbour's lines"
    adjust = warm_adjuster(neighbour.recipe(), "note", hints)
    planned = adjust(2, "fit_lines", {"shape": "voigt", "shared_width": True}, weak)
    kinds = [k for k, _ in planned]
    assert kinds == ["add_peak"] * len(missing) + ["fit_lines"]
    for kind, p in planned[:-1]:
        weak._run(kind, p)
    params = planned[-1][1](weak)  # resolved when its turn comes, on the peaks now present
    assert len(params["widths"]) == len(weak.peaks)
    assert sum(w is not None for w in params["widths"]) >= len(weak.peaks) // 2
    weak.fit_lines(**{k: v for k, v in params.items()})
    locks = _locks(weak.state, hints)
    labels = sorted(v["label"] for v in locks.values())
    assert len(locks) == 2 and labels[0].startswith("P") and labels[1].startswith("R")


def test_no_peaks_are_invented_where_the_band_is_absent(neighbour):
    hints = line_hints(neighbour.state)
    empty = wk.Session(simulate(340.0, 503, strength=0.0005))  # nothing above the noise
    empty.subtract_baseline("poly", degree=2)
    empty.find_peaks(min_snr=10)
    assert _missing_peaks(empty.state, hints) == []


def test_a_failed_spectrum_is_rescued_from_its_neighbour_and_replays_exactly(neighbour, tmp_path):
    # a thin fill: few lines (0.026 fails alone, with or without lines from the residual,
    # since those must stand out as much as the recipe's peaks, and is rescued)
    sps = [simulate(330.0, 501), simulate(340.0, 505, strength=0.026)]
    cold = wk.run_series(neighbour.recipe(), sps, workers=1, progress=False, warm_start=False)
    if cold.spectra["status"].iloc[1] == "ok":
        pytest.skip("the weak spectrum is now assigned on its own; nothing to rescue")
    warm = wk.run_series(neighbour.recipe(), sps, workers=1, progress=False, out=tmp_path)
    row = warm.spectra.iloc[1]
    assert row["status"] == "ok" and row["warm_start"] == sps[0].meta["title"]
    s = warm.sessions[1]
    kinds = [st.kind for st in s.history]
    assert kinds.index("set_assignment") == kinds.index("assign_band") - 1  # the locks, recorded
    assert "warm start from" in s.history[1].params["text"]
    assert s.verify().ok
    entry = warm.entry(1)
    assert entry["warm_start"]["cold_status"] == cold.spectra["status"].iloc[1]


def test_a_warm_start_that_is_no_better_keeps_the_spectrums_own_result(neighbour):
    sps = [simulate(330.0, 501), simulate(340.0, 505, strength=0.0005)]
    res = wk.run_series(neighbour.recipe(), sps, workers=1, progress=False)
    assert res.spectra["status"].iloc[1] == "failed"
    assert "was tried and was not better" in res.spectra["notes"].iloc[1]
    assert res.spectra["warm_start"].iloc[1] is None
