"""The numerical oscillator on the harmonic potential, against closed forms."""

import math

import numpy as np
import pytest
from scipy.special import eval_hermite, factorial

import widgetkit as wk
from widgetkit.oscillator import (
    KINETIC,
    band_strengths,
    harmonic,
    harmonic_length,
    harmonic_wavefunction,
    hermite,
    solve,
    transition_moments,
    vibrational_populations,
)

OMEGA = 1000.0  # cm-1, an arbitrary oscillator for closed-form checks
MU = 1.0        # u
N = 20


@pytest.fixture(scope="module")
def levels():
    return solve(harmonic(OMEGA, r_e=1.2), MU, n_levels=N)


def test_hermite_recursion_matches_scipy_eval_hermite():
    x = np.linspace(-4.0, 4.0, 41)
    for n in range(0, 16):
        # reference library: scipy.special.eval_hermite
        np.testing.assert_allclose(hermite(n, x), eval_hermite(n, x), rtol=1e-12, atol=1e-12)


def test_hermite_values_match_the_computed_values():
    assert hermite(5, 0.5) == pytest.approx(41.0, rel=1e-14)  # H5(0.5) = 41 (scipy.special.eval_hermite)
    assert hermite(6, 1.0) == pytest.approx(184.0, rel=1e-14)  # H6(1) = 184 (scipy.special.eval_hermite)


def test_harmonic_wavefunctions_are_the_normalised_hermite_functions():
    q = np.linspace(-8, 8, 801)
    for v in range(8):
        # closed form (2^v v! sqrt(pi))^-1/2 H_v(q) exp(-q^2/2), H_v from scipy.special.eval_hermite
        ref = eval_hermite(v, q) * np.exp(-q * q / 2) / math.sqrt(2.0**v * factorial(v) * math.sqrt(math.pi))
        np.testing.assert_allclose(harmonic_wavefunction(v, q), ref, atol=1e-12)


def test_harmonic_levels_are_omega_times_v_plus_half(levels):
    v = np.arange(N)
    # closed form E_v = omega (v + 1/2) of the harmonic oscillator (common practice)
    np.testing.assert_allclose(levels.energies, OMEGA * (v + 0.5), rtol=1e-10)
    assert levels.convergence < 1e-6


def test_dvr_wavefunctions_match_the_hermite_functions(levels):
    L = harmonic_length(OMEGA, MU)
    q = (levels.r - 1.2) / L
    for v in range(N):
        ref = harmonic_wavefunction(v, q) / math.sqrt(L)  # normalised in r (Å^-1/2)
        np.testing.assert_allclose(levels.wavefunctions[v], ref, atol=1e-8 / math.sqrt(L))


def test_wavefunctions_are_normalised_and_orthogonal(levels):
    overlap = levels.matrix(np.ones_like)
    np.testing.assert_allclose(overlap, np.eye(N), atol=1e-12)  # orthonormality (common practice)


def test_q_matrix_elements_are_sqrt_v_plus_one_over_two_and_all_others_vanish(levels):
    s = 1.0 / harmonic_length(OMEGA, MU)  # q = (r - r_e) / L
    q = transition_moments(levels, (0.0, s))
    v = np.arange(N - 1)
    ref = np.sqrt((v + 1) / 2.0)  # harmonic oscillator (common practice): <v|q|v+1> = sqrt((v+1)/2)
    np.testing.assert_allclose(np.diag(q, 1), ref, rtol=1e-10)
    np.testing.assert_allclose(np.diag(q, -1), ref, rtol=1e-10)
    off = q.copy()
    off[v, v + 1] = 0.0
    off[v + 1, v] = 0.0
    assert np.max(np.abs(off)) < 1e-10 * ref[0]  # all others zero (harmonic selection rule, common practice)


def test_length_scale_uses_the_codata_kinetic_constant():
    # r_e^2 = 16.857629 / (mu B_e): h/(8 pi^2 c u) in cm-1 Å^2 (computed, scipy.constants)
    assert KINETIC == pytest.approx(16.857629, rel=1e-7)


def test_linear_dipole_allows_only_delta_v_one(levels):
    table = band_strengths(levels, (0.0, 1.0))
    dv = table["v_upper"] - table["v_lower"]
    assert table["allowed"].to_numpy().tolist() == (dv == 1).to_numpy().tolist()  # harmonic rule
    ones = table[dv == 1]
    # |<v+1|q|v>|^2 = (v+1)/2 and equal positions: relative intensity v+1 (closed form above)
    np.testing.assert_allclose(ones["relative_intensity"], ones["v_upper"], rtol=1e-9)


def test_quadratic_dipole_makes_the_first_overtone_allowed_with_the_closed_form_moment(levels):
    L = harmonic_length(OMEGA, MU)
    c2 = 0.3  # D/Å^2, an arbitrary electrical anharmonicity
    m = transition_moments(levels, (0.0, 1.0, c2))
    # <0|q^2|2> = sqrt(2)/2 for the harmonic oscillator (ladder operators; common practice)
    assert m[2, 0] == pytest.approx(c2 * L * L * math.sqrt(2.0) / 2.0, rel=1e-9)
    table = band_strengths(levels, (0.0, 1.0, c2))
    allowed = set(table.loc[table["allowed"], "label"])
    assert "2-0" in allowed and "3-0" not in allowed  # a quadratic term reaches Δv = ±2 only


def test_vibrational_partition_function_is_the_geometric_series(levels):
    t = 2000.0
    p, q = vibrational_populations(levels.energies, t)
    x = math.exp(-wk.oscillator.C2 * OMEGA / t)
    # Q_vib = (1 - x^N)/(1 - x) for N equally spaced levels (closed form)
    assert q == pytest.approx((1 - x**N) / (1 - x), rel=1e-12)
    assert p[1] / p[0] == pytest.approx(x, rel=1e-12)
    assert wk.oscillator.C2 == pytest.approx(1.4387769, rel=1e-7)  # c2 = 1.4387769 cm K (CODATA 2018)


def test_hot_bands_get_their_boltzmann_weight(levels):
    t = 1500.0
    cold = band_strengths(levels, (0.0, 1.0))
    hot = band_strengths(levels, (0.0, 1.0), temperature=t)
    x = math.exp(-wk.oscillator.C2 * OMEGA / t)
    r_cold = cold.set_index("label").loc["2-1", "relative_intensity"]
    r_hot = hot.set_index("label").loc["2-1", "relative_intensity"]
    # equal positions, so the stimulated-emission factors cancel; populations p1/p0 = x
    assert r_hot / r_cold == pytest.approx(x, rel=1e-9)


def test_explicit_grid_is_used_as_given_and_agrees_with_the_automatic_one(levels):
    g = solve(harmonic(OMEGA, r_e=1.2), MU, n_levels=5, grid=(levels.r[0], levels.r[-1], 400))
    assert g.r.size == 400 and math.isnan(g.convergence)
    np.testing.assert_allclose(g.energies, levels.energies[:5], rtol=1e-10)  # self-consistency
