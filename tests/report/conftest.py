"""Sessions the report tests share: the demo spectrum (invented scenario, simulated data) analysed
end to end. Every check on them is a self-consistency check between the session and what a report
says, read back from the report."""

from __future__ import annotations

import pytest

import widgetkit as wk


@pytest.fixture(scope="package")
def session():
    """The 296 K HCl demo band: cropped, Gaussian lines (fast), assigned, one lock, one note."""
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.crop(2690.0, 3070.0)
    s.to_absorbance()
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="gaussian", baseline="linear")
    s.assign_band(wk.Diatomic("H", "Cl"), temperature=296)
    s.note("demo analysis for the report tests")
    return s


@pytest.fixture(scope="package")
def data(session):
    from widgetkit.report import collect

    return collect(session)
