"""The numerical oscillator on Morse and tabulated potentials."""

import math

import numpy as np
import pytest

from widgetkit.oscillator import (
    band_strengths,
    morse,
    morse_levels,
    morse_parameters,
    solve,
    tabulated,
    transition_moments,
)

# H35Cl constants: handbook values, from memory (Huber & Herzberg 1979)
WE, WX, RE = 2990.946, 52.8186, 1.27455
MU = 0.979592539  # u, computed (periodictable masses)


@pytest.fixture(scope="module")
def hcl():
    return solve(morse(WE, WX, r_e=RE), MU)


def test_morse_has_the_number_of_bound_levels_computed_from_the_handbook_constants(hcl):
    assert hcl.n_levels == 28  # computed from the handbook ωe, ωexe: 28 bound Morse levels for H35Cl
    assert morse_parameters(WE, WX, MU)["n_bound"] == 28  # same source
    assert morse_parameters(2169.81358, 13.28831, 6.85620864)["n_bound"] == 82  # computed: CO 82


def test_morse_energies_match_the_closed_form_for_every_bound_level(hcl):
    v = np.arange(28)
    closed = WE * (v + 0.5) - WX * (v + 0.5) ** 2  # Morse, Phys. Rev. 34 (1929) 57
    np.testing.assert_allclose(hcl.energies, closed, rtol=1e-6)
    np.testing.assert_allclose(hcl.energies, closed, atol=1e-7)  # DVR converges far beyond 1e-6
    np.testing.assert_allclose(morse_levels(WE, WX), closed, rtol=1e-15)


def test_lowest_morse_levels_equal_the_reference_values(hcl):
    # Morse E0, computed (Morse 1929 closed form)
    assert hcl.energies[0] == pytest.approx(1482.26835, abs=1e-5)
    # Morse E1, computed (Morse 1929 closed form)
    assert hcl.energies[1] == pytest.approx(4367.57715, abs=1e-5)


def test_level_28_is_not_bound_although_the_parabola_lies_below_d_e(hcl):
    d_e = morse_parameters(WE, WX, MU)["D_e"]
    assert WE * 28.5 - WX * 28.5**2 < d_e  # computed: G(28) < D_e ...
    assert hcl.energies.max() < d_e and hcl.n_levels == 28  # ... but v = 28 is not bound


def test_morse_matrix_elements_match_the_computed_values(hcl):
    m = transition_moments(hcl, (0.0, 1.0))  # mu(r) = r - r_e in Å
    # computed (sinc-DVR, Colbert & Miller, J. Chem. Phys. 96 (1992) 1982, and the closed form of
    # the Morse matrix elements); listed as
    # magnitudes, our phases (outermost lobe positive) alternate the sign of <0|x|v>
    assert abs(m[1, 0]) == pytest.approx(0.0765186715, rel=1e-8)
    assert abs(m[2, 0]) == pytest.approx(0.007316784362, rel=1e-8)
    assert abs(m[3, 0]) == pytest.approx(0.001152641655, rel=1e-8)
    assert abs(m[2, 1]) == pytest.approx(0.1091983164, rel=1e-8)
    assert m[1, 0] > 0 and m[2, 1] > 0  # Hermite-like phase: <v|r - r_e|v+1> > 0


def test_morse_parameters_match_the_computed_values():
    p = morse_parameters(WE, WX, MU)
    assert p["D_e"] == pytest.approx(42341.89, abs=0.01)  # computed: Morse D_e = ωe²/(4ωexe)
    assert p["force_constant"] == pytest.approx(516.31, abs=0.01)  # computed: k = 4π²c²μωe² = 516.31 N/m
    assert p["D_0"] == pytest.approx(40859.62, abs=0.01)  # computed: D_e - G(0) = 40859.62


def test_mechanical_anharmonicity_alone_makes_overtones_allowed(hcl):
    table = band_strengths(hcl, (0.0, 1.0)).set_index("label")
    assert table.loc["2-0", "allowed"] and table.loc["3-0", "allowed"]
    r = table.loc["2-0", "relative_intensity"]
    # common practice: Morse + linear dipole gives 2-0/1-0 ≈ 0.018 for HCl
    assert r == pytest.approx(0.018, rel=0.05)
    # and it is nu |M|^2 of the two bands (definition, self-consistency)
    ref = (table.loc["2-0", "position"] * table.loc["2-0", "moment"] ** 2
           / (table.loc["1-0", "position"] * table.loc["1-0", "moment"] ** 2))
    assert r == pytest.approx(ref, rel=1e-12)


