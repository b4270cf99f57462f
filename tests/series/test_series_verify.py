"""Verifying a series: every session replayed and checked against the series file."""

import json
import shutil

import pytest

import widgetkit as wk


@pytest.fixture
def saved(serial_run, tmp_path):
    return wk.SeriesResult.load(serial_run.save(tmp_path / "s"))


def test_a_series_just_run_verifies(saved):
    report = saved.verify(progress=False, workers=1)
    assert report.ok and bool(report)
    assert list(report.rows["ok"]) == [True] * len(saved)
    assert (report.rows["steps_checked"] > 4).all()
    assert "verified: all" in str(report)


def test_an_edited_session_file_is_found(saved):
    path = saved.sessions.path(2)
    doc = json.loads(path.read_text())
    doc["steps"][3]["params"]["min_snr"] = 11.0  # the peak threshold changed afterwards
    path.write_text(json.dumps(doc))
    report = saved.verify(progress=False, workers=1)
    assert not report.ok
    bad = report.rows[~report.rows["ok"]]
    assert list(bad["spectrum"]) == [saved.entries[2]["name"]]
    assert "sha256 differs" in " ".join(report.mismatches[saved.entries[2]["name"]])
    assert "NOT verified: 1 of" in str(report)


def test_an_edited_constant_in_the_series_file_is_found(saved):
    doc = json.loads(saved.path.read_text())
    values = doc["spectra"][1]["constants"]["value"]
    values[0] = values[0] + 1e-4  # one band origin nudged by 1e-4 cm-1 (3e-8 relative)
    saved.path.write_text(json.dumps(doc))
    report = wk.SeriesResult.load(saved.path).verify(progress=False, workers=1)
    assert not report.ok
    assert any("series constants" in m for m in report.mismatches[doc["spectra"][1]["name"]])


def test_a_missing_session_file_is_reported_on_its_row(saved):
    shutil.move(saved.sessions.path(0), saved.folder / "elsewhere.json")
    report = saved.verify(progress=False, workers=1)
    assert not report.ok
    assert "cannot be read" in report.rows.loc[0, "first_mismatch"]


@pytest.mark.parametrize("change, message", [
    (lambda d: d.update(format="widgetkit-session"), "not a widgetkit series file"),
    (lambda d: d.update(version=7), "version 7"),
    (lambda d: d["spectra"][0].update(status="great"), "spectra/0"),
    (lambda d: d["spectra"][0].update(session="../../etc/passwd"), "spectra/0/session"),
])
def test_a_bad_series_file_is_refused_naming_the_field(saved, change, message):
    doc = json.loads(saved.path.read_text())
    change(doc)
    saved.path.write_text(json.dumps(doc))
    with pytest.raises(wk.SeriesError, match=message):
        wk.SeriesResult.load(saved.path)
