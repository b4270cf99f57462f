"""wk.Linear: atoms along the axis, isotopologues, centre of symmetry and nuclear-spin weights."""

import periodictable
import pytest

import widgetkit as wk
from widgetkit.levels import Linear, moment_of_inertia, rotational_constant
from widgetkit.levels.spin import parity


def _even_odd(iso, inversion="g", component="e"):
    """Spin weights of the even-J and odd-J levels of a vibronic Σ state."""
    return (iso.spin_weight(parity(0, component), inversion),
            iso.spin_weight(parity(1, component), inversion))


def test_carbon_dioxide_isotopologues_come_from_periodictable_and_mirror_images_merge():
    co2 = wk.Linear("OCO")
    names = [i.name for i in co2.isotopologues]
    assert names == ["16O-12C-16O", "16O-13C-16O"]  # 17O, 18O < 1 % (periodictable)
    want = (periodictable.O[16].abundance / 100) ** 2 * periodictable.C[12].abundance / 100
    assert co2.main.abundance == pytest.approx(want, rel=1e-12)  # periodictable abundances
    more = Linear("OCO", min_abundance=1e-3)
    mixed = more.isotopologue("16O-12C-18O")
    # 16O12C18O and 18O12C16O are one molecule: twice the product (periodictable abundances)
    want = 2 * periodictable.O[16].abundance * periodictable.O[18].abundance \
        * periodictable.C[12].abundance / 1e6
    assert mixed.abundance == pytest.approx(want, rel=1e-12)
    assert not mixed.centrosymmetric and co2.main.centrosymmetric


def test_atoms_can_be_named_as_isotopes_and_the_order_along_the_axis_is_kept():
    nno = Linear("15N14N16O")
    assert [i.name for i in nno.isotopologues] == ["15N-14N-16O"]
    assert Linear(["H", "C", "N"]).main.name == "1H-12C-14N"
    assert Linear("N2").atoms == ("N", "N")


def test_a_formula_that_is_not_in_axis_order_is_refused_with_an_example():
    with pytest.raises(wk.AssignmentError, match="OCO"):
        Linear("CO2")
    with pytest.raises(wk.AssignmentError, match="at least two atoms"):
        Linear("O")
    with pytest.raises(ValueError, match="nuclear spin of 2[0-9]Xx|unknown"):
        Linear("XxO")


def test_homonuclear_boson_pairs_give_even_to_odd_weights_of_I_plus_1_to_I():
    # closed form N_s : N_a = (I+1) : I for one pair of nuclei of spin I; bosons put the
    # symmetric spin functions on even J of a Σg+ state (Herzberg, Spectra of Diatomic Molecules)
    n2 = Linear("N2").main  # 14N: I = 1 (Stone 2005, from memory)
    assert _even_odd(n2) == (6, 3)  # 2:1, the 14N2 alternation (Herzberg 1950)
    d2 = Linear("DD").main  # 2H: I = 1
    assert _even_odd(d2)[0] / _even_odd(d2)[1] == pytest.approx((1 + 1) / 1)


def test_homonuclear_fermion_pairs_give_even_to_odd_weights_of_I_to_I_plus_1():
    h2 = Linear("HH").main  # I = 1/2: ortho:para 3:1 (Herzberg 1950)
    assert _even_odd(h2) == (1, 3)
    cl2 = Linear("35Cl35Cl").main  # I = 3/2: even:odd = 3/2 : 5/2 (closed form I:(I+1))
    e, o = _even_odd(cl2)
    assert e / o == pytest.approx(1.5 / 2.5)
    n15 = Linear("15N15N").main  # I = 1/2
    assert _even_odd(n15) == (1, 3)


def test_zero_spin_ends_remove_half_the_levels():
    co2 = Linear("OCO").main  # 16O: I = 0
    assert _even_odd(co2, "g") == (1, 0)  # ground state Σg+: only even J (Herzberg 1945)
    assert _even_odd(co2, "u") == (0, 1)  # 00^01 is Σu+: only odd J
    c13 = Linear("OCO").isotopologue("16O-13C-16O")
    assert _even_odd(c13, "g")[1] == 0  # a central 13C does not change the exchange symmetry


def test_oxygen_has_a_sigma_minus_ground_state_with_only_odd_N():
    o2 = Linear("OO")
    assert o2.reflection == "-" and o2.electronic_state == "3Σg⁻"  # Huber & Herzberg 1979
    # a Σ- state has only f levels; with I = 0 only odd N exist (fact of the trade, Herzberg 1950)
    assert _even_odd(o2.main, "g", "f") == (0, 1)


def test_acetylene_has_odd_to_even_three_to_one():
    hcch = Linear("HCCH").main
    e, o = _even_odd(hcch)
    assert o / e == 3  # 1H2 pair with a 12C2 pair: odd:even = 3:1 (Herzberg 1945)


def test_molecules_without_a_centre_of_symmetry_have_no_alternation():
    for atoms in ("NNO", "HCN", "HCCD"):
        iso = Linear(atoms).main
        assert not iso.centrosymmetric
        e, o = _even_odd(iso, None)
        assert e == o > 0


def test_linear_molecules_round_trip_through_their_json_specification():
    m = Linear("HCCH", min_abundance=0.02)
    assert Linear.from_dict(m.to_dict()) == m
    assert m.to_dict()["kind"] == "linear"


def test_rotational_constant_of_a_diatomic_from_its_bond_length():
    n2 = Linear("N2").main
    I = moment_of_inertia(n2, [1.09768])  # r_e of N2, Huber & Herzberg 1979 (from memory)
    assert rotational_constant(I) == pytest.approx(1.99824, rel=2e-4)  # B_e, Huber & Herzberg
    # the reduced-mass form I = μ r² of a diatomic (Herzberg 1950)
    assert I == pytest.approx(n2.reduced_mass * 1.09768**2, rel=1e-12)


def test_bond_lengths_must_match_the_atoms():
    with pytest.raises(wk.AssignmentError, match="2 positive bond lengths"):
        moment_of_inertia(Linear("OCO").main, [1.16])
