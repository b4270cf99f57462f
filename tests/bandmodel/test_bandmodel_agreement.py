"""Agreement of the two routes to the constants (issue: band model vs line positions): on a
resolved band the band-model constants and the line-by-line constants agree within their
combined standard errors, and the constants table says which method produced each number.
The band is simulated from the handbook constants of CO (Huber & Herzberg 1979, from memory,
via wk.simulate.HANDBOOK): self-consistency, not an outside check value."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.simulate import HANDBOOK

NAMES = ("band_origin", "B_upper", "B_lower", "T_rot")


@pytest.fixture(scope="module")
def both():
    c = {k: v for k, v in HANDBOOK["12C-16O"].items() if k != "r_e"}
    sp = wk.simulate.rovibrational(wk.Diatomic("C", "O"), c, temperature=296.0, resolution=0.1,
                                   step=0.02, noise=0.002, seed=21, x_range=(2040.0, 2240.0))
    s = wk.Session(sp)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt")
    s.assign_band("CO", temperature=296.0)
    s.fit_band_model("CO", resolution=0.1)
    return s


def _row(c, method, name):
    r = c[(c["method"] == method) & (c["name"] == name) & (c["isotopologue"] == "12C-16O")]
    assert len(r) == 1, (method, name)
    return float(r["value"].iloc[0]), float(r["stderr"].iloc[0])


@pytest.mark.parametrize("name", NAMES)
def test_line_positions_and_band_model_agree_within_combined_errors(both, name):
    c = both.constants
    v1, e1 = _row(c, "line positions", name)
    v2, e2 = _row(c, "band model", name)
    assert e1 > 0 and e2 > 0
    assert abs(v1 - v2) < 3 * np.hypot(e1, e2), (name, v1, e1, v2, e2)


def test_every_constant_says_which_method_produced_it(both):
    c = both.constants
    assert c["method"].notna().all()
    assert set(c["method"]) == {"line positions", "band model"}
