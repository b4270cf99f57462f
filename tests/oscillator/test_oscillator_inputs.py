"""Bad input to the oscillator raises a clear WidgetkitError; units of the band table."""

import math

import numpy as np
import pytest
import scipy.constants as sc

import widgetkit as wk
from widgetkit.oscillator import (
    OscillatorError,
    band_strengths,
    einstein_A,
    harmonic,
    integrated_absorption,
    morse,
    predict_band_strengths,
    solve,
    tabulated,
)


def test_oscillator_errors_are_widgetkit_value_errors():
    assert issubclass(OscillatorError, wk.WidgetkitError) and issubclass(OscillatorError, ValueError)


@pytest.mark.parametrize(
    ("call", "words"),
    [
        (lambda: solve(harmonic(1000.0), -1.0), "reduced_mass"),
        (lambda: solve(harmonic(1000.0), 1.0, J=-1), "J must be"),
        (lambda: solve(harmonic(1000.0), 1.0, n_levels=0), "n_levels"),
        (lambda: solve("morse", 1.0), "potential must come from"),
        (lambda: solve(harmonic(1000.0), 1.0, grid=np.array([0, 1, 3, 4, 5, 6, 7, 8, 9, 10.0])),
         "equally spaced"),
        (lambda: solve(harmonic(1000.0), 1.0, J=2, rotational_constants=True), "J=0"),
        (lambda: morse(2000.0, -1.0), "omega_e_x_e"),
        (lambda: harmonic(float("nan")), "omega_e"),
        (lambda: tabulated([1, 2, 3, 4, 5], [5, 4, 3, 2, 1]), "minimum"),
        (lambda: tabulated([1, 3, 2, 4, 5], [5, 1, 0, 1, 5]), "ascending"),
    ],
)
def test_bad_input_raises_an_oscillator_error_naming_the_problem(call, words):
    with pytest.raises(OscillatorError, match=words):
        call()


def test_band_strengths_refuse_a_dipole_without_slope_and_a_bad_temperature():
    lv = solve(harmonic(1000.0), 1.0, n_levels=4)
    with pytest.raises(OscillatorError, match="fundamental"):
        band_strengths(lv, (1.0,))
    with pytest.raises(OscillatorError, match="temperature"):
        band_strengths(lv, (0.0, 1.0), temperature=-5.0)
    with pytest.raises(OscillatorError, match="dipole"):
        band_strengths(lv, "linear")


def test_einstein_a_matches_the_si_formula():
    nu, m = 2143.0, 0.1  # cm-1, D (arbitrary)
    f = sc.c * nu * 100.0
    mu = m * 1e-21 / sc.c  # 1 D = 1e-21/c C m (definition of the debye)
    # A = 16 pi^3 nu^3 |mu|^2 / (3 eps0 h c^3) (Hilborn, Am. J. Phys. 50 (1982) 982; from memory)
    ref = 16 * math.pi**3 * f**3 * mu**2 / (3 * sc.epsilon_0 * sc.h * sc.c**3)
    assert einstein_A(nu, m) == pytest.approx(ref, rel=1e-12)


def test_integrated_absorption_and_einstein_a_obey_their_relation():
    nu, m = 2143.0, 0.1
    # S = A / (8 pi c nu^2) for g'=g''=1, full lower population, no stimulated emission
    # (Hilborn 1982, from memory); c in cm/s, nu in cm-1
    ref = einstein_A(nu, m) / (8 * math.pi * sc.c * 100.0 * nu**2)
    assert integrated_absorption(nu, m) == pytest.approx(ref, rel=1e-12)


def test_band_table_has_the_documented_columns():
    t = predict_band_strengths(2169.81358, 13.28831, 6.85620864, temperature=296.0, v_max=3)
    assert list(t.columns) == ["v_upper", "v_lower", "label", "position", "moment", "population",
                               "relative_intensity", "allowed", "einstein_A",
                               "integrated_absorption", "integrated_absorption_km_mol"]
    assert t["label"].tolist() == ["1-0", "2-0", "3-0", "2-1", "3-1", "3-2"]
    row = t.iloc[0]
    # km/mol = cm/molecule x N_A x 1e-5 (unit conversion, scipy.constants)
    assert row["integrated_absorption_km_mol"] == pytest.approx(
        row["integrated_absorption"] * sc.N_A * 1e-5, rel=1e-12)
    # two-term 1-0 = we - 2wexe (Herzberg 1950)
    assert row["position"] == pytest.approx(2169.81358 - 2 * 13.28831, rel=1e-9)


def test_results_are_read_only_and_a_given_grid_array_is_left_untouched():
    grid = np.linspace(0.0, 2.4, 300)
    lv = solve(harmonic(1000.0, r_e=1.2), 1.0, n_levels=3, grid=grid)
    assert grid.flags.writeable  # the caller's array is not changed
    with pytest.raises(ValueError):
        lv.energies[0] = 0.0  # numpy refuses writes to read-only arrays
    with pytest.raises(ValueError):
        lv.wavefunctions[0, 0] = 0.0


def test_a_table_that_ends_inside_the_well_is_refused_with_advice():
    r = np.linspace(1.1, 4.0, 200)  # starts inside the classically allowed region of v >= 1
    mp = wk.oscillator.morse_parameters(2990.946, 52.8186, 0.9796)  # H35Cl-like, handbook from memory
    V = mp["D_e"] * (1 - np.exp(-mp["a"] * (r - 1.27455))) ** 2
    with pytest.raises(OscillatorError, match="extend the tabulated potential"):
        solve(tabulated(r, V), 0.9796, n_levels=4)
