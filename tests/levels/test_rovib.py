"""End-to-end rovibrational assignment of simulated bands (self-consistency with the
handbook constants of Huber & Herzberg 1979, values from memory) and its
behaviour with missing, extra, shifted and locked lines."""

import numpy as np
import pandas as pd
import pytest

from widgetkit.levels import Diatomic, assign_rovibrational

from .synth import CO, DCL, HCL, band_constants, correct, line_list

HCL_MOL = Diatomic("H", "Cl")


def _within(res, iso, truth, names, k=3.0):
    for name in names:
        v, e = res.constant(name, iso)
        assert abs(v - truth[name]) <= k * e, f"{iso} {name}: {v} vs {truth[name]} ± {e}"


@pytest.fixture(scope="module")
def hcl_band():
    df = line_list(HCL_MOL, HCL, J_max=12, sigma=0.003, area_noise=0.02, seed=11)
    return df, assign_rovibrational(df, HCL_MOL, temperature=296.0)


def test_every_simulated_hcl_line_gets_its_true_label_and_isotopologue(hcl_band):
    df, res = hcl_band
    assert correct(res, df).all()
    assert not res.assignments["outlier"].any()


def test_recovered_hcl_constants_agree_with_those_simulated_within_errors(hcl_band):
    _, res = hcl_band
    # handbook constants (Huber & Herzberg 1979, from memory) went in; each comes back within 3σ
    _within(res, "1H-35Cl", band_constants(HCL),
            ["band_origin", "B_upper", "B_lower", "D_upper", "D_lower", "B_e", "alpha_e"])
    rho = np.sqrt(HCL_MOL.isotopologues[0].reduced_mass / HCL_MOL.isotopologues[1].reduced_mass)
    h37 = {"omega_e": HCL["omega_e"] * rho, "omega_e_x_e": HCL["omega_e_x_e"] * rho**2,
           "omega_e_y_e": HCL["omega_e_y_e"] * rho**3, "B_e": HCL["B_e"] * rho**2,
           "alpha_e": HCL["alpha_e"] * rho**3, "D_e": HCL["D_e"] * rho**4}
    _within(res, "1H-37Cl", band_constants(h37), ["band_origin", "B_upper", "B_lower"])


def test_hcl_bond_length_matches_reference(hcl_band):
    _, res = hcl_band
    r, e = res.constant("r_e", "1H-35Cl")
    assert abs(r - 1.2745522) < 3 * e  # computed from the handbook Be with scipy.constants and periodictable
    assert res.constants.set_index(["isotopologue", "name"]).loc[("1H-35Cl", "r_e"), "unit"] == "Å"


def test_rotational_temperature_is_recovered_from_the_areas(hcl_band):
    _, res = hcl_band
    t, e = res.constant("T_rot", "1H-35Cl")
    assert abs(t - 296.0) < 3 * e and e < 10  # simulated at 296 K with 2 % area noise


def test_isotopologue_area_ratio_matches_natural_abundance(hcl_band):
    _, res = hcl_band
    r, e = res.constant("abundance_ratio", "1H-37Cl")
    nat = HCL_MOL.isotopologues[1].abundance / HCL_MOL.isotopologues[0].abundance  # periodictable
    assert abs(r - nat) < 3 * e


def test_combination_differences_are_reported_and_agree(hcl_band):
    _, res = hcl_band
    cd = res.combination_differences
    assert set(cd["state"]) == {"lower", "upper"}
    for state in ("lower", "upper"):
        d, e = res.constant(f"B_{state}_cd_diff", "1H-35Cl")
        assert abs(d) < 4 * e
    assert any("combination differences" in m for m in res.messages)


def test_co_with_13co_is_assigned_end_to_end():
    mol = Diatomic("C", "O")
    df = line_list(mol, CO, J_max=30, sigma=0.002, area_noise=0.02, seed=4)
    res = assign_rovibrational(df, mol)
    ok = correct(res, df)
    assert ok.mean() > 0.98  # a coincidence of a 12CO and a 13CO line may be flagged a blend
    _within(res, "12C-16O", band_constants(CO), ["band_origin", "B_upper", "B_lower", "B_e",
                                                  "alpha_e"])
    r, e = res.constant("r_e", "12C-16O")
    # computed from the handbook Be with scipy.constants and periodictable
    assert abs(r - 1.1283232) < 3 * e + 1e-6


def test_dcl_isotopologue_pair_is_split_by_the_mass_shift():
    mol = Diatomic("2H", "Cl")
    df = line_list(mol, DCL, J_max=18, sigma=0.003, min_area=1e-3, seed=2)
    res = assign_rovibrational(df, mol)
    assert correct(res, df).all()
    _within(res, "2H-35Cl", band_constants(DCL), ["band_origin", "B_lower", "B_upper"])


def test_missing_lines_are_skipped(hcl_band):
    df, _ = hcl_band
    drop = (df["iso"] == "1H-35Cl") & df["Jl"].isin([1, 6]) & (df["Ju"] == df["Jl"] + 1)
    res = assign_rovibrational(df[~drop], HCL_MOL)
    assert correct(res, df[~drop]).all()


