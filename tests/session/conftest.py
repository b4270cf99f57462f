import numpy as np
import pytest

import widgetkit as wk


@pytest.fixture
def band_spectrum():
    """Invented demo-style data (self-consistency tests only): three Gaussian lines on a
    sloping baseline with seeded noise."""
    rng = np.random.default_rng(7)
    x = np.linspace(2700.0, 3100.0, 4001)
    y = 0.02 + 1e-5 * (x - 2700.0)
    for c, a in ((2800.0, 0.5), (2900.0, 1.0), (3000.0, 0.7)):
        y = y + a * np.exp(-0.5 * ((x - c) / 1.5) ** 2)
    y = y + rng.normal(0.0, 0.002, x.size)
    return wk.Spectrum(x, y, y_kind="absorbance", meta={"title": "test band"})


@pytest.fixture
def session(band_spectrum):
    return wk.Session(band_spectrum)


@pytest.fixture(scope="session")
def hcl_saved(tmp_path_factory):
    """A saved session of a simulated H-Cl 1-0 band (widgetkit.simulate from the handbook
    constants in wk.simulate.HANDBOOK; demo data, self-consistency only): peaks, a Gaussian
    line fit and a rovibrational assignment. Tests load their own copy."""
    hcl = wk.Diatomic("H", "Cl")
    sp = wk.simulate.rovibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2700, 3050),
                                   step=0.05, seed=3, noise=0.001, resolution=0.3,
                                   temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="gaussian")
    s.assign_band(hcl, temperature=296.0)
    path = tmp_path_factory.mktemp("hcl") / "hcl.session.json"
    s.save(path)
    return path


@pytest.fixture
def hcl(hcl_saved):
    """A fresh copy of the saved H-Cl session (load, find_peaks, fit_lines, assign_band)."""
    return wk.Session.load(hcl_saved)
