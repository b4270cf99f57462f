"""Joint isotopologue fit of a rovibrational band (assign_band(..., joint=True)).

Bands are simulated from handbook constants (Huber & Herzberg, *Constants of Diatomic
Molecules*, 1979; values from memory, as in tests/levels/synth.py) with ωeye = γe = 0, because
the joint model is the two-term G(v) and B_v = Be − αe(v+½): the truth is then exactly
representable. Mass scaling ωe ∝ ρ, ωexe ∝ ρ², Be ∝ ρ², αe ∝ ρ³, D ∝ ρ⁴ (Dunham, Phys. Rev. 41,
721 (1932); Herzberg, *Spectra of Diatomic Molecules*, 1950, ch. III) is what the simulator
uses too, so these are self-consistency checks against the input constants.
"""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.errors import AssignmentError
from widgetkit.levels import Diatomic, assign_rovibrational
from widgetkit.levels.joint import JOINT_KEY, fit_joint

from .synth import CO, HCL, line_list

TWO_TERM = {"omega_e_y_e": 0.0}
CASES = {
    "HCl": (Diatomic("H", "Cl"), dict(HCL, **TWO_TERM), 0.002, 12),
    "CO": (Diatomic("C", "O"), dict(CO, **TWO_TERM), 0.001, 30),
}


@pytest.fixture(scope="module", params=sorted(CASES))
def fits(request):
    mol, c, sigma, jmax = CASES[request.param]
    df = line_list(mol, c, sigma=sigma, area_noise=0.03, J_max=jmax, seed=4)
    return mol, c, assign_rovibrational(df, mol), assign_rovibrational(df, mol, joint=True)


def _get(res, iso, name):
    return res.constant(name, iso)


def test_the_joint_fit_recovers_the_equilibrium_constants_within_three_sigma(fits):
    mol, c, _, joint = fits
    assert joint.status == "ok", joint.reasons
    for name in ("omega_e", "omega_e_x_e", "B_e", "alpha_e"):
        v, e = _get(joint, mol.main.name, name)
        assert e > 0 and abs(v - c[name]) < 3 * e, (name, v, c[name], e)


def test_each_isotopologue_gets_constants_scaled_from_the_one_set(fits):
    mol, c, _, joint = fits
    minor = mol.isotopologues[1]
    rho = np.sqrt(mol.main.reduced_mass / minor.reduced_mass)
    for name, power in (("omega_e", 1), ("omega_e_x_e", 2), ("B_e", 2), ("alpha_e", 3)):
        v0, _ = _get(joint, mol.main.name, name)
        v1, e1 = _get(joint, minor.name, name)
        assert v1 == pytest.approx(v0 * rho**power, rel=1e-12) and e1 > 0
        assert abs(v1 - c[name] * rho**power) < 3 * e1, name
    # r_e does not depend on the mass (Born–Oppenheimer): one value, also in the mass-independent rows
    r = [_get(joint, iso, "r_e")[0] for iso in (mol.main.name, minor.name, JOINT_KEY)]
    assert r[0] == pytest.approx(r[1], rel=1e-12) and r[0] == pytest.approx(r[2], rel=1e-12)


def test_the_mass_independent_coefficients_carry_the_reduced_mass(fits):
    mol, _, _, joint = fits
    mu = mol.main.reduced_mass
    u01, e01 = _get(joint, JOINT_KEY, "U_01")
    be, ebe = _get(joint, mol.main.name, "B_e")
    assert u01 == pytest.approx(be * mu, rel=1e-12) and e01 == pytest.approx(ebe * mu, rel=1e-12)
    u20, _ = _get(joint, JOINT_KEY, "U_20")
    assert u20 == pytest.approx(-_get(joint, mol.main.name, "omega_e_x_e")[0] * mu, rel=1e-12)


def test_joint_and_separate_fits_agree_within_their_combined_errors(fits):
    mol, _, separate, joint = fits
    for iso in (i.name for i in mol.isotopologues):
        for name in ("band_origin", "B_upper", "B_lower"):
            vs, es = _get(separate, iso, name)
            vj, ej = _get(joint, iso, name)
            assert abs(vs - vj) < 3 * np.hypot(es, ej), (iso, name, vs, vj)
            # the joint fit uses every line for the shared constants: never less precise
            assert ej <= es * 1.0001, (iso, name, es, ej)


