"""The methods paragraphs and the flags: a referee can read how every number was obtained.

Sessions are the demo spectrum (invented scenario, simulated data); each check compares what
the report says with what the session recorded or holds (self-consistency), never with
invented reference numbers.
"""

from __future__ import annotations

import types

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.report import collect, collect_flags, describe_methods, render_markdown
from widgetkit.report.flags import assignment_flags, bound_parameters, parameter_label

from .mdtables import md_section, md_tables


def test_methods_say_how_the_line_fit_errors_were_obtained(session):
    text = " ".join(describe_methods(session))
    fit = session.line_fit
    assert "Gaussian profiles" in text and "on a linear baseline" in text
    assert "not weighted" in text                              # no weights were given
    assert "scaled by the reduced chi-square" in text
    # the numbers quoted are the fit's own
    assert f"ν = {fit.result.nfree} degrees of freedom" in text
    n_free = sum(p.vary and p.expr is None for p in fit.params.values())
    assert f"{n_free} free parameters" in text
    assert "Fixed: none. Tied or bounded by hand: none." in text


def test_fixed_and_tied_parameters_are_named_with_their_values():
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.crop(2890.0, 2950.0)
    s.to_absorbance()
    s.find_peaks(min_snr=20)
    a, b, c = (int(i) for i in s.peaks["peak_id"].iloc[:3])
    s.fit_lines(shape="voigt", constraints={f"l{a}_gamma": 0.12, f"l{b}_gamma": f"l{c}_gamma",
                                            f"l{c}_sigma": {"min": 0.05, "max": 0.5}})
    text = " ".join(describe_methods(s))
    assert f"Fixed: line {a} Lorentzian γ (HWHM) at 0.12." in text
    assert f"line {b} Lorentzian γ (HWHM) = line {c} Lorentzian γ (HWHM)" in text
    assert f"line {c} Gaussian σ bounded to [0.05, 0.5]" in text
    fit = s.line_fit
    n_free = sum(p.vary and p.expr is None for p in fit.params.values())
    assert f"{n_free} free parameters" in text and f"ν = {fit.result.nfree} degrees" in text


def test_the_report_of_a_reopened_session_equals_that_of_the_live_one(session, tmp_path):
    # the reopened session holds results rebuilt from the record; the report must not differ
    # (and must not refit: it reads only what the record holds)
    session.save(tmp_path / "s.json")
    reopened = wk.Session.load(tmp_path / "s.json")
    live, again = collect(session), collect(reopened)
    assert render_markdown(again).split("\n", 3)[3] == render_markdown(live).split("\n", 3)[3]
    assert getattr(reopened.line_fit, "restored", False)

def test_methods_name_the_free_constants_and_the_weights_of_the_assignment(session):
    text = " ".join(describe_methods(session))
    free = session.assignment.covariance
    for iso, cov in free.items():
        shown = wk.formatting.display_isotopologue(iso)
        assert f"Free for {shown}: " in text
        for name in cov.columns:
            assert f"({name})" in text                          # each fitted constant is named
    assert "w = 1/σ²" in text and "max(1, χ²/ν)" in text
    assert "more than 4 σ from the fit are flagged as outliers" in text   # the function default


def test_the_reported_chi_square_is_that_of_the_assignment_table(session):
    text = " ".join(describe_methods(session))
    a = session.assignments
    for iso in ("1H-35Cl", "1H-37Cl"):
        sel = a[(a["isotopologue"] == iso) & (a["weight"] > 0)]
        chi2 = float(np.sum(sel["weight"] * sel["obs_minus_calc"] ** 2)) / (len(sel) - 5)
        assert f"{len(sel)} lines, χ²/ν = {chi2:.3g}" in text


def test_steps_are_numbered_from_zero_in_the_methods(session):
    text = describe_methods(session)[0]
    assert "(step 0)" in text and "Step 1 kept 2690–3070 cm⁻¹." in text
    assert "Step 3 subtracted an ALS (asymmetric least squares) baseline" in text
    assert "Line fit (step 5)" in " ".join(describe_methods(session))
    assert session.history[5].kind == "fit_lines"


def test_locks_and_manual_edits_are_described(tmp_path):
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.crop(2800.0, 2950.0)
    s.to_absorbance()
    s.find_peaks(min_snr=20)
    pid = s.add_peak(2900.0, snap=False)
    s.remove_peak(pid)
    s.fit_lines(shape="gaussian")
    s.assign_band(wk.Diatomic("H", "Cl"))
    lid = int(s.lines["line_id"].iloc[0])
    s.set_assignment(lid, label=s.assignments.set_index("line_id").loc[lid, "label"],
                     isotopologue="1H-35Cl")
    text = " ".join(describe_methods(s))
    assert f"added peak {pid} by hand at 2900 cm⁻¹" in text and f"removed peak {pid}" in text
    assert f"locked by hand line {lid} as" in text and "of H³⁵Cl" in text
    assert "1 line locked by hand" in text


