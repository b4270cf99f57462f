"""Saving: atomic, the umask's mode, through symbolic links, nothing left behind by a killed
save, and errors that name the user's path before anything is written."""

import json
import os
import stat
import subprocess
import sys

import pytest

import widgetkit as wk
from widgetkit import _files


def _mode(path):
    return stat.S_IMODE(os.stat(path).st_mode)


def test_a_new_file_gets_the_umask_mode_and_an_existing_one_keeps_its_own(session, tmp_path):
    old = os.umask(0o022)
    try:
        session.save(tmp_path / "s.json")
        assert _mode(tmp_path / "s.json") == 0o644  # 0666 less umask 022 (common practice)
        os.umask(0o077)
        session.save(tmp_path / "t.json")
        assert _mode(tmp_path / "t.json") == 0o600
        os.chmod(tmp_path / "s.json", 0o640)
        session.note("again")
        session.save(tmp_path / "s.json")
        assert _mode(tmp_path / "s.json") == 0o640
    finally:
        os.umask(old)


def test_saving_through_a_symbolic_link_writes_the_file_it_points_to(session, tmp_path):
    (tmp_path / "real").mkdir()
    target = tmp_path / "real" / "s.json"
    session.save(target)
    link = tmp_path / "link.json"
    link.symlink_to(target)
    session.note("through the link")
    session.save(link)
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert wk.Session.load(target).history[-1].summary == "note: through the link"
    assert sorted(p.name for p in (tmp_path / "real").iterdir()) == ["s.json"]


def test_a_missing_folder_or_a_file_in_the_way_is_named_before_anything_is_written(
        session, tmp_path, monkeypatch):
    called = []
    monkeypatch.setattr(type(session), "to_document", lambda self, **kw: called.append(1))
    monkeypatch.chdir(tmp_path)
    with pytest.raises(wk.FilePathError,
                       match=r"cannot write nodir/s.json \(/.*/nodir/s.json\): the folder "
                             r"/.*/nodir does not exist"):
        session.save("nodir/s.json")
    (tmp_path / "afile").write_text("x")
    with pytest.raises(wk.FilePathError, match="afile is a file, not a folder"):
        session.save(tmp_path / "afile" / "s.json")
    with pytest.raises(wk.FilePathError, match="is a folder; give a file name"):
        session.save(tmp_path)
    assert called == [] and isinstance(wk.FilePathError("x"), OSError)


def test_a_save_killed_half_way_leaves_nothing_after_the_next_save(session, tmp_path):
    path = tmp_path / "s.json"
    session.save(path)
    before = path.read_bytes()
    # a child process that dies (os._exit, like a kill) after writing its temporary file
    code = ("import os, sys, widgetkit as wk\n"
            "s = wk.Session.load(sys.argv[1]); s.note('never saved')\n"
            "os.replace = lambda a, b: os._exit(9)\n"
            "s.save(sys.argv[1])\n")
    run = subprocess.run([sys.executable, "-c", code, str(path)], timeout=120)
    assert run.returncode == 9
    left = [p.name for p in tmp_path.iterdir() if p.name != "s.json"]
    assert len(left) == 1 and left[0].startswith(".s.json.wk-")  # what a kill leaves
    assert path.read_bytes() == before
    alive = tmp_path / f".s.json.wk-{_files._HOST}-{os.getppid()}-{'0' * 16}.tmp"
    alive.write_text("a save still running in another process")
    other = tmp_path / ".s.json.mine.tmp"
    other.write_text("not ours")
    session.save(path)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["s.json", alive.name, other.name])


def test_a_failed_write_leaves_the_old_file_and_no_temporary(session, tmp_path, monkeypatch):
    path = tmp_path / "s.json"
    session.save(path)
    before = path.read_bytes()
    session.note("more")

    def full_disk(fd):
        raise OSError(28, "No space left on device (injected)")

    monkeypatch.setattr(_files.os, "fsync", full_disk)
    with pytest.raises(OSError, match="injected"):
        session.save(path)
    assert path.read_bytes() == before and [p.name for p in tmp_path.iterdir()] == ["s.json"]


