"""The line-fit step removes the lines the data cannot support and says so: in the summary,
the result and the reopened fit; the peaks stay; peaks added by hand are kept and flagged;
prune=False keeps every line (self-consistency checks on the invented band of conftest.py)."""

from __future__ import annotations

import pytest

import widgetkit as wk
from widgetkit.session import kinds_lines

NOISE_AT = 2950.0   # cm-1: between the invented lines, only noise there


@pytest.fixture
def with_noise_peak(session):
    session.find_peaks(min_snr=10)
    session.add_peak(NOISE_AT, snap=False)
    return session


def test_a_peak_added_by_hand_on_noise_is_kept_and_flagged(with_noise_peak):
    s = with_noise_peak
    s.fit_lines(shape="gaussian")
    hand = int(s.peaks.loc[s.peaks["origin"] == "manual", "peak_id"].iloc[0])
    assert hand in list(s.lines["line_id"]) and s.line_fit.removed.empty
    assert any(f.startswith("kept although") for f in s.line_fit.flags[hand])
    assert s._steps[-1].params.get("prune", True) is True


def test_a_found_peak_the_data_cannot_support_is_removed_and_listed(with_noise_peak,
                                                                   monkeypatch, tmp_path):
    s = with_noise_peak
    monkeypatch.setattr(kinds_lines, "_by_hand", lambda peaks: None)  # as if it was found
    peaks_before = s.peaks.copy()
    s.fit_lines(shape="gaussian")
    noise_id = int(peaks_before.loc[peaks_before["origin"] == "manual", "peak_id"].iloc[0])
    assert noise_id not in list(s.lines["line_id"]) and len(s.lines) == 3
    step = s._steps[-1]
    assert step.result["removed"]["line_id"] == [noise_id]
    assert step.result["removed"]["rule"][0] in ("insignificant", "width_at_bound", "moved")
    assert f"removed 1 line the data cannot support, fitted again: {noise_id} (" in step.summary
    assert s.peaks.equals(peaks_before)                  # the peaks stay as they were
    assert len(step.result["budget"]["nfev_by_solve"]) == 2
    assert s.verify().ok
    path = tmp_path / "pruned.session.json"
    s.save(path)
    again = wk.Session.load(path)
    assert list(again.line_fit.removed["line_id"]) == [noise_id]
    assert list(again.lines["line_id"]) == list(s.lines["line_id"])


def test_prune_false_keeps_every_line(with_noise_peak, monkeypatch):
    s = with_noise_peak
    monkeypatch.setattr(kinds_lines, "_by_hand", lambda peaks: None)
    s.fit_lines(shape="gaussian", prune=False)
    assert len(s.lines) == 4 and s.line_fit.removed.empty
    assert s._steps[-1].params["prune"] is False
    assert "removed" not in s._steps[-1].summary


def test_the_removed_columns_match_the_fit_code():
    from widgetkit.lines import prune

    assert kinds_lines.REMOVED_COLUMNS == prune.REMOVED_COLUMNS
    from widgetkit.lines import missed

    assert kinds_lines.ADDED_COLUMNS == missed.ADDED_COLUMNS
