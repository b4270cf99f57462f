"""The supplementary bundle, the ``widgetkit report`` command and the wheel a referee installs.

The session is the demo spectrum (invented scenario, simulated data). Checksums are checked
with hashlib (sha256, FIPS 180-4), the wheel with pip and zipfile, CSV files with pandas.
"""

from __future__ import annotations

import hashlib
import json
import os
import subprocess
import sys
import zipfile

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.cli import main
from widgetkit.report import ReportPathError, write_bundle, write_report
from widgetkit.report.wheel import build_wheel, package_files


@pytest.fixture(scope="module")
def bundle(session, tmp_path_factory):
    folder = tmp_path_factory.mktemp("supp") / "supplementary"
    return write_bundle(session, folder), folder


def test_bundle_holds_everything_with_matching_checksums(session, bundle):
    b, folder = bundle
    for name in ("session.json", "report.md", "report.html", "report.tex", "report.csv",
                 "report_constants.csv", "spectrum_processed.jdx", "spectrum_processed.csv",
                 "spectrum_source.csv", "README.md", "SHA256SUMS", "software/requirements.txt"):
        assert (folder / name).is_file(), name
    sums = (folder / "SHA256SUMS").read_text(encoding="utf-8").splitlines()
    for line in sums:
        digest, name = line.split("  ", 1)
        assert hashlib.sha256((folder / name).read_bytes()).hexdigest() == digest == b.files[name]
    on_disk = sorted(p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file())
    assert on_disk == sorted([*b.files, "SHA256SUMS"])        # SHA256SUMS lists every other file
    assert f"{len(on_disk)} files" in str(b)                     # and the count says so
    assert wk.Session.load(folder / "session.json").verify().ok
    exact = wk.read_spectrum(folder / "spectrum_processed.csv")
    assert np.array_equal(exact.x, session.spectrum.x) and np.array_equal(exact.y, session.spectrum.y)
    jdx = wk.read_spectrum(folder / "spectrum_processed.jdx")
    # DIFDUP keeps 7 significant digits of the largest |y| (write_jcamp's documented contract)
    assert np.allclose(jdx.y, session.spectrum.y, rtol=0, atol=np.abs(session.spectrum.y).max() * 1e-6)
    assert session.path is None or not str(session.path).startswith(str(folder))
    for p in folder.glob("report*.csv"):
        pd.read_csv(p)                                           # every table reads with pandas


def test_the_referee_readme_installs_the_shipped_wheel_not_a_registry_version(bundle):
    b, folder = bundle
    readme = (folder / "README.md").read_text(encoding="utf-8")
    assert "pip install widgetkit==" not in readme
    wheel = b.wheel
    assert wheel is not None and (folder / "software" / wheel.path.name).is_file()
    assert f"software/{wheel.path.name}" in readme and wheel.sha256 in readme
    assert hashlib.sha256(wheel.path.read_bytes()).hexdigest() == wheel.sha256
    assert "widgetkit verify session.json" in readme and "sha256sum -c SHA256SUMS" in readme
    reqs = (folder / "software" / "requirements.txt").read_text(encoding="utf-8")
    pins = [ln for ln in reqs.splitlines() if not ln.startswith("#")]
    assert f"numpy=={np.__version__}" in pins                 # the version the steps recorded
    assert not any(ln.startswith(("widgetkit", "python")) for ln in pins)  # the wheel is widgetkit
    # every dependency of the package is pinned, once (pyproject.toml's list)
    from widgetkit.report.wheel import dependency_names

    names = [ln.split("==")[0].lower() for ln in pins]
    assert sorted(names) == sorted({d.lower() for d in dependency_names()}) and "lmfit" in names


def test_the_wheel_holds_the_running_code_and_is_reproducible(tmp_path):
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    a, b = build_wheel(tmp_path / "a"), build_wheel(tmp_path / "b")
    assert a.sha256 == b.sha256 and a.path.name == f"widgetkit-{wk.__version__}-py3-none-any.whl"
    with zipfile.ZipFile(a.path) as zf:
        names = set(zf.namelist())
        assert zf.testzip() is None
        meta = zf.read(f"widgetkit-{wk.__version__}.dist-info/METADATA").decode()
        record = zf.read(f"widgetkit-{wk.__version__}.dist-info/RECORD").decode()
        init = zf.read("widgetkit/__init__.py")
    root = os.path.dirname(wk.__file__)
    with open(os.path.join(root, "__init__.py"), "rb") as f:
        assert init == f.read()
    assert {p.relative_to(os.path.dirname(root)).as_posix() for p in package_files()} <= names
    assert not any("__pycache__" in n or n.endswith(".pyc") for n in names)
    assert "widgetkit/session/schema/session-v1.schema.json" in names     # package data too
    assert f"Version: {wk.__version__}" in meta and "Requires-Dist: numpy" in meta
    assert len(record.splitlines()) == len(names)


