"""Calibrated uncertainties of the line-by-line route: a simulated HCl fundamental (both chlorine
isotopologues, Huber & Herzberg 1979 constants via wk.simulate.HANDBOOK, from memory) is put
through the whole chain (peaks, line fit, assign_band) for many noise draws; the 95 % intervals
(value ± 1.96 standard errors) of the band origin, B″ and T_rot of H³⁵Cl must contain the truth in
92–98 % of 200 draws. The figure is printed (run with -s to see it). A 40-draw version always
runs, with a bound wide enough for its binomial scatter."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.levels import assign_rovibrational, rot_constant, vib_term

Z95 = 1.959964  # two-sided 95 % quantile of the normal distribution (scipy.stats.norm.ppf(0.975))
MOLECULE = wk.Diatomic("H", "Cl")
CONSTANTS = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items() if k != "r_e"}
T_SIM = 296.0


def _truth() -> dict:
    c = CONSTANTS
    G = vib_term([0, 1], c["omega_e"], c["omega_e_x_e"], c.get("omega_e_y_e", 0.0))
    B = rot_constant([0, 1], c["B_e"], c["alpha_e"], c.get("gamma_e", 0.0))
    return {"band_origin": G[1] - G[0], "B_lower": B[0], "T_rot": T_SIM}


def _z_scores(n: int, first_seed: int) -> dict:
    truth = _truth()
    z = {k: [] for k in truth}
    for seed in range(first_seed, first_seed + n):
        sp = wk.simulate.rovibrational(MOLECULE, CONSTANTS, x_range=(2640, 3100), step=0.02,
                                       seed=seed, noise=0.0005, lorentz_hwhm=0.1,
                                       temperature=T_SIM)
        s = wk.Session(sp)
        s.find_peaks(min_snr=8)
        s.fit_lines(shape="lorentzian")
        a = assign_rovibrational(s.lines, MOLECULE, temperature=T_SIM)
        for name, true in truth.items():
            v, e = a.constant(name, "1H-35Cl")
            z[name].append((v - true) / e)
    return {k: np.array(v) for k, v in z.items()}


def _report(z: dict) -> dict:
    cover = {k: 100.0 * float(np.mean(np.abs(v) < Z95)) for k, v in z.items()}
    n = len(next(iter(z.values())))
    print(f"\nline-by-line route, 95 % interval coverage over {n} draws: "
          + ", ".join(f"{k} {c:.1f} % (sd of z {np.std(z[k]):.2f})" for k, c in cover.items()))
    return cover


@pytest.mark.slow
def test_95_percent_intervals_cover_the_truth_in_92_to_98_percent_of_200_draws():
    cover = _report(_z_scores(200, 1000))
    assert all(92.0 <= c <= 98.0 for c in cover.values()), cover


def test_intervals_of_40_draws_are_neither_far_too_narrow_nor_far_too_wide():
    z = _z_scores(40, 5000)
    cover = _report(z)
    # 40 draws: 95 % coverage gives 38 ± 1.4 hits; 85 % (34 hits) is 3 binomial sd below
    assert all(c >= 85.0 for c in cover.values()), cover
    # standard errors 3 times too small (as once seen for T_rot) give sd(z) near 3
    assert all(0.5 < np.std(v) < 1.5 for v in z.values()), {k: np.std(v) for k, v in z.items()}
