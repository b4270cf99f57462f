"""A line whose area the data do not constrain must not run off to overflow.

Regression: on the demo's CO fundamental (our own simulated data), cropped, ALS baseline and
peaks at SNR >= 10, a line narrowed between two samples let the solver push its area to
1e243 and lmfit's bound transform then raised OverflowError out of fit_lines.
"""

import numpy as np

import widgetkit as wk
from widgetkit.lines._setup import AREA_LIMIT


def test_the_demo_co_band_fits_with_finite_areas_inside_the_solver_limit():
    s = wk.Session.from_file(wk.demo.data_path("co_overview.jdx"))
    s.crop(2000, 2260)
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="gaussian", baseline="linear")  # raised OverflowError before
    areas = s.line_fit.table["area"].to_numpy()
    y = s.spectrum.y
    limit = AREA_LIMIT * np.max(np.abs(y)) * np.ptp(s.spectrum.x)
    assert np.all(np.isfinite(areas)) and np.all(np.abs(areas) <= limit)
    # self-consistency: the band's strongest lines are far below the limit
    assert np.max(np.abs(areas)) < 1e-3 * limit
