"""A constant that was not fitted says so in BandFit.constants itself (no session needed):
stderr NaN and a note, as the session's constants table shows it; the session's record keeps
stderr 0 so that files saved before verify unchanged. Bands from our own simulator
(self-consistency)."""

import math

import pandas as pd

import widgetkit as wk
from widgetkit.bandmodel import fit
from widgetkit.bandmodel.result import FIXED_NOTE, HELD_NOTE, mark_not_fitted, unmarked

from .bands import CO

CO_MOL = wk.Diatomic("C", "O")


def test_a_fixed_temperature_reads_fixed_not_exact(co_4cm):
    res = fit(co_4cm.x, co_4cm.y, CO_MOL, y_kind="absorbance", resolution=4.0,
              fix={"temperature": 296.0})
    c = res.constants[res.constants["isotopologue"] == "12C-16O"].set_index("name")
    assert c.loc["T_rot", "value"] == 296.0
    assert math.isnan(c.loc["T_rot", "stderr"]) and c.loc["T_rot", "note"] == FIXED_NOTE
    v, e = res.constant("T_rot")
    assert v == 296.0 and math.isnan(e)
    # fitted constants keep their errors and an empty note
    assert c.loc["B_lower", "stderr"] > 0 and c.loc["B_lower", "note"] == ""
    # the parameter table marks it by its status, as before
    p = res.parameters.set_index("name")
    assert p.loc["temperature", "status"] == "fixed"


def test_b_with_b_e_and_alpha_e_fixed_is_fixed_too(co_4cm):
    res = fit(co_4cm.x, co_4cm.y, CO_MOL, y_kind="absorbance", resolution=4.0,
              fix={"B_e": CO["B_e"], "alpha_e": CO["alpha_e"]})
    c = res.constants[res.constants["isotopologue"] == "12C-16O"].set_index("name")
    for name in ("B_lower", "B_upper", "B_e", "alpha_e"):
        assert math.isnan(c.loc[name, "stderr"]) and c.loc[name, "note"] == FIXED_NOTE, name
    assert c.loc["T_rot", "stderr"] > 0 and c.loc["T_rot", "note"] == ""


def test_the_record_form_keeps_zero_and_the_session_view_marks_it(co_4cm):
    s = wk.Session(co_4cm)
    s.fit_band_model("CO", resolution=4.0, fix={"temperature": 296.0})
    rec = s.history[-1].result["constants"]
    assert "note" not in rec and 0.0 in rec["stderr"]
    t = s.constants[s.constants["name"] == "T_rot"].iloc[0]
    assert math.isnan(t["stderr"]) and t["note"] == FIXED_NOTE
    assert math.isnan(s.band_model.constant("T_rot")[1])
    back = unmarked(s.band_model.constants)
    assert "note" not in back and (back["stderr"] == 0).sum() >= 1


def test_marking_follows_the_parameter_status_and_is_idempotent():
    # invented tables (self-consistency): T held by a fit, B fitted, D from fixed parameters only
    consts = pd.DataFrame({"isotopologue": ["X"] * 3, "name": ["T_rot", "B_lower", "D_lower"],
                           "value": [300.0, 2.0, 1e-6], "stderr": [0.0, 0.01, 0.0],
                           "unit": ["K", "cm-1", "cm-1"], "method": ["band model"] * 3})
    params = pd.DataFrame({"name": ["temperature", "B_e"], "status": ["held", "free"]})
    once = mark_not_fitted(consts, params)
    assert once["note"].tolist() == [HELD_NOTE, "", FIXED_NOTE]
    assert math.isnan(once["stderr"].iloc[0]) and once["stderr"].iloc[1] == 0.01
    twice = mark_not_fitted(once, params)
    assert twice["note"].tolist() == once["note"].tolist()
    assert unmarked(twice)["stderr"].tolist() == [0.0, 0.01, 0.0]