@pytest.mark.parametrize("field, value", [
    ("sha256", "0" * 64), ("size", 12345), ("format", "csv"), ("path", "/elsewhere/x.jdx"),
    ("y_kind", "transmittance"), ("read_options", {"x_unit": "nm"}),
])
def test_an_edit_of_any_recorded_source_field_is_a_mismatch(tmp_path, field, value):
    src = tmp_path / "band.csv"
    src.write_text("wavenumber (cm-1),absorbance\n" + "\n".join(
        f"{1000 + i},{(i % 7) / 10}" for i in range(50)))  # invented data
    s = wk.Session.from_file(src)
    path = tmp_path / "s.json"
    s.save(path)
    doc = json.loads(path.read_text())
    doc["sources"][0][field] = value
    path.write_text(json.dumps(doc))
    try:
        report = wk.Session.load(path).verify()
    except wk.SessionFormatError:
        return  # refused outright is also fine (a y_kind that does not fit the data)
    assert not report.ok
    assert any(f"step 0 (load) result.source.{field}" in m for m in report.mismatches), \
        report.mismatches


def test_an_edit_of_a_number_in_the_metadata_is_a_mismatch(tmp_path):
    import numpy as np

    x = np.linspace(1000.0, 1100.0, 40)
    s = wk.Session(wk.Spectrum(x, np.sin(x / 7), meta={"resolution": 0.5, "lab": {"T": 296.0}}))
    path = tmp_path / "s.json"
    s.save(path)
    doc = json.loads(path.read_text())
    doc["sources"][0]["meta"]["lab"]["T"] = 296.0000001
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert any("step 0 (load) result.source.meta.lab.T" in m for m in report.mismatches)


def test_concurrent_saves_of_one_file_leave_one_whole_file_and_no_temporaries(session, tmp_path):
    path = tmp_path / "s.json"
    session.save(path)
    code = ("import sys, widgetkit as wk\n"
            "s = wk.Session.load(sys.argv[1])\n"
            "for i in range(4):\n"
            "    s.note(f'writer {sys.argv[2]} save {i}'); s.save(sys.argv[1])\n")
    procs = [subprocess.Popen([sys.executable, "-c", code, str(path), str(k)])
             for k in range(4)]
    assert all(p.wait(timeout=300) == 0 for p in procs)
    assert [p.name for p in tmp_path.iterdir()] == ["s.json"]
    last = wk.Session.load(path)
    assert last.verify().ok and last.history[-1].summary.startswith("note: writer")


def test_metadata_is_recorded_as_plain_data_or_refused_naming_the_entry():
    import numpy as np

    x = np.linspace(1000.0, 1100.0, 40)
    s = wk.Session(wk.Spectrum(x, np.sin(x), meta={"T": np.float64(296.0), "range": (1, 2)}))
    assert s.sources[0]["meta"] == {"T": 296.0, "range": [1, 2]}
    with pytest.raises(wk.SessionStateError, match="meta.lab.T must hold finite numbers, got nan"):
        wk.Session(wk.Spectrum(x, np.sin(x), meta={"lab": {"T": float("nan")}}))


@pytest.mark.parametrize("edit, words", [
    (lambda d: d["steps"][1]["params"].update(hi=d["steps"][1]["params"]["hi"] * (1 + 1e-9)),
     "step 1 (crop): its content no longer matches the seal"),  # changes no result
    (lambda d: d["steps"][2].update(at="2020-01-01T00:00:00.000+00:00"),
     "step 2 (note): its content no longer matches the seal"),
    (lambda d: d["steps"][0]["software"].update(numpy="0.0"),
     "step 0 (load): its content no longer matches the seal"),
    (lambda d: d["steps"][1].pop("sha256"), "step 1 (crop): saved without the seal"),
])
def test_every_value_of_a_step_is_sealed_so_any_edit_is_a_mismatch(session, tmp_path, edit,
                                                                     words):
    session.crop(2750, 3050)
    session.note("sealed")
    path = tmp_path / "s.json"
    session.save(path)
    assert wk.Session.load(path).verify().ok
    doc = json.loads(path.read_text())
    edit(doc)
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert not report.ok and any(words in m for m in report.mismatches), report.mismatches


def test_steps_added_after_reopening_need_no_seal_until_saved(session, tmp_path):
    session.save(tmp_path / "s.json")
    again = wk.Session.load(tmp_path / "s.json")
    again.note("added after reopening")
    assert again.verify().ok


@pytest.mark.parametrize("edit", [
    lambda d: d.update(created="2020-01-01T00:00:00.000+00:00"),
    lambda d: d["software"].update(scipy="0.1"),
])
def test_the_header_is_sealed_too(session, tmp_path, edit):
    path = tmp_path / "s.json"
    session.save(path)
    doc = json.loads(path.read_text())
    edit(doc)
    path.write_text(json.dumps(doc))
    report = wk.Session.load(path).verify()
    assert any("the file's header" in m for m in report.mismatches), report.mismatches
