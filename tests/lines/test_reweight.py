"""Absorbance from transmittance: the last weighted solve (widgetkit.lines.reweight).

The noise of A = -log10 T is σ_T / (T ln 10) (propagation of error through the logarithm;
common practice). Invented data from our simulator (self-consistency only): the truth is the
simulator's own line list.
"""

from __future__ import annotations

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.lines.reweight import MAX_ABSORBANCE, transmittance_weights

HCL = wk.Diatomic("H", "Cl")


def test_the_weights_are_one_over_the_noise_of_absorbance():
    a = np.array([0.0, 0.5, 1.0, 2.0, 9.0])
    w = transmittance_weights(a, 0.01)
    t = 10.0 ** -np.minimum(a, MAX_ABSORBANCE)
    # σ_A / σ_A(baseline) = T_baseline / T with σ_T fixed
    np.testing.assert_allclose(1.0 / w, 0.01 / t, rtol=1e-12)


def _pulls(weighting: str, seed: int):
    sp = wk.simulate.rovibrational(HCL, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2800, 3100),
                                   step=0.02, temperature=296, resolution=0.05,
                                   lorentz_hwhm=0.03, strength=1.5, noise=0.003, seed=seed,
                                   y_kind="transmittance")
    s = wk.Session(sp)
    s.to_absorbance()
    s.find_peaks()
    s.fit_lines(weighting=weighting)
    truth = wk.simulate.line_list(HCL, wk.simulate.HANDBOOK["1H-35Cl"],
                                  temperature=296)["position"].to_numpy()
    lines = s.lines[s.lines["height"] > 0.3]  # strong lines, where the noise of A is largest
    nearest = np.array([truth[np.argmin(np.abs(truth - p))] for p in lines["position"]])
    return (lines["position"].to_numpy() - nearest) / lines["position_err"].to_numpy(), s


@pytest.mark.parametrize("seed", [1, 2])
def test_weighted_position_errors_are_calibrated_where_unweighted_ones_are_not(seed):
    weighted, s = _pulls("auto", seed)
    assert s.line_fit.spec["weights"] == "from_transmittance"
    assert len(weighted) >= 8
    assert np.sqrt(np.mean(weighted**2)) < 1.6 and np.max(np.abs(weighted)) < 4.0
    plain, s0 = _pulls("none", seed)
    assert "weights" not in s0.line_fit.spec
    assert np.sqrt(np.mean(plain**2)) > 1.5 * np.sqrt(np.mean(weighted**2))


def test_an_absorbance_spectrum_is_not_weighted_and_replays():
    sp = wk.simulate.rovibrational(HCL, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2800, 3100),
                                   step=0.02, temperature=296, resolution=0.05, strength=0.5,
                                   noise=0.003, seed=4, y_kind="absorbance")
    s = wk.Session(sp)
    s.find_peaks()
    s.fit_lines()
    assert "weights" not in s.line_fit.spec and not s.state.from_transmittance


def test_a_weighted_session_is_saved_reopened_and_verified(tmp_path):
    _, s = _pulls("auto", 3)
    path = tmp_path / "w.json"
    s.save(path)
    again = wk.Session.load(path)
    assert again.state.from_transmittance
    assert again.verify().ok


def test_a_weighted_solve_cut_short_by_its_budget_does_not_replace_a_converged_fit():
    # the band of _pulls, in the pure function; the weighted solve is stopped after two
    # evaluations (replay_nfev counts the time limit as reached there): the converged
    # unweighted fit is kept, and the flag says so
    sp = wk.simulate.rovibrational(HCL, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2950, 3050),
                                   step=0.02, temperature=296, resolution=0.05,
                                   lorentz_hwhm=0.03, strength=1.5, noise=0.003, seed=1,
                                   y_kind="transmittance")
    a = wk.processing.to_absorbance(sp)
    pos = wk.processing.find_peaks(a.x, a.y)["position"].to_numpy()
    whole = wk.lines.fit(a.x, a.y, pos, weights="from_transmittance", prune=False)
    assert len(whole.solve_nfev) == 2 and whole.converged
    cut = wk.lines.fit(a.x, a.y, pos, weights="from_transmittance", prune=False,
                       replay_nfev=[None, 2])
    assert cut.solve_stopped[-1] == "time"
    assert cut.converged
    assert any("weighted fit stopped before converging" in f for f in cut.flags["fit"])
    # what is kept is the unweighted fit: the same lines as a fit without weights
    plain = wk.lines.fit(a.x, a.y, pos, prune=False)
    np.testing.assert_allclose(cut.table["position"], plain.table["position"], rtol=0,
                               atol=1e-9)
