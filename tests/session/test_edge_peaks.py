"""A maximum within half a line width of the end of the data is a line cut by the edge (a crop
through it): find_peaks leaves it out and says so, so no line fit or assignment measures the
edge. The demo HCl cell spectrum (our simulator; self-consistency only) cropped at 2800 cm⁻¹,
just above P(4) of H³⁵Cl near 2799.0 cm⁻¹ (the demo's line list), as the quick start does."""

import numpy as np
import pytest

import widgetkit as wk


@pytest.fixture(scope="module")
def cropped():
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.crop(2800, 3000)
    s.to_absorbance()
    s.subtract_baseline("als", lam=1e6, p=0.01)
    return s


def test_the_wing_of_the_cut_line_is_left_out_and_named(cropped):
    s = cropped.replay_with(1)
    s.find_peaks(min_snr=10)
    step = s.history[-1]
    assert len(step.result["cut_by_edge"]) == 1
    edge = step.result["cut_by_edge"][0]
    assert 2800.0 <= edge < 2801.0
    assert "left out 1 maximum within half a line width of the end of the data" in step.summary
    assert "a line cut by the edge" in step.summary
    pos = s.peaks["position"].to_numpy(float)
    fwhm = s.peaks["fwhm"].to_numpy(float)
    assert np.all(pos - s.spectrum.x[0] >= fwhm / 2) and np.all(s.spectrum.x[-1] - pos >= fwhm / 2)


def test_without_the_cut_line_the_fit_of_the_constants_is_clean(cropped):
    s = cropped.replay_with(1)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt", shared_width=True, baseline="linear")
    s.assign_band(wk.Diatomic("H", "Cl"), temperature=296)
    c = s.constants.set_index(["isotopologue", "name"])
    # the wing, fitted, ended on the edge and left obs − calc near 1 cm⁻¹ and an rms of 0.3
    assert c.loc[("1H-35Cl", "rms"), "value"] < 0.01
    assert not s.assignments["outlier"].any()


def test_a_spectrum_without_cut_lines_records_no_such_field(cropped):
    s = cropped.replay_with(1)
    s.crop(2805, 2995)
    s.find_peaks(min_snr=10)
    assert "cut_by_edge" not in s.history[-1].result
    assert "left out" not in s.history[-1].summary


def test_verify_replays_the_left_out_maximum(cropped, tmp_path):
    s = cropped.replay_with(1)
    s.find_peaks(min_snr=10)
    s.save(tmp_path / "s.json")
    report = wk.Session.load(tmp_path / "s.json").verify()
    assert report.ok, report.mismatches
