"""Lines the peak search missed, found in the residual (widgetkit.lines.missed).

Invented data (self-consistency only): the truth is what was simulated.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import simulate_band

import widgetkit as wk
import widgetkit.lines as wl
from widgetkit.lines import missed


def _shoulder(seed: int = 3):
    """A strong Voigt line at 100 cm-1 and one 30 times weaker 0.55 cm-1 away (2.7 FWHM), on
    its flank, where it makes no maximum of its own; noise 1/1000 of the strong line."""
    x = np.linspace(95.0, 110.0, 3001)
    sh = wl.SHAPES["voigt"]
    strong = sh.profile(x, 1.0, 100.0, 0.06, 0.1)
    peak = float(sh.height(1.0, 0.06, 0.1))
    weak = sh.profile(x, 1.0 / 30.0, 100.55, 0.06, 0.1)
    other = sh.profile(x, 0.8, 106.0, 0.06, 0.1)
    noise = 1e-3 * peak
    y = strong + weak + other + np.random.default_rng(seed).normal(0.0, noise, x.size)
    return x, y, noise


def test_a_weak_line_on_a_flank_is_found_in_the_residual_and_fitted():
    x, y, _ = _shoulder()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    peaks = s.find_peaks()
    assert np.min(np.abs(peaks["position"] - 100.55)) > 0.2  # the peak search cannot see it
    s.fit_lines()
    added = s.line_fit.added
    assert len(added) == 1 and abs(added["position"].iloc[0] - 100.55) < 0.1
    line = s.lines.set_index("line_id").loc[added["line_id"].iloc[0]]
    assert abs(line["position"] - 100.55) <= 4 * line["position_err"]
    assert "found in the residual" in s._steps[-1].summary
    # its id is the session's next peak id, and no later peak will get it
    assert added["line_id"].iloc[0] not in set(s.peaks["peak_id"])
    assert s.state.next_peak_id > added["line_id"].iloc[0]
    # and the strong line next to it is where it was simulated
    strong = s.lines.iloc[np.argmin(np.abs(s.lines["position"] - 100.0))]
    assert abs(strong["position"] - 100.0) <= 4 * strong["position_err"]


def test_off_it_adds_nothing():
    x, y, _ = _shoulder()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks()
    s.fit_lines(add_missed=False)
    assert s.line_fit.added.empty and len(s.lines) == len(s.peaks)


@pytest.mark.parametrize("seed", [3, 4, 5])
def test_a_band_with_every_line_found_gets_nothing_added(seed):
    band = simulate_band(seed=seed)
    res = wl.fit(band.x, band.y, band.positions, add_missed=True)
    assert res.added.empty
    assert list(res.added.columns) == list(missed.ADDED_COLUMNS)


def test_a_session_with_an_added_line_is_saved_reopened_and_verified(tmp_path):
    x, y, _ = _shoulder()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks()
    s.fit_lines()
    assert len(s.line_fit.added) == 1
    path = tmp_path / "s.json"
    s.save(path)
    again = wk.Session.load(path)
    assert list(again.line_fit.added["line_id"]) == list(s.line_fit.added["line_id"])
    np.testing.assert_allclose(again.lines["position"], s.lines["position"], rtol=0, atol=0)
    assert again.verify().ok


def test_new_ids_follow_the_integers_or_are_named():
    assert missed._new_ids([3, 7, 5], 2) == [8, 9]
    assert missed._new_ids(["a", "r1"], 2) == ["r2", "r3"]
    assert missed._new_ids([3, 7, 5], 2, first=12) == [12, 13]
    assert missed._new_ids([3, 7, 5], 1, first=4) == [8]


def test_a_line_weaker_than_the_peaks_asked_for_is_not_added():
    x, y, _ = _shoulder()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks(min_snr=60)  # the flank line stands about 33 σ in the residual
    assert s.peaks["snr"].min() >= 60
    s.fit_lines()
    assert s.line_fit.added.empty
    s.find_peaks(min_snr=20)
    s.fit_lines()
    assert len(s.line_fit.added) == 1


def test_a_refit_with_the_added_lines_cut_short_by_its_budget_is_not_kept():
    # the same shoulder; the refit with the line from the residual is stopped after two
    # evaluations (replay_nfev counts the time limit as reached there), so it cannot have
    # converged: the converged fit before it is kept, and the flag says why
    x, y, _ = _shoulder()
    pos = wk.processing.find_peaks(x, y)["position"].to_numpy()
    full = wl.fit(x, y, pos, add_missed=True, prune=False)
    assert full.converged and len(full.added) == 1  # the refit is kept when it converges
    cut = wl.fit(x, y, pos, add_missed=True, prune=False, replay_nfev=[None, 2])
    assert cut.solve_stopped[-1] == "time"
    assert cut.converged and cut.added.empty
    assert len(cut.table) == len(pos)
    assert any("stopped before converging" in f for f in cut.flags["fit"])


def test_what_an_earlier_stage_said_stays_when_a_later_fit_is_kept():
    # a stage's flags (a protected line kept although it failed a test) were lost when a
    # later stage's fit was kept: the flags of the kept fit came from its own solve only
    import pandas as pd

    from widgetkit.lines._stages import Run

    first = {"flags": {}, "table": pd.DataFrame({"line_id": [3, 5]})}
    run = Run(prob=None, fields=first, solves=[None], shared=False, args={},
              max_nfev=None, time_limit=None, progress=None, replays=[None] * 5,
              max_passes=1)
    run.flag(3, "kept although its area is below 3 standard errors")
    run.flag(5, "removed later")
    run.flag("fit", "a note about the whole fit")
    run.solves.append(None)
    later = {"flags": {3: ("its own",)}, "table": pd.DataFrame({"line_id": [3, 8]})}
    run.keep(None, later)
    flags = run.fields["flags"]
    assert flags[3] == ("its own", "kept although its area is below 3 standard errors")
    assert 5 not in flags            # line 5 is not in the kept fit
    assert flags["fit"] == ("a note about the whole fit",)
    assert run.kept == 1