def test_a_width_on_its_bound_is_flagged_and_never_shown_as_value_and_error():
    # a weak, narrow band at high resolution: some Voigt widths end on their lower bound
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="voigt", baseline="linear")
    bounds = bound_parameters(s.line_fit)
    assert bounds, "the demo fit was expected to hold a width on its bound"
    name, lid, col, value, err = bounds[0]
    par = s.line_fit.params[name]
    assert value == par.value and err == pytest.approx(par.stderr, rel=1e-12)  # the table's
    assert value == pytest.approx(par.min, rel=1e-6)         # and it is the parameter's minimum
    assert name == f"l{lid}_{col}"
    flags = collect_flags(s)
    assert (lid, col) in flags.at_bound
    assert any(f.startswith(f"Line {lid} ") and "ended on a bound" in f
               and "not meaningful" in f for f in flags.items)
    d = collect(s)
    row = next(r for r in md_tables(render_markdown(d))["Fitted lines"] if r["line"] == str(lid))
    cell = row["Gaussian σ (cm⁻¹)" if col == "sigma" else "Lorentzian γ (HWHM) (cm⁻¹)"]
    assert cell.endswith("(at bound)") and "(" not in cell.replace("(at bound)", "")
    assert not any("ended at its bound" in f for f in flags.items)   # said once, in words


def test_parameter_names_are_written_as_the_trade_says_them():
    assert parameter_label("l12_sigma") == "line 12 Gaussian σ"
    assert parameter_label("l3_gamma") == "line 3 Lorentzian γ (HWHM)"
    assert parameter_label("shared_gamma") == "shared Lorentzian γ (HWHM)"
    assert parameter_label("hot_sigma") == "width group hot Gaussian σ"
    assert parameter_label("bl_c0") == "bl_c0"


def test_a_doubtful_assignment_and_its_outliers_are_flagged():
    a = pd.DataFrame({"line_id": [1, 2, 3], "label": ["R(0)", "P(1)", None],
                      "isotopologue": ["1H-35Cl", "1H-35Cl", None], "outlier": [False, True, False],
                      "obs_minus_calc": [0.001, 0.2345, np.nan], "locked": [False, False, False]})
    asg = types.SimpleNamespace(status="doubtful", reasons=["only 2 of 3 lines fit 1H-35Cl"],
                                assignments=a, messages=["DOUBTFUL: an older message"])
    items = assignment_flags(asg)
    assert items[0] == "The assignment is DOUBTFUL: only 2 of 3 lines fit H³⁵Cl."
    assert any("Line 2 (P(1) of H³⁵Cl) is an outlier, obs − calc = 0.23 cm⁻¹" in i for i in items)
    assert "1 line not assigned (line 3)." in items
    assert not any("older message" in i for i in items)     # the status decides, not the text
    ok = types.SimpleNamespace(status="ok", reasons=[], assignments=a.iloc[:1], messages=[])
    assert assignment_flags(ok) == []
    # without a status, the assignment's own DOUBTFUL message is the flag
    legacy = types.SimpleNamespace(assignments=a.iloc[:1], messages=["DOUBTFUL: few lines fit"])
    assert assignment_flags(legacy) == ["DOUBTFUL: few lines fit"]


def test_a_band_model_fit_is_described_with_its_free_and_fixed_constants(session, monkeypatch):
    consts = session.constants.assign(method="line positions")
    extra = pd.DataFrame({"isotopologue": ["1H-35Cl"] * 3, "name": ["band_origin", "B_lower", "T"],
                          "value": [2886.0, 10.44, 296.0], "stderr": [0.001, 0.0001, np.nan],
                          "unit": ["cm-1", "cm-1", "K"], "method": ["band model"] * 3})
    table = pd.concat([consts, extra], ignore_index=True)
    monkeypatch.setattr(type(session), "constants", property(lambda self: table.copy()))
    text = describe_methods(session)[-1]
    assert text.startswith("Band model.") and "Free: band_origin, B_lower." in text
    d = collect(session)
    assert list(d.constants["method"].unique()) == ["line positions", "band model"]
    rows = md_tables(render_markdown(d))["Constants"]
    assert [r["method"] for r in rows].count("band model") == 3 and rows[-1]["value"] == "296"


def test_the_flags_section_says_none_when_there_is_nothing_to_flag(session):
    d = collect(session)
    empty = type(d)(**{**d.__dict__, "flags": []})
    assert "None: no parameter on a bound" in md_section(render_markdown(empty), "Flags")


def test_a_progression_is_described_with_its_own_model_and_free_constants():
    # demo data from our simulator: band centres of the 1-0, 2-0 and 3-0 bands of H-35Cl
    hcl = wk.Diatomic("1H", "35Cl")
    sp = wk.simulate.vibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"], rotational=False, seed=1,
                                 noise=1e-5, lorentz_hwhm=2.0, resolution=2.0,
                                 x_range=(2500, 8700), step=0.5)
    s = wk.Session(sp)
    s.find_peaks(min_snr=10.0)
    s.fit_lines(shape="lorentzian")
    s.assign_band(hcl, kind="progression")
    text = describe_methods(s)[-1]
    assert text.startswith("Assignment (step 3). The band centres were assigned")
    free = list(s.assignment.covariance.columns)
    assert "omega_e" in free
    for name in free:
        assert f"({name})" in text
    assert "Lines more than" not in text           # no outlier rule is claimed for this kind
