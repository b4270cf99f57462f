"""Calibrated uncertainties of the band model: over 200 noise draws of one simulated band, the
95 % intervals (value ± 1.96 standard errors) of the band origin, B″ and T contain the truth in
92–98 % of the draws. The figure is printed (run with -s to see it)."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.bandmodel import fit

from .bands import HCL, truth

Z95 = 1.959964  # two-sided 95 % quantile of the normal distribution (scipy.stats.norm.ppf(0.975))


@pytest.mark.slow
def test_95_percent_intervals_cover_the_truth_in_92_to_98_percent_of_200_draws():
    mol = wk.Diatomic("H", "Cl")
    clean = wk.simulate.rovibrational(mol, HCL, temperature=296.0, resolution=2.0, step=1.0,
                                      x_range=(2620.0, 3120.0), baseline=(0.02, 0.005))
    t0 = truth(HCL)
    rng = np.random.default_rng(7)
    hits = np.zeros(3)
    n = 200
    for _ in range(n):
        y = clean.y + rng.normal(0.0, 0.01, clean.y.size)
        res = fit(clean.x, y, mol, resolution=2.0, y_kind="absorbance")
        for k, (name, true) in enumerate((("band_origin", t0["band_origin"]),
                                          ("B_lower", t0["B_lower"]), ("T_rot", 296.0))):
            v, e = res.constant(name)
            hits[k] += abs(v - true) < Z95 * e
    cover = 100.0 * hits / n
    print(f"\nband model, 95 % interval coverage over {n} draws: band origin {cover[0]:.1f} %, "
          f"B'' {cover[1]:.1f} %, T {cover[2]:.1f} %")
    assert np.all((cover >= 92.0) & (cover <= 98.0)), cover