def test_overtones_weaken_by_orders_of_magnitude_per_step(hcl):
    t = band_strengths(hcl, (0.0, 1.0), max_v_lower=0).set_index("label")["relative_intensity"]
    # common practice: roughly one to two orders of magnitude per step
    for a, b in (("1-0", "2-0"), ("2-0", "3-0"), ("3-0", "4-0")):
        assert 5.0 < t[a] / t[b] < 300.0


def test_rotational_levels_follow_from_the_potential():
    lv = solve(morse(WE, WX, r_e=RE), MU, n_levels=3, rotational_constants=True)
    # r_e^2 = 16.857629/(mu B_e): h/(8π²c u) in cm⁻¹ Å², computed (scipy.constants)
    be = 16.857629 / (MU * RE**2)
    assert be == pytest.approx(10.5934, rel=2e-4)  # consistent with B_e = 10.59341 (handbook, from memory)
    # Pekeris, Phys. Rev. 45 (1934) 98 (from memory): alpha_e = 6 sqrt(wexe Be^3)/we - 6 Be^2/we
    alpha = 6 * math.sqrt(WX * be**3) / WE - 6 * be**2 / WE
    assert lv.B_v[0] - lv.B_v[1] == pytest.approx(alpha, rel=0.02)
    # Kratzer relation D_e = 4 Be^3 / we^2 (Herzberg; from memory), holds to ~0.2 % for the Morse curve
    assert lv.D_v[0] == pytest.approx(4 * be**3 / WE**2, rel=0.01)
    # self-consistency: E(v, J) - E(v, 0) = B_v x - D_v x^2 + O(x^3), x = J(J+1)
    for J in (1, 2):
        x = J * (J + 1)
        lj = solve(morse(WE, WX, r_e=RE), MU, n_levels=3, J=J)
        np.testing.assert_allclose(lj.energies - lv.energies, lv.B_v * x - lv.D_v * x * x,
                                   atol=2e-8 * x**3 + 1e-7)


def test_a_tabulated_morse_curve_reproduces_the_closed_form_levels():
    mp = morse_parameters(WE, WX, MU)
    r = np.linspace(0.70, 4.0, 400)
    V = mp["D_e"] * (1 - np.exp(-mp["a"] * (r - RE))) ** 2 + 1234.5  # any energy zero
    lv = solve(tabulated(r, V), MU, n_levels=8)
    v = np.arange(8)
    # Morse 1929 closed form; the spline through 400 points limits the agreement
    np.testing.assert_allclose(lv.energies, WE * (v + 0.5) - WX * (v + 0.5) ** 2, rtol=1e-6)
    assert lv.r_e == pytest.approx(RE, abs=1e-6)


def test_given_grid_levels_equal_a_direct_diagonalisation_of_the_colbert_miller_matrix():
    pot = morse(WE, WX, r_e=RE)
    r = np.linspace(0.8, 3.2, 500)  # over-resolved for 8 levels, so the fast path is taken
    dr = r[1] - r[0]
    kin = 16.857629168 / MU  # hbar^2/(2 mu) in cm-1 Å^2 (computed with scipy.constants, CODATA)
    i = np.arange(r.size)
    d = i[:, None] - i[None, :]
    with np.errstate(divide="ignore"):
        # Colbert and Miller, J. Chem. Phys. 96 (1992) 1982, eq. (A7): the sinc-DVR kinetic matrix
        t = np.where(d == 0, np.pi**2 / 3, 2.0 * (-1.0) ** np.abs(d) / np.where(d == 0, 1, d) ** 2)
    h = kin / dr**2 * t + np.diag(pot.energy(r, MU))
    e, c = np.linalg.eigh(h)
    lv = solve(pot, MU, n_levels=8, grid=r)
    np.testing.assert_allclose(lv.energies, e[:8], rtol=1e-11)
    ref = c[:, :8].T / np.sqrt(dr)
    ref *= np.sign(np.sum(ref * lv.wavefunctions, axis=1))[:, None]  # phases may differ
    np.testing.assert_allclose(lv.wavefunctions, ref, atol=1e-7)
