"""Line lists of the simulator: positions, intensities, populations."""

import math

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.simulate import HANDBOOK, SimulationError, line_list, partition_sum, rotational_populations

HCL = HANDBOOK["1H-35Cl"]
CO = HANDBOOK["12C-16O"]
C2 = 1.4387769  # cm K, second radiation constant (CODATA 2018)


@pytest.fixture(scope="module")
def hcl_lines():
    return line_list(wk.Diatomic("H", "Cl"), HCL)


def _line(table, iso, label):
    row = table[(table["isotopologue"] == iso) & (table["label"] == label)]
    assert len(row) == 1
    return row.iloc[0]


def test_line_list_has_the_documented_columns(hcl_lines):
    assert list(hcl_lines.columns) == ["isotopologue", "v_upper", "v_lower", "J_upper", "J_lower",
                                       "branch", "label", "band", "position", "intensity",
                                       "E_lower", "mass"]
    assert hcl_lines["intensity"].max() == 1.0
    assert np.all(np.diff(hcl_lines["position"]) >= 0)


def test_fundamental_has_p_and_r_branches_and_no_q_branch(hcl_lines):
    # common practice: a 1Sigma diatomic fundamental has P and R, no Q
    assert set(hcl_lines["branch"]) == {"P", "R"}
    assert "P(0)" not in set(hcl_lines["label"])


def test_hcl_line_positions_match_the_remembered_lines(hcl_lines):
    # known single lines (HITRAN-type line list values, from memory). The handbook constants give
    # nu(1-0) 0.06 cm-1 above the remembered band origin (remembered values disagree by that much),
    # hence 0.1 cm-1.
    known = {"R(0)": 2906.25, "R(1)": 2925.90, "R(2)": 2944.91, "R(3)": 2963.29, "R(4)": 2981.00,
             "R(5)": 2998.05, "P(1)": 2865.10, "P(2)": 2843.63, "P(3)": 2821.57, "P(4)": 2798.94,
             "P(5)": 2775.77, "P(6)": 2752.04}
    for label, nu in known.items():
        assert _line(hcl_lines, "1H-35Cl", label)["position"] == pytest.approx(nu, abs=0.1)
    # H37Cl through mass scaling of the 1H-35Cl constants: R(0) 2904.11, P(1) 2863.02 (from memory)
    assert _line(hcl_lines, "1H-37Cl", "R(0)")["position"] == pytest.approx(2904.11, abs=0.1)
    assert _line(hcl_lines, "1H-37Cl", "P(1)")["position"] == pytest.approx(2863.02, abs=0.1)


def test_co_line_positions_match_the_remembered_lines():
    t = line_list(wk.Diatomic("C", "O"), CO)
    # known single lines of 12C16O 1-0 (from memory, HITRAN-type line lists)
    for label, nu in {"R(0)": 2147.081, "R(1)": 2150.856, "P(1)": 2139.426, "P(2)": 2135.546}.items():
        assert _line(t, "12C-16O", label)["position"] == pytest.approx(nu, abs=0.002)


def test_isotopologues_carry_their_natural_abundance(hcl_lines):
    s = hcl_lines.groupby("isotopologue")["intensity"].sum()
    ratio = s["1H-37Cl"] / s["1H-35Cl"]
    # abundance ratio 37Cl/35Cl from periodictable (IUPAC abundances); nu and Q differ by < 1 %
    import periodictable
    ab = periodictable.Cl[37].abundance / periodictable.Cl[35].abundance
    assert ratio == pytest.approx(ab, rel=0.01)


def test_boltzmann_plot_has_slope_minus_c2_over_t():
    t = 500.0
    lines = line_list(wk.Diatomic("1H", "35Cl"), HCL, temperature=t, min_relative=1e-6)
    hl = np.where(lines["branch"] == "R", lines["J_lower"] + 1, lines["J_lower"])
    nu = lines["position"].to_numpy()
    stim = -np.expm1(-C2 * nu / t)
    y = np.log(lines["intensity"] / (nu * hl * stim))
    slope = np.polyfit(lines["E_lower"], y, 1)[0]
    # Boltzmann plot (common practice): ln(S/(nu L)) against E'' has slope -c2/T (Boltzmann plot)
    assert slope == pytest.approx(-C2 / t, rel=1e-4)


