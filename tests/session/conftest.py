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
