"""Delimited text as real exports write it: long and quoted headers, stray carriage returns,
quoted names, unread columns, header fields, Raman shift axes and percent decisions.

Every case is read twice, by the fast pass (pandas) and by the careful line-by-line pass, and
both must give the same spectrum or the same error. Data values are invented (self-consistency)
or copied from the file text; lr20 and lr21 are written by tests/data/io/make_quirk_files.py.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_spectrum, read_text
from widgetkit.io import text as text_mod

DATA = Path(__file__).parent.parent / "data" / "io"


def write(tmp_path, text: str | bytes, name: str = "t.csv") -> Path:
    p = tmp_path / name
    p.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return p


def both(path, monkeypatch, **options):
    """The outcome of the fast and of the careful pass: a spectrum or (line, reason)."""

    def outcome():
        try:
            return read_text(path, **options)
        except SpectrumFormatError as exc:
            return (exc.line, exc.reason)

    fast = outcome()
    with monkeypatch.context() as m:
        m.setattr(text_mod, "_fast_columns", lambda *a: None)
        careful = outcome()
    assert fast == careful
    if not isinstance(fast, tuple):
        assert fast.meta == careful.meta and fast.source == careful.source
    return fast


def test_a_pathological_header_line_is_read_in_linear_time(tmp_path, monkeypatch):
    # 400 kB of unclosed brackets and slashes: a backtracking label pattern would need
    # about 10**11 steps here; the single-pass scan reads it at once
    junk = "(" * 100_000 + "[ /" * 100_000
    s = both(write(tmp_path, f"{junk},absorbance\n1,2\n2,3\n3,4\n"), monkeypatch)
    assert s.y.tolist() == [2.0, 3.0, 4.0]


def test_a_first_line_longer_than_64_kib_is_read(tmp_path, monkeypatch):
    long_comment = "# " + "x" * 200_000 + "\n"
    s = both(write(tmp_path, long_comment + "wavenumber (cm-1),absorbance\n1,2\n2,3\n3,4\n"),
             monkeypatch)
    assert s.y.tolist() == [2.0, 3.0, 4.0] and s.y_kind == "absorbance"
    long_label = "wavenumber (cm-1)," + "absorbance " * 10_000 + "\n1,2\n2,3\n3,4\n"
    assert both(write(tmp_path, long_label, "b.csv"), monkeypatch).y.tolist() == [2, 3, 4]


def test_a_quoted_header_cell_with_a_line_break_keeps_the_first_data_row(monkeypatch):
    s = both(DATA / "lr21_quoted_break.csv", monkeypatch)
    assert s.meta["columns"] == ["Wavenumber (cm-1)", "Absorbance"]
    assert len(s) == 9 and s.x[0] == 2100.0 and s.y[0] == 0.1  # the file's first data row


def test_a_carriage_return_inside_a_comment_ends_the_line_in_both_passes(tmp_path, monkeypatch):
    p = write(tmp_path, "x,absorbance\n1,2 # note\r5,6\n2,3\n3,4\r\n")
    s = both(p, monkeypatch)
    assert s.x.tolist() == [1.0, 2.0, 3.0, 5.0]  # "5,6" after the lone CR is a row
    bad = write(tmp_path, "x,absorbance\n1,2\r2,3\r3,x\r", "bad.csv")
    assert both(bad, monkeypatch)[0] == 4  # line numbers count lone CRs as line ends


@pytest.mark.parametrize("text", [
    '"Wavenumber (cm-1)","Absorbance","Reference"\n1,2,5\n2,3,6\n3,4,7\n',
    '"Wavenumber (cm-1)"\t"Absorbance"\t"Reference"\n1\t2\t5\n2\t3\t6\n3\t4\t7\n',
    '"Wavenumber (cm-1)"  "Absorbance"  "Reference"\n1 2 5\n2 3 6\n3 4 7\n',
    '"wavenumber" "Absorbance" "Reference"\n1 2 5\n2 3 6\n3 4 7\n',
])
def test_quoted_column_names_are_matched_by_name(tmp_path, monkeypatch, text):
    p = write(tmp_path, text)
    s = both(p, monkeypatch, y_column="Reference", y_kind="absorbance")
    assert s.y.tolist() == [5.0, 6.0, 7.0]
    assert both(p, monkeypatch, y_column='"Absorbance"').y.tolist() == [2.0, 3.0, 4.0]


def test_non_finite_values_in_unread_columns_are_accepted_by_both_passes(tmp_path, monkeypatch):
    p = write(tmp_path, "x,absorbance,spare\n1,2,nan\n2,3,inf\n3,4,-Infinity\n")
    assert both(p, monkeypatch).y.tolist() == [2.0, 3.0, 4.0]
    line, reason = both(p, monkeypatch, y_column="spare", y_kind="absorbance")
    assert line == 2 and "not finite" in reason
    words = write(tmp_path, "x,absorbance,spare\n1,2,n/a\n2,3,abc\n3,4,5\n", "w.csv")
    line, reason = both(words, monkeypatch)
    assert line == 3 and "'abc' is not a number" in reason


def test_a_short_row_is_refused_at_its_line_even_in_an_unread_column(tmp_path, monkeypatch):
    p = write(tmp_path, "x,absorbance,spare\n1,2,3\n2,3\n3,4,5\n")
    line, reason = both(p, monkeypatch)
    assert line == 3 and "2 field(s)" in reason


def test_header_fields_give_resolution_state_and_technique(tmp_path, monkeypatch):
    p = write(tmp_path, "# Resolution: 0.5 cm-1\n# State = gas\n# Technique: FTIR\n"
              "wavenumber (cm-1),absorbance\n1,2\n2,3\n3,4\n")
    s = both(p, monkeypatch)
    assert s.meta["resolution"] == 0.5 and s.meta["sample_state"] == "gas"
    assert s.meta["technique"] == "infrared" and "x_axis" not in s.meta


def test_a_resolution_in_nanometres_is_not_a_wavenumber_width(tmp_path, monkeypatch):
    p = write(tmp_path, "# resolution: 2 nm\nwavelength (nm),absorbance\n1,2\n2,3\n3,4\n")
    assert "resolution" not in both(p, monkeypatch).meta


def test_a_raman_export_keeps_its_shift_axis_with_anti_stokes_values(monkeypatch):
    s = both(DATA / "lr20_raman_export.csv", monkeypatch)
    assert s.x[0] == -300.0 and s.x[-1] == 1300.0  # as written
    assert s.meta["x_axis"] == "raman_shift" and s.meta["technique"] == "raman"
    assert s.meta["resolution"] == 2.0  # the '"Resolution";"2 cm-1"' header row
    assert s.y_kind == "intensity" and s.meta["columns"][0] == "Raman Shift (cm-1)"


@pytest.mark.parametrize("label, values, percent", [
    ("%T", "95,50,10", True), ("Transmittance (%)", "0.95,0.5,0.1", True),
    ("transmittance (fraction)", "0.95,0.5,0.1", False),
    ("transmittance", "95,50,10", True), ("transmittance", "1.505,0.5,0.1", False),
])
def test_percent_is_decided_by_the_label_before_the_data_range(tmp_path, monkeypatch, label,
                                                                 values, percent):
    rows = "".join(f"{k + 1},{v}\n" for k, v in enumerate(values.split(",")))
    s = both(write(tmp_path, f"wavenumber (cm-1),{label}\n{rows}"), monkeypatch)
    assert s.meta["transmittance_percent"] is percent
    written = np.array([float(v) for v in values.split(",")])
    assert s.y.tolist() == (written / 100 if percent else written).tolist()


def test_the_percent_argument_wins_and_is_recorded(tmp_path, monkeypatch):
    p = write(tmp_path, "wavenumber (cm-1),transmittance\n1,1.8\n2,1.2\n3,0.9\n")
    s = both(p, monkeypatch, percent=True)
    assert s.y == pytest.approx([0.018, 0.012, 0.009], rel=1e-15)
    assert s.meta["read_options"]["percent"] is True
    assert read_spectrum(p, **s.meta["read_options"]) == s


def test_a_utf16_text_file_is_read(tmp_path, monkeypatch):
    p = write(tmp_path, "Wavenumber (cm-1)\tAbsorbance\n1\t0.5\n2\t0.25\n3\t0.125\n"
              .encode("utf-16"))
    assert both(p, monkeypatch).y.tolist() == [0.5, 0.25, 0.125]


def test_unicode_digits_are_not_numbers(tmp_path, monkeypatch):
    # Python's float() takes Arabic-Indic digits; a spectrum file's numbers are ASCII
    line, reason = both(write(tmp_path, "x,absorbance\n1,2\n2,\u0663\n3,4\n"), monkeypatch)
    assert line == 3 and "not a number" in reason


CSV_CORPUS = Path("/usr/share/nodejs/csv-spectrum/csvs")


@pytest.mark.slow
def test_a_public_corpus_of_awkward_csv_files_gives_only_format_errors(tmp_path, monkeypatch):
    # csv-spectrum (BSD-2-Clause), a public test corpus of CSV edge cases: quoted commas and
    # line breaks, escaped quotes, CR LF, UTF-8; Debian package node-csv-spectrum
    if not CSV_CORPUS.is_dir():
        pytest.skip("the public CSV corpus is not installed (apt-get install node-csv-spectrum)")
    files = sorted(CSV_CORPUS.glob("*.csv"))
    assert len(files) >= 10
    for f in files:
        outcome = both(f, monkeypatch, y_kind="intensity")  # both passes agree
        assert isinstance(outcome, tuple), f.name  # none of them holds a spectrum
        # three numeric rows appended make a spectrum only where the layout allows one
        p = write(tmp_path, f.read_bytes() + b"\n10,20,30\n11,21,31\n12,22,32\n", f.name)
        both(p, monkeypatch, y_kind="intensity")


def test_a_row_of_units_under_the_names_is_merged_into_the_labels(tmp_path, monkeypatch):
    p = write(tmp_path, "Wavelength,Transmittance\nnm,%\n2000,50\n2500,60\n3000,70\n")
    s = both(p, monkeypatch)
    assert s.meta["columns"] == ["Wavelength (nm)", "Transmittance (%)"]
    assert s.meta["x_unit"] == "nm" and s.y.tolist() == [0.7, 0.6, 0.5]  # 70 %, 60 %, 50 %


def test_spreadsheet_rows_with_empty_trailing_cells_are_read(tmp_path, monkeypatch):
    p = write(tmp_path, "wavenumber (cm-1),absorbance,,\n1,0.5,,\n2,0.25,,\n3,0.125,,\n")
    s = both(p, monkeypatch)
    assert s.y.tolist() == [0.5, 0.25, 0.125] and s.meta["columns"] == [
        "wavenumber (cm-1)", "absorbance"]


def test_a_file_that_cannot_be_opened_is_a_format_error_naming_it(tmp_path, monkeypatch):
    import builtins

    p = write(tmp_path, "x,absorbance\n1,2\n2,3\n3,4\n")
    real_open = builtins.open

    def refusing(file, *args, **kwargs):
        if str(file) == str(p.resolve()):
            raise PermissionError(13, "Permission denied")
        return real_open(file, *args, **kwargs)

    monkeypatch.setattr(builtins, "open", refusing)
    with pytest.raises(SpectrumFormatError, match="Permission denied") as info:
        read_text(p)
    assert info.value.path == str(p.resolve())
    with pytest.raises(SpectrumFormatError, match="cannot read the file"):
        read_text(tmp_path)  # a folder cannot be opened as a file either
