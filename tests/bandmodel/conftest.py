"""Fixtures of the band-model tests (helpers in :mod:`.bands`)."""

import numpy as np
import pytest

import widgetkit as wk

from .bands import CO, simulate


@pytest.fixture(scope="session")
def co_4cm():
    """CO at 4 cm-1 (Gaussian instrument), every 1 cm-1: two humps with a faint comb."""
    return simulate(wk.Diatomic("C", "O"), CO, resolution=4.0, step=1.0, noise=0.002)


@pytest.fixture(scope="session")
def rng():
    return np.random.default_rng(2024)
