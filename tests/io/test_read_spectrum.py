"""read_spectrum: dispatch on content, reproducible options, robustness to any bytes."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_spectrum, write_csv, write_jcamp

DATA = Path(__file__).parent.parent / "data" / "io"


def test_jcamp_is_recognised_by_content_not_by_file_name(tmp_path):
    p = tmp_path / "looks_like.csv"
    p.write_bytes((DATA / "lr07_difdup.jdx").read_bytes())
    assert read_spectrum(p).source["format"] == "jcamp-dx"
    q = tmp_path / "looks_like.jdx"
    q.write_bytes((DATA / "lr12_comma.csv").read_bytes())
    assert read_spectrum(q).source["format"] == "text"


def test_the_top_level_read_spectrum_is_the_io_one():
    assert wk.read_spectrum(DATA / "lr12_comma.csv") == read_spectrum(DATA / "lr12_comma.csv")


@pytest.mark.parametrize("name, options", [
    ("lr15_whitespace_columns.txt", {"y_column": "sample B", "y_kind": "absorbance"}),
    ("lr11_compound.jdx", {"block": "LR-11 reference"}),
    ("lr14_semicolon_percent.csv", {}),
])
def test_the_recorded_read_options_read_the_same_spectrum_again(name, options):
    s = read_spectrum(DATA / name, **options)
    again = read_spectrum(s.source["path"], **s.meta["read_options"])
    assert again == s and again.meta == s.meta


def test_options_of_the_other_format_are_refused():
    with pytest.raises(SpectrumFormatError, match="y_column"):
        read_spectrum(DATA / "lr07_difdup.jdx", y_column=1)
    with pytest.raises(SpectrumFormatError, match="block"):
        read_spectrum(DATA / "lr12_comma.csv", block=0)


def test_a_missing_file_raises_file_not_found_and_a_directory_a_format_error(tmp_path):
    with pytest.raises(FileNotFoundError):
        read_spectrum(tmp_path / "absent.jdx")
    with pytest.raises(SpectrumFormatError):
        read_spectrum(tmp_path)


def test_meta_is_plain_json(tmp_path):
    import json

    for name in ("lr07_difdup.jdx", "lr13_tab_decimal_comma.txt", "lr10_points.jdx"):
        s = read_spectrum(DATA / name)
        assert json.loads(json.dumps(s.meta)) == s.meta
        assert json.loads(json.dumps(s.source)) == s.source


def test_a_spectrum_survives_csv_then_jcamp_then_csv(tmp_path):
    x = np.linspace(2800.0, 3000.0, 401)
    s = wk.Spectrum(x, 0.5 * np.exp(-((x - 2886.0) / 2.0) ** 2), y_kind="absorbance")
    a = read_spectrum(write_csv(s, tmp_path / "a.csv"))
    b = read_spectrum(write_jcamp(a, tmp_path / "b.jdx", form="AFFN"))
    c = read_spectrum(write_csv(b, tmp_path / "c.csv"))
    assert a == s and b == s and c == s  # self-consistency: AFFN and CSV are exact


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.binary(max_size=400) | st.builds(lambda b: b"##TITLE=x\n" + b, st.binary(max_size=300)))
def test_random_bytes_raise_nothing_but_spectrum_format_error(tmp_path, data):
    p = tmp_path / "r.bin"
    p.write_bytes(data)
    try:
        read_spectrum(p, y_kind="absorbance")
    except SpectrumFormatError:
        pass


jcamp_piece = st.sampled_from([
    "##TITLE=t\n", "##JCAMP-DX=4.24\n", "##XUNITS=1/CM\n", "##YUNITS=ABSORBANCE\n",
    "##FIRSTX=1\n", "##LASTX=4\n", "##NPOINTS=4\n", "##XYDATA=(X++(Y..Y))\n", "1A0J%\n",
    "3A1j\n", "1 2 3\n", "##END=\n", "##BLOCKS=1\n", "##XYPOINTS=(XY..XY)\n", "1,2;3,4\n",
    "$$ note\n", "##YFACTOR=0.1\n", "##DELTAX=1\n", "##FIRSTY=0\n", "1e?\n", "4sS%Z\n",
])


@settings(max_examples=100, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(jcamp_piece, max_size=14))
def test_shuffled_jcamp_records_raise_nothing_but_spectrum_format_error(tmp_path, pieces):
    p = tmp_path / "j.jdx"
    p.write_text("".join(pieces))
    try:
        s = read_spectrum(p, y_kind="absorbance")
    except SpectrumFormatError:
        return
    assert len(s) >= 3


text_piece = st.sampled_from([
    "x,y\n", "1,2\n", "2,3\n", "3;4\n", "5\t6\n", "7 8\n", "1,5 2,5\n", "# c\n", "\n", "nan,1\n",
    "a,b,c\n", "4,5,6\n", "9,\n", "10,1e3\n", "-1,-2\n", "\"3\",\"4\"\n", "6,7 # n\n", ",\n",
])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(text_piece, max_size=12))
def test_fast_and_reference_text_parsers_accept_and_refuse_alike(tmp_path, pieces):
    from widgetkit.io import text as text_mod

    p = tmp_path / "t.txt"
    p.write_text("".join(pieces))

    def outcome():
        try:
            return read_spectrum(p, y_kind="intensity")
        except SpectrumFormatError as exc:
            return (exc.line, exc.reason)

    fast = outcome()
    original = text_mod._fast_columns
    text_mod._fast_columns = lambda *a: None
    try:
        slow = outcome()
    finally:
        text_mod._fast_columns = original
    assert fast == slow


def test_importing_the_io_layer_loads_no_widget_library():
    code = ("import sys, widgetkit.io; "
            "print('ipywidgets' in sys.modules or 'bqplot' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_written_files_get_the_usual_permissions_and_no_temporary_file_stays(tmp_path):
    import os
    import stat

    x = np.linspace(1000.0, 1010.0, 11)
    s = wk.Spectrum(x, x / 1e4, y_kind="absorbance")
    old = os.umask(0o022)
    try:
        paths = [write_csv(s, tmp_path / "p.csv"), write_jcamp(s, tmp_path / "p.jdx")]
    finally:
        os.umask(old)
    for p in paths:
        assert stat.S_IMODE(os.stat(p).st_mode) == 0o644  # 0o666 less umask 0o022
    assert sorted(q.name for q in tmp_path.iterdir()) == ["p.csv", "p.jdx"]
