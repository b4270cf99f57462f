"""Step summaries in correct English, and files saved with the earlier wording still verify.

The demo data are invented (self-consistency only); the saved file
tests/data/sessions/summaries_before_rewording.session.json was written by the code of
commit d0e7a69, before the summaries were reworded (see tests/data/sessions/README.md). Other
changes since compute some of its results differently (the line fit records its budget, the
rotational temperature is fitted on the areas themselves), so that file is checked for its
wording only, and a file that differs from today's only in the old wording must verify.
"""

import json
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.cli import main
from widgetkit.session.steps import Step
from widgetkit.session.verify import same_summary, summary_key

DATA = Path(__file__).resolve().parents[1] / "data" / "sessions"
BEFORE = DATA / "summaries_before_rewording.session.json"


def _one_line(shape="voigt"):
    x = np.linspace(2000.0, 2010.0, 401)
    y = 0.01 + np.exp(-0.5 * ((x - 2005.0) / 0.2) ** 2)  # one invented Gaussian line
    y = y + np.random.default_rng(1).normal(0.0, 1e-3, x.size)
    s = wk.Session(wk.Spectrum(x, y, y_kind="absorbance"))
    s.subtract_baseline("als", lam=1e5, p=0.01)
    s.find_peaks(min_snr=20)
    s.fit_lines(shape=shape, baseline="linear")
    return s


def test_summaries_use_the_article_the_singular_and_the_shape_s_proper_name():
    s = _one_line()
    text = [st.summary for st in s.history]
    assert text[1].startswith("subtracted an ALS baseline")
    assert text[2].startswith("found 1 peak with SNR ≥ 20")
    assert text[3].startswith("fitted 1 Voigt line,")
    s.subtract_baseline("poly", degree=1)
    assert s.history[-1].summary.startswith("subtracted a polynomial baseline")


def test_the_old_wording_of_a_file_saved_before_the_change_is_no_mismatch(tmp_path):
    path = tmp_path / "before.json"
    shutil.copy(BEFORE, path)
    s = wk.Session.load(path)
    recorded = [st.summary for st in s.history]
    assert recorded[2].startswith("subtracted a als baseline")   # the old wording, as saved
    assert recorded[4].startswith("fitted 1 voigt lines")
    report = s.verify()
    assert report.steps_checked == 8
    # results other code changes computed differently since may differ; the wording may not
    assert not [m for m in report.mismatches if "summary" in m], report.mismatches
    # fields later versions added to a result are no mismatch in a step that matches its seal
    assert not [m for m in report.mismatches if m.endswith("but not recorded")], \
        report.mismatches


def _old_wording(text: str) -> str:
    """A summary as the code before the change wrote it."""
    text = text.replace("an ALS baseline", "a als baseline").replace("SNR ≥", "snr ≥")
    return re.sub(r"fitted (\d+) Voigt lines?", r"fitted \1 voigt lines", text)


def test_a_file_whose_only_difference_is_the_old_wording_verifies(tmp_path):
    s = _one_line()
    s.save(tmp_path / "now.json")
    doc = json.loads((tmp_path / "now.json").read_text())
    for st in doc["steps"]:                  # as the code before the change wrote and sealed it
        st["summary"] = _old_wording(st["summary"])
        st["sha256"] = Step(**{k: v for k, v in st.items() if k != "sha256"}).seal()
    assert [st["summary"][:26] for st in doc["steps"][1:4]] == [
        "subtracted a als baseline ", "found 1 peak with snr ≥ 20", "fitted 1 voigt lines, redu"]
    path = tmp_path / "old-words.json"
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert report.ok, report.mismatches
    assert main(["verify", str(path)]) == 0


def test_a_changed_number_in_a_summary_is_still_a_mismatch():
    assert same_summary("subtracted a als baseline (mean 0.0418)",
                        "subtracted an ALS baseline (mean 0.0418)")
    assert same_summary("fitted 1 voigt lines, reduced chi-square 3.09e-06",
                        "fitted 1 Voigt line, reduced chi-square 3.09e-06")
    assert not same_summary("found 24 peaks", "found 25 peaks")
    assert not same_summary("fitted 3 voigt lines", "fitted 3 gaussian lines")
    assert not same_summary("cropped to 2750–3050 cm-1", "cropped to 2750–3000 cm⁻¹")
    assert summary_key("2750 cm⁻¹") == summary_key("2750 cm-1")


@pytest.mark.parametrize("edit", ["found 12 peaks", "subtracted a poly baseline (mean 0.0418)"])
def test_verify_still_reports_a_summary_that_says_something_else(tmp_path, edit):
    doc = json.loads(BEFORE.read_text())
    step = 3 if edit.startswith("found") else 2
    doc["steps"][step]["summary"] = edit + ("" if step == 2 else
                                            doc["steps"][step]["summary"][len("found 11 peaks"):])
    path = tmp_path / "edited.json"
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert not report.ok
    assert any(f"step {step} " in m and "summary" in m for m in report.mismatches), \
        report.mismatches
