"""Interference fringes of the baseline (widgetkit.processing.fringe): found where they are,
not found where they are not, set aside by the peak search and subtracted by the line fit.

Invented data from our simulator (self-consistency only): the truth is what was simulated.
Constants are the simulator's handbook values (widgetkit.simulate.HANDBOOK).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.errors import FitError
from widgetkit.processing.fringe import Fringe, find_fringe

HCL = wk.Diatomic("H", "Cl")
CO = wk.Diatomic("C", "O")


def _band(mol, key, x, *, noise, fringe=None, poly=(0.0,), seed=1, strength=0.6, **kw):
    """A simulated absorbance band on ``x`` plus a polynomial baseline and a fringe
    (amplitude, period cm-1, phase); returns y, the baseline and the line list with an
    approximate ``height`` column (strength x relative intensity)."""
    consts = wk.simulate.HANDBOOK[key]
    sp = wk.simulate.rovibrational(mol, consts, x=x, temperature=296, noise=noise, seed=seed,
                                   y_kind="absorbance", strength=strength, **kw)
    u = (x - x.mean()) / np.ptp(x)
    base = np.polynomial.polynomial.polyval(u, poly)
    if fringe is not None:
        amp, period, phase = fringe
        base = base + amp * np.sin(2 * np.pi * x / period + phase)
    truth = wk.simulate.line_list(mol, consts, temperature=296)
    truth["height"] = strength * truth["intensity"] / truth["intensity"].max()
    return sp.y + base, base, truth


def _hcl(seed=1, fringe=(0.02, 1.0, 0.4), noise=0.001):
    """The R branch of HCl 1-0 (both chlorine isotopologues), lines about 0.05 cm-1 wide,
    on a fringe of period 1 cm-1 (20 line widths, 200 periods) and 20 σ high."""
    x = np.arange(2900.0, 3100.0, 0.01)
    y, base, truth = _band(HCL, "1H-35Cl", x, noise=noise, fringe=fringe, poly=(0.05, 0.02),
                           seed=seed, resolution=0.04, lorentz_hwhm=0.01)
    return x, y, base, truth


def _true_lines(truth, lo, hi, min_height):
    pos, h = truth["position"].to_numpy(), truth["height"].to_numpy()
    return pos[(pos > lo) & (pos < hi) & (h > min_height)]


def test_a_fringe_is_measured_to_its_period_and_amplitude():
    x, y, *_ = _hcl()
    fr = find_fringe(x, y)
    assert fr is not None
    assert len(fr.periods) >= 1
    # the strongest fringe is the one simulated: period within 0.1 %, amplitude within 5 %
    k = int(np.argmax(fr.amplitudes))
    assert fr.periods[k] == pytest.approx(1.0, rel=1e-3)
    assert fr.amplitudes[k] == pytest.approx(0.02, rel=0.05)
    # the columns and coefficients give the same curve as ``at``
    assert np.allclose(fr.columns(x) @ fr.coefficients.ravel(), fr.at(x))
    again = Fringe.from_json(json.loads(json.dumps(fr.to_json())))
    assert np.allclose(again.at(x), fr.at(x))


@pytest.mark.parametrize("seed", range(6))
def test_no_fringe_is_found_in_noise_on_a_curved_baseline(seed):
    rng = np.random.default_rng(seed)
    x = np.linspace(1000.0, 1100.0, 20_000)
    u = (x - x.mean()) / np.ptp(x)
    y = 0.3 * u**2 - 0.2 * u**3 + rng.normal(0.0, 0.001, x.size)
    assert find_fringe(x, y) is None


@pytest.mark.parametrize("seed", range(3))
def test_a_regular_band_without_a_fringe_is_not_taken_for_one(seed):
    # CO 1-0: about 50 lines nearly evenly spaced (2B = 3.8 cm-1), a curved baseline
    x = np.arange(2030.0, 2240.0, 0.01)
    y, _, _ = _band(CO, "12C-16O", x, noise=0.0005, poly=(0.02, 0.05, -0.1), seed=seed,
                    resolution=0.05, lorentz_hwhm=0.03, strength=0.8)
    assert find_fringe(x, y) is None


def test_the_peak_search_sets_the_fringe_aside_and_finds_only_lines():
    x, y, _, truth = _hcl()
    lines = _true_lines(truth, x[0] + 1, x[-1] - 1, 15 * 0.001)
    search = wk.processing.search_peaks(x, y)
    assert search.context.fringe is not None
    pos = search.table["position"].to_numpy()
    # every true line above 15 σ is found, and nothing further than 0.1 cm-1 from a line
    assert np.all(np.min(np.abs(lines[:, None] - pos[None, :]), axis=1) < 0.02)
    nearest = np.min(np.abs(pos[:, None] - truth["position"].to_numpy()[None, :]), axis=1)
    assert np.sum(nearest > 0.1) == 0
    assert "fringe" in search.to_json()
    # without it, the fringe's maxima are peaks: hundreds of them
    plain = wk.processing.search_peaks(x, y, fringe=False)
    assert plain.context.fringe is None
    assert len(plain.table) > len(search.table) + 100


def test_a_fringe_shorter_than_a_few_line_widths_is_not_set_aside():
    # a ripple of period 0.15 cm-1 under lines 0.05 cm-1 wide (3 widths): lines, to the eye
    x, y, *_ = _hcl(fringe=(0.02, 0.15, 0.0))
    assert wk.processing.search_peaks(x, y).context.fringe is None


def test_a_session_records_the_fringe_and_the_fit_subtracts_it(tmp_path):
    x, y, base, truth = _hcl()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks()
    assert s.state.fringe is not None
    assert "interference fringe" in s.history[-1].summary
    fit_lines = s.fit_lines()
    f = s.line_fit
    assert f.background is not None and f.background.fringe is not None
    assert any("interference fringe" in m for m in f.flags["fit"])
    # the noise is measured without the fringe: the simulated σ within 10 %
    assert f.noise == pytest.approx(0.001, rel=0.1)
    # lines of the truth above 15 σ: positions within 4 standard errors
    lines = _true_lines(truth, x[0] + 1, x[-1] - 1, 15 * 0.001)
    pos = fit_lines["position"].to_numpy()
    err = fit_lines["position_err"].to_numpy()
    j = np.argmin(np.abs(lines[:, None] - pos[None, :]), axis=1)
    assert np.mean(np.abs(pos[j] - lines) <= 4 * err[j]) >= 0.95
    # the background plus the straight line follows the simulated baseline between lines
    free = np.min(np.abs(x[:, None] - pos[None, :]), axis=1) > 0.3
    assert np.sqrt(np.mean((f.baseline_y - base)[free] ** 2)) < 3 * 0.001
    # it survives a save and a reload: the restored curves are the fit's
    path = tmp_path / "fringe.json"
    s.save(path)
    back = wk.Session.load(path)
    assert back.state.fringe is not None
    assert np.allclose(back.line_fit.model_y, f.model_y, atol=1e-9)
    assert back.verify().ok


def test_a_search_asked_not_to_look_leaves_the_fringe_in():
    x, y, *_ = _hcl()
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.find_peaks(fringe=False)
    assert s.state.fringe is None
    assert len(s.peaks) > 150  # the fringe's maxima are peaks


def test_a_bad_fringe_given_to_the_line_fit_says_what_was_wrong():
    x, y, *_ = _hcl()
    with pytest.raises(FitError, match="fringe must be"):
        wk.lines.fit(x, y, [2906.0], fringe={"frequency": [1.0]})
