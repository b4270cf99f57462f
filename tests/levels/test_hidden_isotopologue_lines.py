"""T_rot from line areas when weak lines of another isotopologue hide in strong ones: ¹³CO
(natural abundance) among ¹²CO at 0.5 cm⁻¹ resolution. A ¹³CO line too weak to be found, or
too close to a ¹²CO line to be fitted apart, adds its area to the ¹²CO line; the Boltzmann plot
then tilts and T_rot came out about 2 standard errors low on average. Those lines are now left
out of the intensity analyses and the messages say which.

The line tables are built from our own simulator's line list (handbook CO constants, Huber and
Herzberg 1979, from memory) with seeded noise; the merging rule (a minor line within 1.5 widths,
or an undetectable one within 3 widths, adds its area to the nearest main line) is invented to
mimic a line fit, for self-consistency only."""

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
import widgetkit.levels._rovib_hidden as hidden
from widgetkit.levels import assign_rovibrational

CO_MOL = wk.Diatomic("C", "O")
CO = {k: v for k, v in wk.simulate.HANDBOOK["12C-16O"].items() if k != "r_e"}
T_SIM = 296.0
WIDTH = 0.55  # line FWHM at 0.5 cm-1 resolution (cm-1)
SIGMA_AREA = 2e-4  # area standard error, for areas up to 0.3 (as the line fit gives them)


def _lines(seed: int) -> pd.DataFrame:
    ll = wk.simulate.line_list(CO_MOL, CO, temperature=T_SIM)
    ll = ll[(ll["position"] > 2000) & (ll["position"] < 2260)].reset_index(drop=True)
    area = ll["intensity"].to_numpy() / ll["intensity"].max() * 0.3
    x = ll["position"].to_numpy()
    main = (ll["isotopologue"] == "12C-16O").to_numpy()
    keep = np.ones(len(ll), dtype=bool)
    for i in np.nonzero(~main)[0]:
        d = np.abs(x[main] - x[i])
        j = np.nonzero(main)[0][np.argmin(d)]
        weak = area[i] < 5 * SIGMA_AREA
        if d.min() < 1.5 * WIDTH or (weak and d.min() < 3 * WIDTH):
            area[j] += area[i]
            keep[i] = False
        elif weak:
            keep[i] = False
    rng = np.random.default_rng(seed)
    n = int(keep.sum())
    return pd.DataFrame({"line_id": np.arange(n), "position": x[keep] + rng.normal(0, 1e-3, n),
                         "position_err": np.full(n, 1e-3),
                         "area": area[keep] + rng.normal(0, SIGMA_AREA, n),
                         "area_err": np.full(n, SIGMA_AREA), "fwhm": np.full(n, WIDTH)})


def _z(seeds) -> tuple[np.ndarray, list]:
    z, msgs = [], []
    for seed in seeds:
        a = assign_rovibrational(_lines(seed), CO_MOL, temperature=T_SIM)
        v, e = a.constant("T_rot", "12C-16O")
        z.append((v - T_SIM) / e)
        msgs.append(a.messages)
    return np.array(z), msgs


def test_hidden_minor_lines_no_longer_pull_t_rot_low():
    z, msgs = _z(range(10))
    print(f"\nT_rot with hidden 13CO lines left out: mean z {z.mean():+.2f}, sd {z.std():.2f}")
    # measured: mean z -0.58 (before the change: -2.19); 10 draws, sd of the mean about 0.3
    assert abs(z.mean()) < 1.2, z
    assert np.all(np.abs(z) < 3.0), z
    said = [m for m in msgs[0] if "may hold an unresolved line of another sub-band" in m]
    assert said and "of 13C-16O" in said[0]


def test_without_leaving_them_out_the_bias_is_there(monkeypatch):
    # the check above can fail: with nothing recognised as hidden the old bias returns
    monkeypatch.setattr(hidden, "REACH", 0.0)
    z, msgs = _z(range(10))
    assert z.mean() < -1.5, z
    assert not any("unresolved line of another sub-band" in m for m in msgs[0])


@pytest.mark.parametrize("seed", [0])
def test_a_single_isotopologue_leaves_nothing_out(seed):
    mol = wk.Diatomic("C", "O", min_abundance=0.05)  # 12C-16O only
    ll = wk.simulate.line_list(mol, CO, temperature=T_SIM)
    ll = ll[(ll["position"] > 2000) & (ll["position"] < 2260)].reset_index(drop=True)
    rng = np.random.default_rng(seed)
    n = len(ll)
    t = pd.DataFrame({"line_id": np.arange(n), "position": ll["position"] + rng.normal(0, 1e-3, n),
                      "position_err": 1e-3,
                      "area": ll["intensity"] / ll["intensity"].max() * 0.3
                      + rng.normal(0, SIGMA_AREA, n), "area_err": SIGMA_AREA, "fwhm": WIDTH})
    a = assign_rovibrational(t, mol, temperature=T_SIM)
    assert not any("unresolved line of another sub-band" in m for m in a.messages)
    v, e = a.constant("T_rot", "12C-16O")
    assert abs(v - T_SIM) < 3 * e


def test_exclude_hidden_false_keeps_every_line_as_before():
    # the option off: the assignment of before the check (measured: mean z -2.19, the same
    # numbers as the code before it, commit 6023a9b^)
    z, msgs = [], []
    for seed in range(10):
        a = assign_rovibrational(_lines(seed), CO_MOL, temperature=T_SIM, exclude_hidden=False)
        v, e = a.constant("T_rot", "12C-16O")
        z.append((v - T_SIM) / e)
        msgs += a.messages
    assert np.mean(z) < -1.5, z
    assert not any("unresolved line of another sub-band" in m for m in msgs)
