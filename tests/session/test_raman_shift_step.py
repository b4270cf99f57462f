"""Session.to_raman_shift: a recorded step that clears what belonged to the old axis."""

import numpy as np
import pytest

import widgetkit as wk


def _scattered(nu0=18796.99):
    shift = np.linspace(-300, 2500, 2801)
    y = 10 + 1000 * np.exp(-0.5 * ((shift - 2330.0) / 1.5) ** 2) + 300 * np.exp(
        -0.5 * ((shift - 1555.0) / 1.5) ** 2) + np.random.default_rng(3).normal(0, 1.0, shift.size)
    x = nu0 - shift
    return wk.Spectrum(x[::-1], y[::-1], y_kind="intensity")


def test_the_shift_is_a_step_that_clears_peaks_and_replays(tmp_path):
    s = wk.Session(_scattered())
    s.find_peaks(min_snr=20)
    assert len(s.peaks) == 2
    s.to_raman_shift(18796.99, unit="cm-1")
    step = s.history[-1]
    assert step.kind == "to_raman_shift" and step.result["cleared"] == {"peaks": 2}
    assert len(s.peaks) == 0 and s.spectrum.meta["x_axis"] == "raman_shift"
    s.find_peaks(min_snr=20)
    assert np.allclose(sorted(s.peaks["position"]), [1555.0, 2330.0], atol=0.05)  # what was made
    assert set(s.peaks["peak_id"]) == {3, 4}  # the ids of the cleared peaks are not given again
    s.save(tmp_path / "raman.json")
    again = wk.Session.load(tmp_path / "raman.json")
    assert again.verify().ok
    assert again.spectrum.meta["excitation_wavenumber"] == pytest.approx(18796.99)


def test_a_refused_shift_changes_nothing():
    s = wk.Session(_scattered())
    before = len(s.history)
    with pytest.raises(wk.ProcessingError, match="medium"):
        s.to_raman_shift(532.0)
    assert len(s.history) == before and s.spectrum.meta.get("x_axis") is None


def test_peak_ids_are_not_reused_after_the_shift():
    s = wk.Session(_scattered())
    s.find_peaks(min_snr=20)
    old = set(s.peaks["peak_id"])
    s.to_raman_shift(18796.99, unit="cm-1")
    s.find_peaks(min_snr=20)
    assert not old & set(s.peaks["peak_id"])  # ids are never given out twice in a session
