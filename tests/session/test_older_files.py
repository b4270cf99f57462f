"""A session file saved by the first release (commit 71b1cf2; invented demo data, see
tests/data/sessions/README.md) is refused with a message naming its older format and the
migration, and ``widgetkit migrate`` brings it up to date."""

import hashlib
import json
import shutil
from pathlib import Path

import pytest

import widgetkit as wk
from widgetkit.cli import main
from widgetkit.session.steps import Step

WAVE1 = Path(__file__).resolve().parents[1] / "data" / "sessions" / "wave1_hcl.session.json"


@pytest.fixture
def old(tmp_path):
    path = tmp_path / "wave1.json"
    shutil.copy(WAVE1, path)
    return path


def _sha(path):
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()


def test_the_first_release_s_file_is_refused_naming_its_format_and_the_migration(old):
    with pytest.raises(wk.SessionFormatError) as err:
        wk.Session.load(old)
    text = str(err.value)
    assert "saved by widgetkit 0.1.0" in text and "older format" in text
    assert "widgetkit migrate wave1.json NEW.json" in text and "Session.migrate" in text


def test_verify_of_the_old_file_exits_2_with_one_line_and_no_traceback(old, capsys):
    assert main(["verify", str(old)]) == 2
    err = capsys.readouterr().err
    assert "older format" in err and "widgetkit migrate" in err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_migration_runs_every_step_again_lists_what_moved_and_leaves_the_old_file(old, tmp_path):
    before = _sha(old)
    report = wk.Session.migrate(old)
    assert report.ok and report.failed is None
    assert report.steps == 7 and report.migrated == 7 and report.saved_with == "0.1.0"
    # the peak search measures the noise differently since the first release
    assert any(m.startswith("step 3 (find_peaks)") for m in report.moved), report.moved
    s = report.session
    kinds = [st.kind for st in s.history]
    assert kinds == ["load", "to_absorbance", "subtract_baseline", "find_peaks", "fit_lines",
                     "assign_band", "note", "note"]
    assert s.history[-1].summary.startswith("note: migrated from wave1.json")
    assert set(s.constants["isotopologue"]) == {"1H-35Cl", "1H-37Cl"}
    new = tmp_path / "new.json"
    s.save(new)
    assert wk.Session.load(new).verify().ok
    assert _sha(old) == before


def test_the_migrate_command_writes_a_file_that_verifies(old, tmp_path, capsys):
    new = tmp_path / "new.json"
    assert main(["migrate", str(old), str(new)]) == 0
    out = capsys.readouterr().out
    assert "7 of 7 steps run again" in out and "step 3 (find_peaks)" in out
    assert main(["verify", str(new)]) == 0
    assert main(["migrate", str(old), str(new)]) == 2           # exists: not replaced
    assert "--overwrite" in capsys.readouterr().err
    assert main(["migrate", str(old), str(new), "--overwrite"]) == 0
    assert main(["migrate", str(old), str(old), "--overwrite"]) == 2   # never over the original
    assert main(["migrate", str(old), str(tmp_path / "no" / "new.json")]) == 2


def test_a_current_file_with_its_seals_removed_is_treated_as_older_and_not_trusted(tmp_path):
    path = tmp_path / "current.json"
    s = wk.Session.migrate(WAVE1).session
    s.save(path)
    doc = json.loads(path.read_text())
    del doc["sha256"]
    for st in doc["steps"]:
        del st["sha256"]
    path.write_text(json.dumps(doc))
    with pytest.raises(wk.SessionFormatError, match="older format"):
        wk.Session.load(path)


def test_a_step_that_cannot_run_again_stops_the_migration_keeping_what_ran(old, tmp_path):
    doc = json.loads(old.read_text())
    doc["steps"][4]["params"]["region"] = [5000.0, 5100.0]     # no peak there
    old.write_text(json.dumps(doc))
    report = wk.Session.migrate(old)
    assert not report.ok and report.failed.startswith("step 4 (fit_lines)")
    assert report.migrated == 4
    assert [st.kind for st in report.session.history][-1] == "note"
    assert "stopped at step 4" in report.session.history[-1].params["text"]
    assert main(["migrate", str(old), str(tmp_path / "part.json")]) == 1


def test_verify_of_an_unedited_file_whose_results_moved_points_to_the_migration(tmp_path, capsys):
    path = tmp_path / "s.json"
    wk.Session.migrate(WAVE1).session.save(path)
    doc = json.loads(path.read_text())
    step = doc["steps"][3]                     # find_peaks, as if an earlier version gave 12
    step["summary"] = step["summary"].replace("found 11 peaks", "found 12 peaks")
    step["sha256"] = Step(**{k: v for k, v in step.items() if k != "sha256"}).seal()
    path.write_text(json.dumps(doc))
    assert main(["verify", str(path)]) == 1
    out = capsys.readouterr().out
    assert "Every seal holds" in out and f"widgetkit migrate {path} NEW.json" in out
    doc["steps"][2]["params"]["lam"] = 2e6     # an edit: the seal breaks, no such advice
    path.write_text(json.dumps(doc))
    assert main(["verify", str(path)]) == 1
    assert "Every seal holds" not in capsys.readouterr().out
