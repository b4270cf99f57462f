"""The methods say, per constant method, how the constants were obtained: the joint
isotopologue fit (which relations, which isotopologues) and the band model (instrument,
resolution, what was fixed or held); a constant fixed by the user never reads as a measurement.

Spectra are simulated by our own simulator from the handbook constants in
``widgetkit.simulate.HANDBOOK`` (invented scenario); every check reads the generated Markdown
back and compares it with what the session recorded (self-consistency).
"""

from __future__ import annotations

import pytest

import widgetkit as wk
from widgetkit.report import collect, render_markdown

from .mdtables import md_section, md_tables

HCL = wk.Diatomic("H", "Cl")
CO = wk.Diatomic("C", "O")


def _hcl_session(joint: bool) -> wk.Session:
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items()
         if k not in ("r_e", "omega_e_y_e", "gamma_e")}
    sp = wk.simulate.rovibrational(HCL, c, x_range=(2600, 3150), step=0.02, seed=5,
                                   noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    s.assign_band(HCL, temperature=296.0, joint=joint)
    return s


@pytest.fixture(scope="module")
def joint_md():
    s = _hcl_session(joint=True)
    return s, render_markdown(collect(s))


@pytest.fixture(scope="module")
def band_md():
    sp = wk.simulate.rovibrational(CO, wk.simulate.HANDBOOK["12C-16O"], temperature=296.0,
                                   resolution=4.0, step=1.0, noise=0.002, seed=4)
    s = wk.Session(sp)
    s.fit_band_model("CO", resolution=4.0, instrument="triangular",
                     fix={"temperature": 296.0})
    return s, render_markdown(collect(s))


def test_the_joint_fit_names_its_relations_isotopologues_and_reference(joint_md):
    s, md = joint_md
    text = md_section(md, "Methods")
    assert "one joint fit of all their assigned lines" in text
    assert "H³⁵Cl and H³⁷Cl" in text and "the reference H³⁵Cl" in text
    # the isotope relations of the Dunham expansion (Dunham 1932; Herzberg 1950, ch. III)
    for relation in ("ωe × ρ,", "Be × ρ²", "αe × ρ³", "D × ρ⁴", "ρ = √(μ_ref/μ)"):
        assert relation in text
    n = int(s.assignments["label"].notna().sum())
    assert f"({n} lines)" in text or "Free for the joint fit" in text
    assert "Free for the joint fit" in text and "Free for mass-independent" not in text
    rows = md_tables(md)["Constants"]
    mass_independent = [r["name"] for r in rows if r["isotopologue"] == "mass-independent"]
    assert {"U_10", "U_01", "r_e"} <= set(mass_independent)


def test_without_the_joint_fit_the_methods_do_not_claim_one():
    text = md_section(render_markdown(collect(_hcl_session(joint=False))), "Methods")
    assert "joint fit" not in text and "ρ = √" not in text


def test_the_band_model_names_instrument_resolution_and_what_was_fixed(band_md):
    s, md = band_md
    text = md_section(md, "Methods")
    assert "Instrument: triangular apodisation (sinc² instrument function), " \
           "resolution 4 cm⁻¹ (given)." in text
    assert "Fixed by the user: temperature = 296 K." in text
    held = s.band_model.parameters
    for name in held[held["status"] == "held"]["name"]:
        assert f"{name} = " in text.split("Held by the fit")[1]
    assert "T_rot is therefore no measurement" in text


def test_a_fixed_temperature_is_no_measurement_in_the_constants_table(band_md):
    s, md = band_md
    t_rot = [r for r in md_tables(md)["Constants"] if r["name"] == "T_rot"]
    assert len(t_rot) == 1
    assert t_rot[0]["value"] == "296" and t_rot[0]["note"] == "fixed (not fitted)"
    fitted = [r for r in md_tables(md)["Constants"] if r["name"] == "B_lower"]
    assert all("(" in r["value"] and r["note"] == "" for r in fitted)  # value(uncertainty)


def test_the_latex_report_writes_the_relations_without_lost_characters(joint_md):
    from widgetkit.report import render_latex

    tex = render_latex(collect(joint_md[0]))
    start = tex.index("one joint fit")
    part = tex[start:tex.index("Joint fit:", start)]
    assert "?" not in part and r"\rho" in part and r"\surd" in part
