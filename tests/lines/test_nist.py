"""NIST StRD nonlinear regression datasets Gauss1 and Gauss2 (certified values).

Source: NIST/ITL Statistical Reference Datasets, nonlinear least squares,
"Gauss1" and "Gauss2" (Rust, B., NIST, 1996), copied unmodified into
tests/data/ (US government work, public domain). The model is
y = b1 exp(-b2 x) + b3 exp(-(x-b4)²/b5²) + b6 exp(-(x-b7)²/b8²): b1, b2 are our
exponential baseline b0, b1; b3, b6 heights; b4, b7 positions; b5, b8 = sigma·√2.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import widgetkit.lines as wl

DATA = Path(__file__).resolve().parents[1] / "data"


def _read_strd(name):
    lines = (DATA / f"{name}.dat").read_text().splitlines()
    # certified values and standard deviations are on lines 41-48 (NIST file format header)
    cert = np.array([[float(t) for t in ln.split("=")[1].split()[2:4]] for ln in lines[40:48]])
    starts = np.array([[float(t) for t in ln.split("=")[1].split()[0:2]] for ln in lines[40:48]])
    rss = float(lines[49].split(":")[1])  # "Residual Sum of Squares" line 50
    data = np.array([[float(t) for t in ln.split()] for ln in lines[60:310]])
    return data[:, 1], data[:, 0], cert, starts, rss


def _as_nist(res):
    t = res.table
    b = res.baseline_params["value"].to_numpy()
    be = res.baseline_params["stderr"].to_numpy()
    r2 = np.sqrt(2.0)
    values = [b[0], b[1], t.height[0], t.position[0], t.sigma[0] * r2,
              t.height[1], t.position[1], t.sigma[1] * r2]
    errors = [be[0], be[1], t.height_err[0], t.position_err[0], t.sigma_err[0] * r2,
              t.height_err[1], t.position_err[1], t.sigma_err[1] * r2]
    return np.array(values), np.array(errors)


@pytest.mark.parametrize("name", ["Gauss1", "Gauss2"])
@pytest.mark.parametrize("start", [0, 1])
def test_nist_gauss_fit_reproduces_the_certified_values(name, start):
    x, y, cert, starts, rss = _read_strd(name)
    positions = [starts[3, start], starts[6, start]]  # b4, b7 of NIST start 1 / start 2
    res = wl.fit(x, y, positions, shape="gaussian", baseline="exponential")
    assert res.converged, res.message
    values, errors = _as_nist(res)
    # certified parameter values (NIST StRD) to 1e-6 relative
    assert np.allclose(values, cert[:, 0], rtol=1e-6, atol=0)
    # certified residual sum of squares (NIST StRD) to 1e-8 relative
    assert res.chisqr == pytest.approx(rss, rel=1e-8)
    # certified standard deviations (NIST StRD): positions to 0.1 %, and all of them
    assert errors[[3, 6]] == pytest.approx(cert[[3, 6], 1], rel=1e-3)
    assert np.allclose(errors, cert[:, 1], rtol=1e-3)