def test_herman_wallis_factor_multiplies_by_one_plus_c_m_squared():
    mol = wk.Diatomic("1H", "35Cl")
    plain = line_list(mol, HCL, J_max=8, min_relative=0)
    hw = line_list(mol, HCL, J_max=8, min_relative=0, herman_wallis=0.02)
    m = np.where(plain["branch"] == "R", plain["J_lower"] + 1, -plain["J_lower"])
    ratio = hw["intensity"] / plain["intensity"]
    # Herman-Wallis factor (1 + C m)^2, up to the common normalisation (Herman & Wallis,
    # J. Chem. Phys. 23 (1955) 637; from memory)
    np.testing.assert_allclose(ratio / ratio.iloc[0], (1 + 0.02 * m) ** 2 / (1 + 0.02 * m[0]) ** 2,
                               rtol=1e-12)


def test_hcl_at_300_k_populates_j_3_most():
    pops = rotational_populations(HCL, 300.0)
    assert int(pops["J"][pops["population"].idxmax()]) == 3  # computed: most populated J = 3
    # computed: q_rot ≈ 20.31 (kT/hcB + 1/3 with B0); the direct sum with D is 0.2 % higher
    assert pops.attrs["q_rot"] == pytest.approx(20.31, rel=5e-3)
    assert pops["population"].sum() == pytest.approx(1.0, rel=1e-12)


def test_partition_sum_of_a_rigid_rotor_matches_the_high_temperature_series():
    c = {"omega_e": 2000.0, "B_e": 2.0}  # arbitrary rigid rotor, harmonic vibration
    t = 1000.0
    x = C2 * 2.0 / t
    # Mulholland expansion q_rot = 1/x + 1/3 + x/15 + 4x^2/315 (from memory); q_vib = 1/(1 - e^{-c2 w/T})
    ref = (1 / x + 1 / 3 + x / 15 + 4 * x * x / 315) / (1 - math.exp(-C2 * 2000.0 / t))
    assert partition_sum(wk.simulate.check_constants(c), t) == pytest.approx(ref, rel=1e-6)


def test_overtones_of_a_harmonic_molecule_with_a_linear_dipole_vanish():
    c = {"omega_e": 2000.0, "B_e": 2.0}  # no omega_e_x_e: harmonic potential
    t = line_list(wk.Diatomic("1H", "35Cl"), c, bands=((1, 0), (2, 0)), min_relative=1e-12)
    assert set(t["band"]) == {"1-0"}  # harmonic selection rule (common practice)
    t = line_list(wk.Diatomic("1H", "35Cl"), c, bands=((1, 0), (2, 0)), min_relative=1e-12,
                  dipole=(0.0, 1.0, 0.2))
    assert set(t["band"]) == {"1-0", "2-0"}  # electrical anharmonicity allows the overtone


def test_overtone_lines_carry_the_oscillator_band_strength():
    mol = wk.Diatomic("1H", "35Cl")
    t = line_list(mol, HCL, bands=((1, 0), (2, 0)), min_relative=0, J_max=30)
    bs = wk.oscillator.predict_band_strengths(HCL["omega_e"], HCL["omega_e_x_e"],
                                              mol.main.reduced_mass, temperature=296.0, v_max=2)
    m = bs.set_index("label")["moment"]
    s = t.groupby("band")["intensity"].sum()
    # band sums are |M|^2 x mean nu x sum of Boltzmann x Hoenl-London (= 1 over J): self-consistency
    nu = t.groupby("band").apply(lambda g: np.average(g["position"], weights=g["intensity"]),
                                 include_groups=False)
    stim = -np.expm1(-C2 * nu / 296.0)
    ratio = (s["2-0"] / s["1-0"]) / ((m["2-0"] / m["1-0"]) ** 2)
    assert ratio == pytest.approx(nu["2-0"] * stim["2-0"] / (nu["1-0"] * stim["1-0"]), rel=2e-3)


@pytest.mark.parametrize(
    ("kwargs", "words"),
    [
        ({"temperature": -10.0}, "temperature"),
        ({"bands": ((0, 1),)}, "v_upper > v_lower"),
        ({"J_max": 0}, "J_max"),
        ({"min_relative": 2.0}, "min_relative"),
    ],
)
def test_bad_line_list_input_raises_a_simulation_error(kwargs, words):
    with pytest.raises(SimulationError, match=words):
        line_list(wk.Diatomic("H", "Cl"), HCL, **kwargs)


def test_unknown_constant_name_is_refused_with_the_known_names():
    with pytest.raises(SimulationError, match=r"unknown constant name.*'omega'.*omega_e_x_e"):
        line_list(wk.Diatomic("H", "Cl"), {**HCL, "omega": 1.0})
    with pytest.raises(SimulationError, match="B_e"):
        line_list(wk.Diatomic("H", "Cl"), {"omega_e": 2990.0})
    assert issubclass(SimulationError, wk.WidgetkitError) and issubclass(SimulationError, ValueError)
