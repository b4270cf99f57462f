"""What a joint isotopologue fit was made of is a typed field of the assignment
(``BandAssignment.joint``), recorded by the session and read back by ``joint_facts`` without
parsing any message text. The spectrum comes from our own simulator (handbook constants of
H-35Cl, Huber and Herzberg 1979 from memory, scaled to the natural isotopologues):
self-consistency use only."""

import dataclasses

import pytest

import widgetkit as wk
from widgetkit.levels.joint import JointSummary, TooFewIsotopologues, fit_joint
from widgetkit.session.joint_view import joint_facts

HCL = wk.Diatomic("H", "Cl")


def _fitted_hcl() -> wk.Session:
    """HCl 1-0 with both chlorine isotopologues (handbook constants of the simulator), peaks
    and Lorentzian lines fitted, not assigned."""
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items()
         if k not in ("r_e", "omega_e_y_e", "gamma_e")}
    sp = wk.simulate.rovibrational(HCL, c, x_range=(2600, 3150), step=0.02, seed=5,
                                   noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    return s


@pytest.fixture(scope="module")
def joint_session():
    s = _fitted_hcl()
    s.assign_band("HCl", joint=True)
    return s


def test_the_joint_fit_is_a_typed_field_of_the_assignment(joint_session):
    j = joint_session.assignment.joint
    assert isinstance(j, JointSummary)
    assert j.isotopologues == ("1H-35Cl", "1H-37Cl") and j.reference == "1H-35Cl"
    assert j.centrifugal in ("separate", "shared", "none")
    used = joint_session.assignment.assignments
    n_used = int((used["isotopologue"].notna() & ~used["outlier"] & ~used["blended"]).sum())
    assert j.n_lines == n_used
    assert j.scatter_kind == "Birge ratio" and 0 < j.scatter < 3
    assert JointSummary.from_dict(j.to_dict()) == j


def test_joint_facts_come_from_the_field_not_from_the_messages(joint_session):
    a = joint_session.assignment
    facts = joint_facts(a)
    silent = dataclasses.replace(a, messages=[])  # no message left to parse
    assert joint_facts(silent) == facts
    assert facts.isotopologues == a.joint.isotopologues and facts.n_lines == a.joint.n_lines
    assert facts.scatter == f"Birge ratio {a.joint.scatter:.3g}"


def test_a_saved_session_keeps_the_field_and_verifies(joint_session, tmp_path):
    path = tmp_path / "joint.session.json"
    joint_session.save(path)
    again = wk.Session.load(path)
    assert again.assignment.restored
    assert joint_facts(again.assignment) == joint_facts(joint_session.assignment)
    assert again.verify().ok


def test_a_separate_assignment_has_no_joint_field():
    s = _fitted_hcl()
    s.assign_band("HCl")
    assert s.assignment.joint is None and joint_facts(s.assignment) is None


def test_one_isotopologue_raises_its_own_error_type():
    with pytest.raises(TooFewIsotopologues):
        fit_joint(["a", "a", "a"], [1, 2, 3], [0, 1, 2], [1.0, 2.0, 3.0], None,
                  rho={"a": 1.0}, masses={"a": 1.0}, reference="a")