def test_the_separate_fits_have_no_omega_e_and_the_joint_ones_say_how_they_fit(fits):
    mol, _, separate, joint = fits
    assert not (separate.constants["name"] == "omega_e").any()
    assert any("joint isotopologue fit of" in m for m in joint.messages)
    assert JOINT_KEY in joint.covariance and JOINT_KEY not in separate.covariance


def test_a_single_isotopologue_cannot_be_fitted_jointly():
    mol = Diatomic("1H", "35Cl")
    df = line_list(mol, HCL, sigma=0.002, J_max=10, seed=2)
    with pytest.raises(AssignmentError, match="at least two isotopologues"):
        assign_rovibrational(df, mol, joint=True)


def test_fit_joint_refuses_lines_of_one_isotopologue_directly():
    with pytest.raises(AssignmentError, match="joint=False"):
        fit_joint(["a"] * 6, [1, 2, 3, 0, 1, 2], [0, 1, 2, 1, 2, 3], np.arange(6.0), None,
                  rho={"a": 1.0}, masses={"a": 1.0}, reference="a")


def test_the_session_records_and_replays_a_joint_fit(tmp_path):
    hcl = wk.Diatomic("H", "Cl")
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items()
         if k not in ("r_e", "omega_e_y_e", "gamma_e")}
    sp = wk.simulate.rovibrational(hcl, c, x_range=(2600, 3150), step=0.02, seed=5,
                                   noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    s.assign_band(hcl, temperature=296.0, joint=True)
    assert s.history[-1].params["joint"] is True
    k = s.constants
    row = k[(k["isotopologue"] == "1H-35Cl") & (k["name"] == "omega_e")].iloc[0]
    assert abs(row["value"] - c["omega_e"]) < 3 * row["stderr"]
    assert (k["isotopologue"] == JOINT_KEY).sum() >= 5
    assert s.verify().ok
    s.save(tmp_path / "joint.json")
    s2 = wk.Session.load(tmp_path / "joint.json")
    assert s2.constants["value"].tolist() == pytest.approx(k["value"].tolist(), nan_ok=True)
    assert s2.verify().ok


Z95 = 1.959964  # two-sided 95 % quantile of the normal distribution (scipy.stats.norm.ppf(0.975))


def _joint_z(case: str, n: int) -> dict:
    mol, c, sigma, jmax = CASES[case]
    z = {k: [] for k in ("omega_e", "omega_e_x_e", "B_e", "alpha_e")}
    for seed in range(1000, 1000 + n):
        df = line_list(mol, c, sigma=sigma, area_noise=0.03, J_max=jmax, seed=seed)
        res = assign_rovibrational(df, mol, joint=True)
        for k in z:
            v, e = res.constant(k, mol.main.name)
            z[k].append((v - c[k]) / e)
    cover = {k: 100.0 * float(np.mean(np.abs(v) < Z95)) for k, v in z.items()}
    print(f"\njoint fit of {case}, 95 % interval coverage over {n} draws: "
          + ", ".join(f"{k} {v:.1f} %" for k, v in cover.items()))
    return {k: (cover[k], float(np.std(v))) for k, v in z.items()}


@pytest.mark.slow
@pytest.mark.parametrize("case", sorted(CASES))
def test_joint_intervals_cover_the_truth_in_92_to_98_percent_of_200_draws(case):
    out = _joint_z(case, 200)
    assert all(92.0 <= c <= 98.0 for c, _ in out.values()), out


def test_joint_standard_errors_are_neither_far_too_small_nor_far_too_large():
    out = _joint_z("HCl", 60)
    # 60 draws: 95 % coverage gives 57 ± 1.7 hits; 85 % (51 hits) is 3.5 binomial sd below
    assert all(c >= 85.0 and 0.6 < sd < 1.4 for c, sd in out.values()), out