@pytest.mark.parametrize("Ju, Jl", [(1, 0), (0, 1)], ids=["R(0)", "P(1)"])
def test_a_missing_line_next_to_the_origin_is_coped_with(hcl_band, Ju, Jl):
    df, _ = hcl_band
    drop = (df["iso"] == "1H-35Cl") & (df["Jl"] == Jl) & (df["Ju"] == Ju)
    res = assign_rovibrational(df[~drop], HCL_MOL)
    assert correct(res, df[~drop]).all()


def test_a_band_missing_both_lines_next_to_the_origin_keeps_its_true_spacing():
    # weak overtone bands picked at a high threshold lose R(0) and P(1) together; the seed
    # must then take the gap as four spacings, not pair every other line (self-consistency
    # with CO handbook constants, Huber & Herzberg 1979, from memory)
    co = Diatomic("12C", "16O")
    df = line_list(co, CO, band=(2, 0), J_max=14, sigma=0.002, seed=5)
    drop = ((df["Ju"] == 1) & (df["Jl"] == 0)) | ((df["Ju"] == 0) & (df["Jl"] == 1))
    res = assign_rovibrational(df[~drop], co, band=(2, 0))
    assert correct(res, df[~drop]).all()
    b_lower, err = res.constant("B_lower", "12C-16O")
    assert abs(b_lower - band_constants(CO, 2, 0)["B_lower"]) < 5 * err


def test_extra_lines_are_left_unassigned_and_reported(hcl_band):
    df, _ = hcl_band
    rng = np.random.default_rng(7)  # invented impurity lines
    extra = pd.DataFrame({"line_id": 900 + np.arange(6), "position": rng.uniform(2760, 3000, 6),
                          "position_err": 0.003, "area": 0.05})
    res = assign_rovibrational(pd.concat([df, extra], ignore_index=True), HCL_MOL)
    a = res.assignments.set_index("line_id")
    assert correct(res, df).all()
    n_un = int(a.loc[extra["line_id"], "label"].isna().sum())
    assert n_un >= 5  # an impurity that lands within 4σ of a real line can only be a blend
    assert any("unassigned" in m for m in res.messages)


def test_a_shifted_line_is_flagged_as_outlier_and_left_out(hcl_band):
    df, ref = hcl_band
    bad = df.copy()
    k = bad.index[(bad["iso"] == "1H-35Cl") & (bad["Jl"] == 4) & (bad["Ju"] == 5)][0]
    bad.loc[k, "position"] += 0.05  # about 17σ
    res = assign_rovibrational(bad, HCL_MOL)
    a = res.assignments.set_index("line_id")
    lid = bad.loc[k, "line_id"]
    assert a.loc[lid, "outlier"] and a.loc[lid, "weight"] == 0
    assert a["outlier"].sum() == 1
    assert any(f"line {lid}" in m and "outlier" in m for m in res.messages)
    v0, e0 = ref.constant("band_origin", "1H-35Cl")
    v1, _ = res.constant("band_origin", "1H-35Cl")
    assert abs(v1 - v0) < 3 * e0  # the outlier does not pull the fit


def test_a_blend_of_two_isotopologue_lines_is_kept_out_of_the_fit(hcl_band):
    df, _ = hcl_band
    b = df.copy()
    b["fwhm"] = 0.2
    i35 = b.index[(b["iso"] == "1H-35Cl") & (b["Jl"] == 3) & (b["Ju"] == 4)][0]
    i37 = b.index[(b["iso"] == "1H-37Cl") & (b["Jl"] == 3) & (b["Ju"] == 4)][0]
    # the two R(3) lines seen as one broad line at their area-weighted mean (invented case)
    w35, w37 = b.loc[i35, "area"], b.loc[i37, "area"]
    b.loc[i35, "position"] = (w35 * b.loc[i35, "true"] + w37 * b.loc[i37, "true"]) / (w35 + w37)
    b.loc[i35, "fwhm"] = 5.0
    b = b.drop(index=i37)
    res = assign_rovibrational(b, HCL_MOL)
    a = res.assignments.set_index("line_id")
    lid = b.loc[i35, "line_id"]
    assert a.loc[lid, "blended"] and a.loc[lid, "weight"] == 0
    assert "R(3) of 1H-3" in a.loc[lid, "blend_with"]
    assert any(f"line {lid}" in m and "blended" in m for m in res.messages)
    others = a.drop(index=lid)
    assert not others["blended"].any()


def test_locked_lines_keep_their_labels(hcl_band):
    df, _ = hcl_band
    k = df.index[(df["iso"] == "1H-35Cl") & (df["Jl"] == 2) & (df["Ju"] == 3)][0]
    lid = int(df.loc[k, "line_id"])
    res = assign_rovibrational(df, HCL_MOL, locks={lid: {"label": "R(2)", "isotopologue": "1H-35Cl"}})
    a = res.assignments.set_index("line_id")
    assert a.loc[lid, "locked"] and a.loc[lid, "label"] == "R(2)"
    assert correct(res, df).all()