@pytest.mark.slow
def test_pip_installs_the_wheel_offline_and_it_verifies_the_bundle(bundle, tmp_path):
    b, folder = bundle
    target = tmp_path / "site"
    r = subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "--no-index",
                        "--target", str(target), str(b.wheel.path)], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    code = ("import sys, widgetkit, widgetkit.cli; print(widgetkit.__file__); "
            "sys.exit(widgetkit.cli.main(['verify', sys.argv[1]]))")
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["PYTHONPATH"] = str(target)
    r = subprocess.run([sys.executable, "-c", code, str(folder / "session.json")], env=env,
                       capture_output=True, text=True, cwd=tmp_path)
    assert r.returncode == 0, r.stdout + r.stderr
    assert r.stdout.startswith(str(target))                     # the installed copy ran
    assert (target / "bin" / "widgetkit").is_file()             # with its command


def test_bundle_refuses_a_folder_that_holds_files_unless_told(session, tmp_path):
    (tmp_path / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(wk.WidgetkitError, match="overwrite=True"):
        write_bundle(session, tmp_path, wheel=False)
    write_bundle(session, tmp_path, overwrite=True, wheel=False)
    assert (tmp_path / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert (tmp_path / "session.json").is_file()


def test_path_errors_name_the_users_path(session, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(ReportPathError, match=r"the folder nodir \(.*nodir\) does not exist"):
        write_report(session, "nodir/r.md")
    (tmp_path / "afile").write_text("x", encoding="utf-8")
    with pytest.raises(ReportPathError, match=r"afile .*is a file, not a folder"):
        write_bundle(session, "afile")
    with pytest.raises(ReportPathError, match=r"cannot create afile/sub .*afile is a file"):
        write_bundle(session, "afile/sub")
    (tmp_path / "d").mkdir()
    with pytest.raises(ReportPathError, match=r"d .*is a folder"):
        write_report(session, "d")
    assert isinstance(ReportPathError("x"), OSError)               # also a built-in
    assert sorted(p.name for p in tmp_path.iterdir()) == ["afile", "d"]   # nothing was written


def test_cli_report_writes_reports_and_bundles(session, tmp_path, capsys):
    saved = tmp_path / "s.json"
    session.save(saved)
    out = tmp_path / "out.html"
    assert main(["report", str(saved), "-o", str(out), "--verify", "--bundle", str(tmp_path / "b")]) == 0
    assert "Verified: all" in out.read_text(encoding="utf-8")
    assert "Verified: all" in (tmp_path / "b" / "report.md").read_text(encoding="utf-8")
    printed = capsys.readouterr().out
    n = sum(1 for p in (tmp_path / "b").rglob("*") if p.is_file())
    assert f"{n} files" in printed
    assert main(["report", str(saved), "--bundle", str(tmp_path / "b")]) == 2   # not empty
    assert "overwrite" in capsys.readouterr().err
    assert main(["report", str(tmp_path / "missing.json"), "-o", str(tmp_path / "x.md")]) == 2
    assert main(["report", str(saved), "-o", str(tmp_path / "x.docx")]) == 2
    assert "x.docx" in capsys.readouterr().err
    assert main(["report", str(saved)]) == 2                                    # nothing asked


def test_cli_checks_output_paths_before_reading_the_session(session, tmp_path, capsys,
                                                            monkeypatch):
    saved = tmp_path / "s.json"
    session.save(saved)

    def must_not_load(*a, **k):
        raise AssertionError("the session was read before the paths were checked")

    monkeypatch.setattr(wk.Session, "load", must_not_load)
    missing = tmp_path / "nodir" / "r.md"
    assert main(["report", str(saved), "-o", str(missing)]) == 2
    assert str(tmp_path / "nodir") in capsys.readouterr().err
    (tmp_path / "f").write_text("x", encoding="utf-8")
    assert main(["report", str(saved), "--bundle", str(tmp_path / "f")]) == 2
    assert f"{tmp_path / 'f'} is a file, not a folder" in capsys.readouterr().err


def test_cli_report_exits_1_and_says_so_when_the_record_does_not_replay(tmp_path):
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.find_peaks(min_snr=8)
    doc = s.to_document()
    doc["steps"][-1]["result"]["tampered"] = True      # a result the replay cannot produce
    (tmp_path / "t.json").write_text(json.dumps(doc), encoding="utf-8")
    assert main(["report", str(tmp_path / "t.json"), "-o", str(tmp_path / "t.md"), "--verify"]) == 1
    assert "NOT verified" in (tmp_path / "t.md").read_text(encoding="utf-8")
