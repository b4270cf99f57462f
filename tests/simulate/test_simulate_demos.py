"""Demo spectra and the optional Q branch."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.simulate import DEMOS, HANDBOOK, SimulationError, demo, line_list


@pytest.mark.parametrize("name", sorted(DEMOS))
def test_every_demo_is_a_reproducible_simulated_spectrum(name):
    a = demo(name)
    b = demo(name)
    assert a == b  # fixed default seed: self-consistency
    assert "simulated" in a.meta["title"]
    assert a.meta["simulated"]["function"].startswith("widgetkit.simulate.")
    assert a.meta["simulated"]["params"]["seed"] is not None


def test_demo_overview_holds_the_first_overtone_of_co():
    s = demo("co_overview")
    band = (s.x > 4150) & (s.x < 4300)
    # 2-0 of CO: 2 we - 6 wexe = 4260.06 (two-term formula, Herzberg 1950; Huber & Herzberg 1979
    # constants, from memory)
    assert s.x[band][np.argmax(s.y[band])] == pytest.approx(4260.0, abs=40.0)
    assert s.y[band].max() > 20 * 1e-5  # well above the demo noise (1e-5)


def test_unknown_demo_name_lists_the_known_ones():
    with pytest.raises(SimulationError, match="hcl_fundamental"):
        demo("nitrogen")


def test_q_branch_uses_the_delta_lambda_one_hoenl_london_factors():
    mol = wk.Diatomic("1H", "35Cl")
    t = line_list(mol, HANDBOOK["1H-35Cl"], q_branch=True, J_max=6, min_relative=0.0)
    assert set(t["branch"]) == {"P", "Q", "R"}
    row = t.set_index("label")
    nu = row["position"]
    e = row["E_lower"]
    c2, temp = 1.4387769, 296.0  # c2 (CODATA 2018)
    # ratio Q(3)/R(3): Hoenl-London (2J+1)/2 : (J+2)/2 (Herzberg, for a 1Pi-1Sigma band; from memory),
    # same lower level, so only nu and the stimulated-emission factor differ
    stim = lambda x: -np.expm1(-c2 * x / temp)  # noqa: E731
    ref = (7 / 2) / (5 / 2) * nu["Q(3)"] * stim(nu["Q(3)"]) / (nu["R(3)"] * stim(nu["R(3)"]))
    assert row.loc["Q(3)", "intensity"] / row.loc["R(3)", "intensity"] == pytest.approx(ref, rel=1e-12)
    assert e["Q(3)"] == e["R(3)"]
    assert "P(1)" not in row.index  # its factor (J-1)/2 is zero