def test_two_locks_seed_the_band_when_the_origin_region_is_missing(hcl_band):
    df, _ = hcl_band
    low = (df["Jl"] <= 1)  # R(0), R(1), P(1) of both isotopologues gone
    d = df[~low]
    r2 = int(d.loc[(d["iso"] == "1H-35Cl") & (d["Jl"] == 2) & (d["Ju"] == 3), "line_id"].iloc[0])
    p2 = int(d.loc[(d["iso"] == "1H-35Cl") & (d["Jl"] == 2) & (d["Ju"] == 1), "line_id"].iloc[0])
    res = assign_rovibrational(d, HCL_MOL, locks={r2: {"label": "R(2)", "isotopologue": "1H-35Cl"},
                                                     p2: {"label": "P(2)", "isotopologue": "1H-35Cl"}})
    assert correct(res, d).mean() > 0.95


def test_results_are_deterministic(hcl_band):
    df, res = hcl_band
    again = assign_rovibrational(df, HCL_MOL, temperature=296.0)
    pd.testing.assert_frame_equal(res.assignments, again.assignments)
    pd.testing.assert_frame_equal(res.constants, again.constants)


def test_covariance_is_given_per_isotopologue(hcl_band):
    _, res = hcl_band
    cov = res.covariance["1H-35Cl"]
    assert list(cov.index) == ["band_origin", "B_upper", "B_lower", "D_upper", "D_lower"]
    assert np.allclose(cov.to_numpy(), cov.to_numpy().T)
    e = res.constant("B_lower", "1H-35Cl")[1]
    assert np.sqrt(cov.loc["B_lower", "B_lower"]) == pytest.approx(e, rel=1e-12)


def test_assignment_table_has_the_api_columns(hcl_band):
    _, res = hcl_band
    need = ["line_id", "position", "isotopologue", "v_upper", "v_lower", "J_upper", "J_lower",
            "label", "calc", "obs_minus_calc", "outlier"]
    assert all(c in res.assignments.columns for c in need)
    assert set(res.constants.columns) == {"isotopologue", "name", "value", "stderr", "unit"}
    assert res.rounds >= 1


def test_position_errors_scale_the_reported_uncertainties():
    mol = Diatomic("1H", "35Cl")
    small = assign_rovibrational(line_list(mol, HCL, sigma=0.001, seed=3), mol)
    large = assign_rovibrational(line_list(mol, HCL, sigma=0.01, seed=3), mol)
    ratio = large.constant("band_origin")[1] / small.constant("band_origin")[1]
    assert 5 < ratio < 20  # errors ∝ σ for the same line set (common practice of least squares)


def test_overtone_band_is_assigned_when_its_numbering_is_given():
    mol = Diatomic("1H", "35Cl")
    df = line_list(mol, HCL, band=(2, 0), sigma=0.005, seed=8)
    res = assign_rovibrational(df, mol, band=(2, 0))
    assert correct(res, df).all()
    _within(res, "1H-35Cl", band_constants(HCL, 2, 0), ["band_origin", "B_upper", "B_e",
                                                         "alpha_e"])
    assert (res.assignments["v_upper"] == 2).all()




def test_a_clean_band_carries_no_doubt_message(hcl_band):
    _, res = hcl_band
    assert not any(m.startswith("DOUBTFUL") for m in res.messages)


def test_a_poor_assignment_is_marked_doubtful():
    rng = np.random.default_rng(12)  # invented: a band plus as many random lines
    mol = Diatomic("1H", "35Cl")
    df = line_list(mol, HCL, J_max=8, sigma=0.003, seed=12)
    junk = pd.DataFrame({"line_id": 500 + np.arange(40), "position": rng.uniform(2700, 3050, 40),
                         "position_err": 0.003, "area": rng.uniform(0.001, 0.01, 40)})
    res = assign_rovibrational(pd.concat([df, junk], ignore_index=True), mol)
    assert any(m.startswith("DOUBTFUL") for m in res.messages)
    assert correct(res, df).mean() > 0.9  # the band itself is still found


@pytest.mark.parametrize("which, T, sigma", [
    ("HCl", 100.0, 0.001), ("HCl", 1000.0, 0.02), ("CO", 150.0, 0.005), ("CO", 600.0, 0.002),
    ("DCl", 296.0, 0.003), ("DCl", 800.0, 0.01)])
def test_bands_over_temperatures_and_noise_levels(which, T, sigma):
    mol, c = {"HCl": (HCL_MOL, HCL), "CO": (Diatomic("C", "O"), CO),
              "DCl": (Diatomic("2H", "Cl"), DCL)}[which]
    J_max = int(np.clip(3 * np.sqrt(T / (1.44 * c["B_e"])), 8, 45))
    df = line_list(mol, c, temperature=T, sigma=sigma, area_noise=0.02, J_max=J_max,
                   min_area=1e-3, seed=21)
    res = assign_rovibrational(df, mol)
    assert correct(res, df).mean() > 0.98
    _within(res, mol.main.name, band_constants(c), ["band_origin", "B_lower", "B_upper"], k=4)
    t, e = res.constant("T_rot", mol.main.name)
    assert abs(t - T) < 4 * e + 0.01 * T  # simulated temperature recovered from the areas
