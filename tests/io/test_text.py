"""Delimited text: separators, decimal comma, labels and units, columns, errors, round trips."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_text, write_csv
from widgetkit.io import text as text_mod

DATA = Path(__file__).parent.parent / "data" / "io"


def write(tmp_path, text: str, name: str = "s.txt") -> Path:
    p = tmp_path / name
    p.write_bytes(text.encode("utf-8"))
    return p


def test_a_comma_file_with_header_and_comments_reads_its_labels():
    s = read_text(DATA / "lr12_comma.csv")
    # values as written in the sample file
    assert s.x.tolist() == [3000.5, 3001.0, 3001.5, 3002.0]
    assert s.y.tolist() == [0.0123, 0.0150, 0.0201, 0.0187]
    assert s.y_kind == "absorbance"
    assert s.meta["title"] == "LR-12 methane-free blank"  # from the "# title:" comment
    assert s.meta["columns"] == ["Wavenumber (cm-1)", "Absorbance"]
    assert s.meta["delimiter"] == "comma" and s.meta["x_unit"] == "cm-1"


def test_tab_separated_decimal_comma_raman_data_is_intensity_on_a_shift_axis():
    s = read_text(DATA / "lr13_tab_decimal_comma.txt")
    assert s.x.tolist() == [1000.5, 1001.0, 1001.5]  # "1000,5" etc. in the file
    assert s.y.tolist() == [1200.0, 1350.25, 1310.0]
    assert s.y_kind == "intensity" and s.meta["decimal"] == ","
    assert s.meta["delimiter"] == "tab"


def test_semicolon_percent_transmittance_in_micrometres_is_converted():
    s = read_text(DATA / "lr14_semicolon_percent.csv")
    # 1e4 / lambda[um] (vacuum); the file has 2.5, 3.0, 4.0 um
    assert s.x == pytest.approx([1e4 / 4.0, 1e4 / 3.0, 1e4 / 2.5], rel=1e-15)
    assert s.y.tolist() == [0.2, 0.4, 0.8]  # 20 %, 40 %, 80 % as fractions
    assert s.meta["transmittance_percent"] is True
    assert s.meta["x_unit"] == "um"


def test_whitespace_columns_in_nanometres_pick_a_y_column_by_name_or_index():
    p = DATA / "lr15_whitespace_columns.txt"
    by_name = read_text(p, y_column="sample B", y_kind="absorbance")
    by_index = read_text(p, y_column=1, y_kind="absorbance")
    assert by_name == by_index
    assert by_name.y.tolist() == [0.6, 0.4, 0.2]  # column "sample B", ascending wavenumber
    # 1e7 / lambda[nm]: 3125, 2500, 2000 nm
    assert by_name.x.tolist() == [1e7 / 3125.0, 1e7 / 2500.0, 1e7 / 2000.0]
    assert read_text(p, y_kind="absorbance").y.tolist() == [0.5, 0.3, 0.1]  # first y column


def test_an_unknown_y_column_name_lists_the_columns():
    with pytest.raises(SpectrumFormatError, match="sample A"):
        read_text(DATA / "lr15_whitespace_columns.txt", y_column="sample C", y_kind="absorbance")


def test_a_y_column_index_out_of_range_says_how_many_there_are():
    with pytest.raises(SpectrumFormatError, match="2 y column"):
        read_text(DATA / "lr15_whitespace_columns.txt", y_column=2, y_kind="absorbance")


@pytest.mark.parametrize("label, unit", [
    ("Wavenumber (cm-1)", "cm-1"), ("wavenumber [cm^-1]", "cm-1"), ("wavelength / nm", "nm"),
    ("Wavelength (um)", "um"), ("Wavelength (µm)", "um"), ("Raman shift (cm-1)", "cm-1"),
    ("Frequency (THz)", "THz"), ("1/cm", "cm-1"),
])
def test_x_units_are_taken_from_the_header_label(tmp_path, label, unit):
    p = write(tmp_path, f"{label},absorbance\n1,1\n2,2\n4,3\n")
    assert read_text(p).meta["x_unit"] == unit  # common practice label spellings


def test_a_wavelength_label_without_a_unit_asks_for_x_unit(tmp_path):
    p = write(tmp_path, "wavelength,absorbance\n1,1\n2,2\n4,3\n")
    with pytest.raises(SpectrumFormatError, match="x_unit"):
        read_text(p)
    assert read_text(p, x_unit="nm").x[0] == pytest.approx(1e7 / 4)  # 1e7/lambda[nm]


def test_a_terahertz_axis_is_converted_with_the_speed_of_light(tmp_path):
    from scipy.constants import c

    p = write(tmp_path, "frequency (THz),intensity\n10,1\n20,2\n30,3\n")
    # wavenumber = nu / (100 c), c from scipy.constants (CODATA, exact)
    assert read_text(p).x == pytest.approx([10e12 / (100 * c), 20e12 / (100 * c),
                                            30e12 / (100 * c)], rel=1e-15)


def test_a_headerless_file_needs_y_kind_and_assumes_wavenumber(tmp_path):
    p = write(tmp_path, "1 5\n2 6\n3 7\n")
    with pytest.raises(SpectrumFormatError, match="y_kind"):
        read_text(p)
    s = read_text(p, y_kind="intensity")
    assert s.meta["x_unit_from"] == "default" and s.x.tolist() == [1.0, 2.0, 3.0]


def test_descending_and_uneven_x_is_sorted_ascending_with_its_y(tmp_path):
    p = write(tmp_path, "wavenumber (cm-1),absorbance\n4000,1\n3000.5,2\n3999,3\n10,4\n")
    s = read_text(p)
    assert s.x.tolist() == [10.0, 3000.5, 3999.0, 4000.0]
    assert s.y.tolist() == [4.0, 2.0, 3.0, 1.0]
    assert "sorted" in s.meta


def test_transmittance_above_one_and_a_half_is_taken_as_percent(tmp_path):
    p = write(tmp_path, "wavenumber (cm-1),transmittance\n1,95\n2,50\n3,10\n")
    s = read_text(p)
    assert s.y.tolist() == [0.95, 0.5, 0.1] and s.meta["transmittance_percent"] is True
    frac = write(tmp_path, "wavenumber (cm-1),transmittance\n1,0.95\n2,0.5\n3,1.01\n", "f.txt")
    assert read_text(frac).y.tolist() == [0.95, 0.5, 1.01]


def test_the_explicit_y_kind_wins_over_the_label_and_is_recorded(tmp_path):
    p = write(tmp_path, "wavenumber (cm-1),absorbance\n1,1\n2,2\n3,3\n")
    s = read_text(p, y_kind="intensity")
    assert s.y_kind == "intensity" and s.meta["y_kind_in_file"] == "absorbance"


@pytest.mark.parametrize("body, line, message", [
    ("x,y\n1,2\n2,abc\n3,4\n", 3, "not a number"),
    ("x,y\n1,2\n2,nan\n3,4\n", 3, "not finite"),
    ("x,y\n1,2\n2,inf\n3,4\n", 3, "not finite"),
    ("x,y\n1,2\n2,\n3,4\n", 3, "empty cell"),
    ("x,y\n1,2\n2,3,4\n3,4\n", 3, "3 field"),
    ("x,y\n1,2\n2,3\n1,4\n", 4, "duplicate x"),
    ("x,y\n1,2\n# a comment\n\n2,3\n1,4\n", 6, "duplicate x"),
])
def test_bad_rows_raise_with_the_line_and_the_fix(tmp_path, body, line, message):
    p = write(tmp_path, body)
    with pytest.raises(SpectrumFormatError, match=message) as info:
        read_text(p, y_kind="absorbance")
    assert info.value.line == line
    assert info.value.path == str(p.resolve())


def test_fewer_than_three_points_are_refused(tmp_path):
    with pytest.raises(SpectrumFormatError, match="at least 3"):
        read_text(write(tmp_path, "1,2\n2,3\n"), y_kind="absorbance")


def test_an_empty_file_is_refused(tmp_path):
    with pytest.raises(SpectrumFormatError, match="empty"):
        read_text(write(tmp_path, ""), y_kind="absorbance")


def test_a_file_of_only_comments_says_there_are_no_data_rows(tmp_path):
    with pytest.raises(SpectrumFormatError, match="no data rows"):
        read_text(write(tmp_path, "# one\n\n# two\n"), y_kind="absorbance")


def test_binary_garbage_is_refused_as_binary(tmp_path):
    p = tmp_path / "g.bin"
    p.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR")
    with pytest.raises(SpectrumFormatError, match="binary"):
        read_text(p, y_kind="absorbance")


def test_a_missing_file_raises_file_not_found(tmp_path):
    with pytest.raises(FileNotFoundError):
        read_text(tmp_path / "nope.csv")


def test_source_records_path_hash_format_and_size(tmp_path):
    import hashlib

    p = write(tmp_path, "wavenumber (cm-1),absorbance\n1,1\n2,2\n3,3\n")
    src = read_text(p).source
    data = p.read_bytes()
    assert src == {"path": str(p.resolve()), "sha256": hashlib.sha256(data).hexdigest(),
                   "format": "text", "size": len(data)}


def test_the_fast_parser_and_the_reference_parser_agree(tmp_path, monkeypatch):
    p = DATA / "lr13_tab_decimal_comma.txt"
    fast = read_text(p)
    monkeypatch.setattr(text_mod, "_fast_columns", lambda *a: None)
    slow = read_text(p)
    assert fast == slow and fast.source == slow.source and fast.meta == slow.meta


def test_inline_comments_after_values_are_ignored_by_both_parsers(tmp_path, monkeypatch):
    p = write(tmp_path, "x,absorbance\n1,2 # first\n2,3\n3,4\n")
    fast = read_text(p)
    monkeypatch.setattr(text_mod, "_fast_columns", lambda *a: None)
    assert read_text(p) == fast and fast.y.tolist() == [2.0, 3.0, 4.0]


def test_csv_written_then_read_is_exactly_the_same_spectrum(tmp_path):
    x = np.linspace(400.0, 4000.0, 1001)
    s = wk.Spectrum(x, np.sin(x / 7.0) / 3.0, y_kind="transmittance", meta={"title": "LR demo"})
    p = write_csv(s, tmp_path / "out.csv")
    back = read_text(p)
    assert back == s and back.meta["title"] == "LR demo"  # self-consistency round trip
    assert Path(p).read_text().splitlines()[1] == "wavenumber (cm-1),transmittance (fraction)"


finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(finite, finite), min_size=3, max_size=40,
                unique_by=lambda t: t[0]),
       st.sampled_from(["absorbance", "transmittance", "intensity"]))
def test_any_finite_spectrum_round_trips_exactly_through_csv(tmp_path, pairs, kind):
    pairs.sort()
    x = np.array([p[0] for p in pairs])
    if np.any(np.diff(x) <= 0):  # -0.0 and 0.0 compare equal
        return
    s = wk.Spectrum(x, [p[1] for p in pairs], y_kind=kind)
    back = read_text(write_csv(s, tmp_path / "h.csv"))
    assert back == s  # self-consistency: bit-exact round trip


def test_blank_separated_labels_keep_their_units_with_them(tmp_path):
    p = write(tmp_path, "Wavenumber (cm-1) Absorbance\n1 0.1\n2 0.2\n3 0.3\n")
    s = read_text(p)
    assert s.meta["columns"] == ["Wavenumber (cm-1)", "Absorbance"] and s.y_kind == "absorbance"
    q = write(tmp_path, "wavelength / nm transmittance\n1 0.1\n2 0.2\n3 0.3\n", "q.txt")
    assert read_text(q).meta["x_unit"] == "nm"


def test_windows_line_ends_a_byte_order_mark_and_latin1_labels_are_read(tmp_path):
    p = tmp_path / "w.csv"
    p.write_bytes(b"\xef\xbb\xbfWavenumber (cm-1),Absorbance\r\n1,0.5\r\n2,0.25\r\n3,0.125\r\n")
    assert read_text(p).y.tolist() == [0.5, 0.25, 0.125]
    q = tmp_path / "l.csv"
    q.write_bytes(b"Wavelength (\xb5m),Absorbance\n2,0.5\n4,0.25\n5,0.125\n")  # Latin-1 micro
    s = read_text(q)
    assert s.meta["x_unit"] == "um" and s.x.tolist() == [2000.0, 2500.0, 5000.0]  # 1e4/um


def test_rows_ending_in_a_separator_are_read(tmp_path):
    p = write(tmp_path, "Wavenumber (cm-1);Absorbance;\n1,5;0,25;\n2,5;0,5;\n3,5;0,75;\n")
    s = read_text(p)
    assert s.x.tolist() == [1.5, 2.5, 3.5] and s.y.tolist() == [0.25, 0.5, 0.75]
    bad = write(tmp_path, "x;absorbance;\n1;2;\n2;3;4\n3;4;\n", "b.txt")
    with pytest.raises(SpectrumFormatError, match="3 field") as info:
        read_text(bad)
    assert info.value.line == 3


def test_a_file_larger_than_the_sniffed_head_reads_the_same_by_both_parsers(tmp_path, monkeypatch):
    rng = np.random.default_rng(11)
    x = np.sort(rng.uniform(400.0, 4000.0, 4000))[::-1]  # descending, uneven: demo data
    y = rng.normal(size=x.size)
    body = "".join(f"{a!r}\t{b!r}\n" for a, b in zip(x.tolist(), y.tolist(), strict=True))
    p = write(tmp_path, "# demo\nwavenumber (cm-1)\tintensity\n" + body)
    assert p.stat().st_size > 65536  # beyond the 64 KiB the sniffer reads
    fast = read_text(p)
    monkeypatch.setattr(text_mod, "_fast_columns", lambda *a: None)
    slow = read_text(p)
    assert fast == slow and fast.source == slow.source
    assert np.array_equal(fast.x, x[::-1]) and np.array_equal(fast.y, y[::-1])  # round trip
    bad = write(tmp_path, "wavenumber (cm-1)\tintensity\n" + body + "1.0\tbad\n", "bad.txt")
    monkeypatch.undo()
    with pytest.raises(SpectrumFormatError, match="'bad' is not a number") as info:
        read_text(bad)
    assert info.value.line == x.size + 2
