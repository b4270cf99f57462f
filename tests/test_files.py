"""One atomic writer for every file the package writes (widgetkit._files.atomic_write): a
symbolic link is written through, a new file gets the umask's mode, temporaries left by a
writer that died are removed, a missing folder is named. Checked here for the writers outside
the session (spectra, reports, the demo data); tests/session/test_saving.py checks sessions.
Invented demo data (self-consistency only)."""

import os
import stat

import numpy as np
import pytest

import widgetkit as wk
from widgetkit._files import _HOST

DEAD_PID = 4_194_304 + 17     # above Linux's largest pid (pid_max 2**22): no such process


@pytest.fixture
def spectrum():
    x = np.linspace(2000.0, 2010.0, 201)
    return wk.Spectrum(x, np.exp(-0.5 * ((x - 2005.0) / 0.3) ** 2), y_kind="absorbance")


@pytest.fixture
def session(spectrum):
    return wk.Session(spectrum)


def _writers(spectrum, session):
    from widgetkit.report import write_report

    return {
        "csv": lambda p: wk.write_csv(spectrum, p),
        "jcamp": lambda p: wk.write_jcamp(spectrum, p),
        "report": lambda p: write_report(session, p, figures=False),
    }


@pytest.mark.parametrize("kind", ["csv", "jcamp", "report"])
def test_a_symbolic_link_is_written_through_and_stays_a_link(tmp_path, spectrum, session, kind):
    suffix = {"csv": ".csv", "jcamp": ".jdx", "report": ".md"}[kind]
    target = tmp_path / f"real{suffix}"
    target.write_text("old")
    link = tmp_path / f"link{suffix}"
    link.symlink_to(target)
    _writers(spectrum, session)[kind](link)
    assert link.is_symlink() and target.read_text() != "old"


@pytest.mark.parametrize("kind", ["csv", "jcamp", "report"])
def test_a_new_file_gets_the_umask_s_mode_and_dead_writers_temporaries_go(tmp_path, spectrum,
                                                                          session, kind):
    suffix = {"csv": ".csv", "jcamp": ".jdx", "report": ".md"}[kind]
    path = tmp_path / f"out{suffix}"
    stale = tmp_path / f".{path.name}.wk-{_HOST}-{DEAD_PID}-0123456789abcdef.tmp"
    stale.write_bytes(b"half a file")
    old = os.umask(0o022)
    try:
        _writers(spectrum, session)[kind](path)
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644      # 0666 less umask 022 (POSIX open)
    assert not stale.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == [path.name]


def test_a_missing_folder_is_named_by_every_writer(tmp_path, spectrum, session):
    from widgetkit.report import ReportPathError

    for kind, write in _writers(spectrum, session).items():
        with pytest.raises(OSError, match="nodir") as err:
            write(tmp_path / "nodir" / f"x.{'md' if kind == 'report' else 'csv'}")
        if kind == "report":
            assert isinstance(err.value, ReportPathError)
        else:
            assert isinstance(err.value, wk.FilePathError)

