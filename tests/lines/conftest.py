"""Shared simulated data for the line-fitting tests.

Every band here is invented (a rovibrational-like progression in an invented
gas cell) and simulated with our own shape functions and a seeded noise
generator; checks on it are self-consistency checks (recovered the values we
simulated with, windowed against full evaluation), never outside references.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pytest

import widgetkit.lines as wl


@dataclass(frozen=True)
class Band:
    x: np.ndarray
    y: np.ndarray
    positions: np.ndarray
    areas: np.ndarray
    sigma: float
    gamma: float
    noise: float
    baseline: tuple


def simulate_band(n_lines=12, n_points=6000, *, shape="voigt", sigma=0.05, gamma=0.08,
                  noise_frac=0.01, seed=3, baseline=(0.02, 1e-5)) -> Band:
    """P/R-like progression nu(m) = nu0 + (B1+B0) m + (B1-B0) m^2 (invented constants)."""
    rng = np.random.default_rng(seed)
    half = n_lines // 2
    m = np.r_[-half:0, 1:n_lines - half + 1]
    nu0, b1, b0 = 2150.0, 1.90, 1.93
    pos = nu0 + (b1 + b0) * m + (b1 - b0) * m**2
    areas = 0.5 + 0.5 * np.cos(m / n_lines * 2.0)  # smooth envelope, all well above noise
    lo, hi = pos.min() - 3.0, pos.max() + 3.0
    x = np.linspace(lo, hi, n_points)
    sh = wl.SHAPES[shape]
    widths = {"sigma": sigma, "gamma": gamma}
    w = [widths[k] for k in sh.widths]
    y = baseline[0] + baseline[1] * (x - 0.5 * (lo + hi))
    for a, p in zip(areas, pos):
        y = y + sh.profile(x, a, p, *w)
    peak = float(sh.height(1.0, *w))
    noise = noise_frac * peak
    y = y + rng.normal(0.0, noise, x.size)
    return Band(x, y, pos, areas, sigma, gamma, noise, baseline)


@pytest.fixture
def band():
    return simulate_band()


@pytest.fixture
def starts(band):
    # starting positions off by up to ~half a width (seeded)
    return band.positions + np.random.default_rng(11).normal(0.0, 0.03, band.positions.size)
