"""Term values and line positions (formulas: Herzberg 1950; constants: Huber & Herzberg 1979, from memory)."""

import numpy as np
import pytest

from widgetkit.levels import line_position, rot_constant, rot_term, vib_term

from .synth import CO, HCL


def test_two_term_fundamental_is_omega_e_minus_two_omega_e_x_e():
    g = vib_term([0, 1], 2990.946, 52.8186)
    assert g[1] - g[0] == pytest.approx(2885.3088, abs=1e-4)  # computed from the handbook constants


def test_co_fundamental_with_omega_e_y_e():
    g = vib_term([0, 1], CO["omega_e"], CO["omega_e_x_e"], CO["omega_e_y_e"])
    assert g[1] - g[0] == pytest.approx(2143.2711, abs=1e-4)  # computed from the handbook constants


def test_v_prime_zero_overtones_follow_the_closed_form():
    we, wx = 2990.946, 52.8186
    g = vib_term(np.arange(4), we, wx)
    for v in (1, 2, 3):  # v'-0 = v'ωe − v'(v'+1)ωexe (two-term G(v), Herzberg 1950)
        assert g[v] - g[0] == pytest.approx(v * we - v * (v + 1) * wx, rel=1e-14)


def test_rotational_constants_of_v0_and_v1():
    b = rot_constant([0, 1], HCL["B_e"], HCL["alpha_e"])
    assert b == pytest.approx([10.43982, 10.13264], abs=1e-5)  # computed from the handbook constants


def test_line_position_is_the_difference_of_term_values():
    nu = line_position(1, 1, 0, 0, HCL)
    g = vib_term([0, 1], HCL["omega_e"], HCL["omega_e_x_e"], HCL["omega_e_y_e"])
    b1 = rot_constant(1, HCL["B_e"], HCL["alpha_e"])
    assert nu == pytest.approx(g[1] - g[0] + rot_term(1, b1, HCL["D_e"]), rel=1e-14)


def test_simulated_hcl_lines_are_close_to_the_remembered_ones():
    # R(0) 2906.25 and P(1) 2865.10 (HITRAN-type line list values, from memory); without γe the
    # model is off by a few hundredths at low J (the γe term is missing), so 0.1 cm-1 here
    assert line_position(1, 1, 0, 0, HCL) == pytest.approx(2906.25, abs=0.1)
    assert line_position(1, 0, 0, 1, HCL) == pytest.approx(2865.10, abs=0.1)
