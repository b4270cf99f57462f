"""Band-model steps recorded by an earlier version replay and verify.

The files (tests/data/sessions/README.md; our simulator's bands, self-consistency) were
written by the code of commit 4a2c48a, before three changes to the band model: the P–R check
(``check_contour``), the second estimates of implausible secondary constants
(``second_look``) and the Fourier-space share of a Gaussian instrument wider than eight
data steps. A record without the two options replays with them off, and data sampled as these
are (2–4 points per resolution) are computed as before, so every step verifies to the step
kind's tolerance; one of them held ω_e x_e as implausible, where the second estimate would
change the result.
"""

from pathlib import Path

import pytest

import widgetkit as wk

DATA = Path(__file__).resolve().parents[1] / "data" / "sessions"


@pytest.mark.parametrize("name", ["band_models_4a2c48a_co.session.json",
                                  "band_models_4a2c48a_hcl.session.json"])
def test_a_band_model_record_from_before_the_new_options_verifies(name):
    s = wk.Session.load(DATA / name)
    steps = [st for st in s.history if st.kind == "fit_band_model"]
    assert len(steps) >= 2
    assert all("check_contour" not in st.params and "second_look" not in st.params
               for st in steps)
    report = s.verify()
    assert report.ok, report.mismatches


def test_the_implausible_hold_of_the_older_record_is_replayed_as_it_was_made():
    # step 3 held ω_e x_e as implausible at its first estimate; with the second estimate the
    # same fit holds it elsewhere (so the record would not verify if the option were on)
    s = wk.Session.load(DATA / "band_models_4a2c48a_co.session.json")
    step = s.history[3]
    assert any("implausible" in m for m in step.result["messages"])
    recorded = {r["name"]: r["value"] for r in _rows(step.result["parameters"])}
    again = wk.bandmodel.fit_spectrum(s.state_at(0).spectrum, "CO",
                                      **{k: v for k, v in step.params.items() if k != "molecule"},
                                      second_look=True)
    assert abs(again.value("omega_e_x_e") - recorded["omega_e_x_e"]) > 0.5


def _rows(table: dict) -> list[dict]:
    cols = list(table)
    return [{c: table[c][i] for c in cols} for i in range(len(table[cols[0]]))]
