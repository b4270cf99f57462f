"""Property checks of the automatic grid over a range of oscillators (hypothesis)."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from widgetkit.oscillator import harmonic, morse, solve

omegas = st.floats(min_value=100.0, max_value=4000.0)
masses = st.floats(min_value=0.5, max_value=30.0)


@settings(max_examples=8, deadline=None)
@given(omega=omegas, mu=masses)
def test_harmonic_levels_are_exact_for_any_frequency_and_mass(omega, mu):
    lv = solve(harmonic(omega, r_e=1.5), mu, n_levels=6)
    # closed form omega (v + 1/2) (common practice)
    np.testing.assert_allclose(lv.energies, omega * (np.arange(6) + 0.5), rtol=1e-9)


@settings(max_examples=8, deadline=None)
@given(omega=omegas, ratio=st.floats(min_value=0.002, max_value=0.04), mu=masses)
def test_lowest_morse_levels_follow_the_closed_form_for_any_constants(omega, ratio, mu):
    wx = ratio * omega  # at least 12 bound levels
    lv = solve(morse(omega, wx, r_e=1.2), mu, n_levels=5)
    h = np.arange(5) + 0.5
    # Morse, Phys. Rev. 34 (1929) 57: G(v) = we (v+1/2) - wexe (v+1/2)^2
    np.testing.assert_allclose(lv.energies, omega * h - wx * h * h, rtol=1e-9)
