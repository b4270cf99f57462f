"""JCAMP-DX files as real exports write them: checks to the written digits, point forms, Raman
shift axes, byte-order marks and line ends, exact decoding of large values.

Spec: R. S. McDonald and P. A. Wilks, Applied Spectroscopy 42 (1988) 151 (JCAMP-DX 4.24), and
P. Lampen et al., Applied Spectroscopy 48 (1994) 1545 (JCAMP-DX 5.01). The lr16-lr19 files are
written by tests/data/io/make_quirk_files.py (simulated or invented data, our own scenario);
values below are hand-decoded from the spec's SQZ/DIF tables or copied from the file text.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_jcamp, read_spectrum

DATA = Path(__file__).parent.parent / "data" / "io"
LR07 = (DATA / "lr07_difdup.jdx").read_text()
LR16 = (DATA / "lr16_gas_coefficients.jdx").read_text()


def write(tmp_path, text: str | bytes, name: str = "q.jdx") -> Path:
    p = tmp_path / name
    p.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return p


def test_firsty_written_with_three_significant_digits_agrees_when_truncated():
    s = read_jcamp(DATA / "lr16_gas_coefficients.jdx")
    # hand-decoded first ordinate "H5789" (SQZ H = 8) times YFACTOR 1.0E-12; the file says
    # ##FIRSTY=8.57E-08, three digits truncated
    assert s.y[0] == pytest.approx(8.5789e-08, rel=1e-12)
    assert s.meta["checks"]["FIRSTY"] == "agrees to the written digits (truncated)"
    assert s.meta["checks"]["LASTY"] == "agrees to the written digits (truncated)"
    assert "warnings" not in s.meta


def test_a_gas_reference_in_absorption_coefficients_reads_as_absorbance_with_its_labels():
    s = read_spectrum(DATA / "lr16_gas_coefficients.jdx")
    assert s.y_kind == "absorbance" and s.meta["y_quantity"] == "absorption coefficient"
    assert s.meta["y_unit"] == "(MICROMOL/MOL)-1M-1 (BASE 10)"  # as written
    assert s.meta["resolution"] == 0.125 and s.meta["sample_state"] == "gas"  # ##RESOLUTION
    assert s.meta["technique"] == "infrared" and "x_axis" not in s.meta
    assert s.meta["jcamp"]["$lrpathlength"] == "1 M"  # private labels are kept
    assert len(s) == 1601 and s.x[0] == 2100.0 and s.x[-1] == 2200.0  # NPOINTS, FIRSTX, LASTX


@pytest.mark.parametrize("label, written", [("FIRSTY", "8.59E-08"), ("FIRSTY", "8.56E-08"),
                                            ("LASTY", "3.10E-06")])
def test_a_value_beyond_its_written_digits_is_refused_unless_checks_warn(tmp_path, label,
                                                                          written):
    old = next(ln for ln in LR16.splitlines() if ln.startswith(f"##{label}="))
    p = write(tmp_path, LR16.replace(old, f"##{label}={written}"))
    with pytest.raises(SpectrumFormatError, match=label) as info:
        read_jcamp(p)
    assert info.value.line == LR16.splitlines().index(old) + 1
    s = read_jcamp(p, checks="warn")
    assert len(s) == 1601 and label in s.meta["warnings"][0]
    assert s.meta["read_options"]["checks"] == "warn"
    assert read_spectrum(p, **s.meta["read_options"]) == s


def test_a_firsty_written_without_yfactor_says_so(tmp_path):
    # the decoded integer 85789 written as FIRSTY: the writer left YFACTOR out
    p = write(tmp_path, LR16.replace("##FIRSTY=8.57E-08", "##FIRSTY=85789"))
    with pytest.raises(SpectrumFormatError, match="left YFACTOR out"):
        read_jcamp(p)


def test_a_nominal_deltax_is_a_warning_and_x_follows_firstx_lastx_npoints():
    s = read_jcamp(DATA / "lr17_nominal_deltax.jdx")
    text = (DATA / "lr17_nominal_deltax.jdx").read_text()
    first = float(text.split("##FIRSTX=")[1].split()[0])
    last = float(text.split("##LASTX=")[1].split()[0])
    assert np.array_equal(s.x, np.linspace(first, last, 830))  # the spec's x rule
    assert s.meta["checks"]["DELTAX"].startswith("nominal")
    assert "DELTAX=0.125" in s.meta["warnings"][0]


def test_line_x_values_that_follow_deltax_instead_of_lastx_are_refused_with_a_hint(tmp_path):
    text = LR07.replace("##LASTX=2009", "##LASTX=2018")  # DELTAX=1 and the X values agree
    with pytest.raises(SpectrumFormatError, match="follow ##DELTAX instead") as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 17
    assert "line X" in read_jcamp(write(tmp_path, text), checks="warn").meta["warnings"][0]


def test_a_raman_export_in_xy_pairs_keeps_its_shift_axis_and_anti_stokes_side():
    s = read_spectrum(DATA / "lr18_raman_xy.jdx")  # BOM, CR LF, ##JCAMP-DX= before ##TITLE=
    assert s.meta["data_form"] == "XYDATA" and len(s) == 551
    assert s.x[0] == -800.0 and s.x[-1] == 1400.0  # as written: negative = anti-Stokes
    assert s.y[0] == 123.7  # "-800.0, 123.7" in the file
    assert s.y_kind == "intensity" and s.meta["technique"] == "raman"
    assert s.meta["x_axis"] == "raman_shift" and s.meta["x_unit"] == "cm-1"
    assert s.meta["resolution"] == 4.0 and s.meta["sample_state"] == "liquid"  # "4 CM-1"
    assert s.meta["jcamp"]["jcampdx"] == "5.01"


@pytest.mark.parametrize("form", ["(XY..XY)", "(XYXY)", "(XY...XY)"])
def test_xydata_point_forms_are_read(tmp_path, form):
    text = ("##TITLE=LR-22 points\n##JCAMP-DX=5.01\n##DATA TYPE=INFRARED SPECTRUM\n"
            "##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##YFACTOR=0.5\n##NPOINTS=3\n"
            f"##FIRSTY=0.5\n##XYDATA={form}\n1000.5,1; 1001.5,2\n1002.5 3.0E+00\n##END=\n")
    s = read_jcamp(write(tmp_path, text))
    assert s.x.tolist() == [1000.5, 1001.5, 1002.5]  # as written
    assert s.y.tolist() == [0.5, 1.0, 1.5]  # values times YFACTOR 0.5


def test_a_peak_table_with_widths_keeps_x_and_y(tmp_path):
    text = ("##TITLE=LR-23 peaks\n##JCAMP-DX=5.01\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n"
            "##PEAK TABLE=(XYW..XYW)\n2000,0.5,1.2 2010,0.25,0.9\n2020,0.125,1.1\n##END=\n")
    s = read_jcamp(write(tmp_path, text))
    assert s.x.tolist() == [2000.0, 2010.0, 2020.0] and s.y.tolist() == [0.5, 0.25, 0.125]


def test_a_missing_value_in_a_point_list_names_its_line(tmp_path):
    text = ("##TITLE=t\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##XYPOINTS=(XY..XY)\n1,2\n2,?\n"
            "3,4\n##END=\n")
    with pytest.raises(SpectrumFormatError, match="missing") as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 6


def test_a_raman_block_on_absolute_wavenumbers_is_not_called_a_shift(tmp_path):
    text = ("##TITLE=LR-24 raw Raman\n##DATA TYPE=RAMAN SPECTRUM\n##XUNITS=1/CM\n"
            "##XYDATA=(XY..XY)\n18000,5\n18100,6\n18200,7\n##END=\n")
    s = read_jcamp(write(tmp_path, text))
    assert s.meta["technique"] == "raman" and "x_axis" not in s.meta
    assert "absolute" in s.meta["warnings"][0]


def test_a_film_transmittance_that_peaks_at_1_505_stays_a_fraction():
    s = read_spectrum(DATA / "lr19_film_transmittance.jdx")
    assert s.y_kind == "transmittance" and s.meta["transmittance_percent"] is False
    # hand-decoded first ordinate "A5050" (SQZ A = 1): 15050 times YFACTOR 0.0001
    assert s.y[0] == pytest.approx(1.505, rel=1e-15) and s.y.max() == s.y[0]
    assert "1.505" in s.meta["warnings"][0] and "percent=True" in s.meta["warnings"][0]
    p = read_spectrum(DATA / "lr19_film_transmittance.jdx", percent=True)
    assert np.allclose(p.y, s.y / 100, rtol=1e-15) and p.meta["percent_from"].startswith(
        "the percent")


def test_percent_is_taken_from_yunits_before_the_data_range(tmp_path):
    text = (DATA / "lr09_nm_transmittance.jdx").read_text()
    p = write(tmp_path, text.replace("##YUNITS=TRANSMITTANCE", "##YUNITS=% TRANSMITTANCE"))
    s = read_jcamp(p)  # values 0.25 .. 0.9 but the label says percent
    assert s.y == pytest.approx([0.0025, 0.005, 0.009], rel=1e-15)
    assert s.meta["percent_from"].startswith("##YUNITS")


def test_utf16_and_lone_carriage_return_files_read_like_the_original(tmp_path):
    ref = read_jcamp(DATA / "lr07_difdup.jdx")
    u16 = read_spectrum(write(tmp_path, LR07.encode("utf-16"), "u16.jdx"))
    cr = read_spectrum(write(tmp_path, LR07.replace("\n", "\r"), "cr.jdx"))
    assert np.array_equal(u16.y, ref.y) and np.array_equal(cr.y, ref.y)
    assert np.array_equal(u16.x, ref.x) and np.array_equal(cr.x, ref.x)


def test_a_failed_y_check_is_kept_as_a_warning_with_checks_warn(tmp_path):
    p = write(tmp_path, LR07.replace("2004A10j5", "2004A11j5"))  # check 111 != 110
    s = read_jcamp(p, checks="warn")
    # the line's own value 111 is kept for point 4 (hand-decoded), the rest follow from it
    assert s.y[4] == pytest.approx(0.111) and s.y[5] == pytest.approx(0.096)
    assert "Y-check failed at line 17" in s.meta["warnings"][0]


def test_a_missing_end_is_refused_strictly_and_read_with_warn(tmp_path):
    p = write(tmp_path, LR07.replace("##END=\n", ""))
    with pytest.raises(SpectrumFormatError, match="without ##END"):
        read_jcamp(p)
    assert len(read_jcamp(p, checks="warn")) == 10


def test_checks_and_percent_options_are_validated():
    with pytest.raises(SpectrumFormatError, match="checks must be one of"):
        read_spectrum(DATA / "lr07_difdup.jdx", checks="lenient")
    with pytest.raises(SpectrumFormatError, match="percent must be one of"):
        read_spectrum(DATA / "lr07_difdup.jdx", percent="yes")


def _xydata_file(lines: list[str], npoints: int, yfactor: str = "1") -> str:
    return ("##TITLE=big\n##XUNITS=1/CM\n##YUNITS=ARBITRARY UNITS\n##FIRSTX=1\n"
            f"##LASTX={npoints}\n##NPOINTS={npoints}\n##YFACTOR={yfactor}\n"
            "##XYDATA=(X++(Y..Y))\n" + "\n".join(lines) + "\n##END=\n")


def test_integers_beyond_two_to_the_53_stay_exact_next_to_decimal_values(tmp_path):
    # 2**53 + 1 = 9007199254740993 is not a float64; decoded exactly then rounded once
    text = _xydata_file(["1 9007199254740993J", "2 9007199254740994 0.5"], 3)
    s = read_jcamp(write(tmp_path, text))
    assert s.y.tolist() == [float(9007199254740993), float(9007199254740994), 0.5]


def test_a_dif_running_sum_beyond_int64_does_not_wrap_around(tmp_path):
    # 9e18 + 9e17 exceeds 2**63 - 1 = 9.22e18; exact Python integers, then float64
    text = _xydata_file(["1 9000000000000000000R00000000000000000",
                         "2 9900000000000000000 1"], 3)
    s = read_jcamp(write(tmp_path, text))
    assert s.y.tolist() == [9e18, 9.9e18, 1.0]


def test_y_check_values_near_1e16_compare_exactly(tmp_path):
    # 1e16 + 1 then +2 (DIF "K"); the check repeats 10000000000000003 exactly
    text = _xydata_file(["1 10000000000000001K", "2 10000000000000003 0.25"], 3)
    s = read_jcamp(write(tmp_path, text))
    assert s.y[:2].tolist() == [float(10000000000000001), float(10000000000000003)]


def test_dup_counts_whose_sum_overflows_int64_raise_a_format_error(tmp_path):
    text = _xydata_file(["1 A" + "s99999999999999999" + "B" + "s99999999999999999"], 3)
    with pytest.raises(SpectrumFormatError, match="DUP count"):
        read_jcamp(write(tmp_path, text))


def test_unsigned_exponents_in_an_all_affn_block_are_exponents(tmp_path):
    # "1.5E3" in a block with no other ASDF letter: an AFFN exponent (1500), not 1.5 and 53
    text = _xydata_file(["1 1.5E3 2.5e-1 4E2"], 3)
    assert read_jcamp(write(tmp_path, text)).y.tolist() == [1500.0, 0.25, 400.0]


def test_a_lone_sqz_five_after_a_decimal_x_is_still_sqz(tmp_path):
    # our writer's "X" + SQZ: "1.5E00" must be X = 1.5 then SQZ E00 = 500 when NPOINTS says so
    text = ("##TITLE=t\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##FIRSTX=1.5\n##LASTX=3.5\n"
            "##NPOINTS=3\n##XYDATA=(X++(Y..Y))\n1.5E00\n2.5E01\n3.5E02\n##END=\n")
    assert read_jcamp(write(tmp_path, text)).y.tolist() == [500.0, 501.0, 502.0]


def test_a_written_raman_shift_spectrum_reads_back_as_a_shift(tmp_path):
    x = np.linspace(-400.0, 1600.0, 201)
    s = wk.Spectrum(x, 1 + np.exp(-((x - 1000.0) / 5) ** 2), y_kind="intensity",
                    meta={"x_label": "Raman shift (cm-1)"})
    back = read_jcamp(wk.write_jcamp(s, tmp_path / "r.jdx", form="AFFN"))
    assert back == s and back.meta["x_axis"] == "raman_shift"  # self-consistency


@pytest.mark.parametrize("value, message", [("0.5E+400292241837", "exponent"),
                                            ("1" * 80, "80 digits")])
def test_numbers_no_float64_can_hold_are_refused_at_once(tmp_path, value, message):
    # found by fuzzing: an exponent of 4e11 once made the decoder build a 4e11-digit integer
    text = _xydata_file([f"1 5 {value}K", "2 7"], 3)
    with pytest.raises(SpectrumFormatError, match=message) as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 9


def test_numeric_labels_hold_nothing_but_their_number(tmp_path):
    with pytest.raises(SpectrumFormatError, match="NPOINTS") as info:
        read_jcamp(write(tmp_path, LR07.replace("##NPOINTS=10", "##NPOINTS=10x")))
    assert info.value.line == 13


@pytest.mark.parametrize("form", ["DIFDUP", "AFFN", "XYPOINTS", "CSV"])
def test_typed_metadata_survive_a_write_and_a_read(tmp_path, form):
    x = np.linspace(-200.0, 1800.0, 101)
    meta = {"title": "LR-25 typed", "resolution": 0.5, "sample_state": "liquid",
            "technique": "raman", "x_axis": "raman_shift", "y_unit": "counts"}
    s = wk.Spectrum(x, 5 + np.cos(x / 50), y_kind="intensity", meta=meta)
    path = (wk.write_csv(s, tmp_path / "t.csv") if form == "CSV" else
            wk.write_jcamp(s, tmp_path / "t.jdx", form=form))
    back = read_spectrum(path)
    for key in ("resolution", "sample_state", "technique", "x_axis"):
        assert back.meta[key] == meta[key], key  # self-consistency: written then read
    assert back.x[0] == -200.0  # the anti-Stokes side is kept


def test_an_absorption_coefficient_unit_is_written_back_and_percent_never_is(tmp_path):
    s = read_spectrum(DATA / "lr16_gas_coefficients.jdx")
    back = read_spectrum(wk.write_jcamp(s, tmp_path / "c.jdx"))
    assert back.meta["y_unit"] == s.meta["y_unit"] and back.meta["resolution"] == 0.125
    t = read_spectrum(DATA / "lr14_semicolon_percent.csv")  # "Transmittance (%)"
    again = read_spectrum(wk.write_jcamp(t, tmp_path / "t.jdx", form="XYPOINTS"))
    assert np.array_equal(again.y, t.y)  # written as a fraction: not divided twice
    with pytest.raises(SpectrumFormatError, match="form must be"):
        wk.write_jcamp(s, tmp_path / "x.jdx", form="PACKED")


def test_a_wrong_npoints_is_read_with_warn_only_when_the_line_x_values_place_the_data(
        tmp_path):
    x = np.linspace(1000.0, 1100.0, 401)
    s = wk.Spectrum(x, np.exp(-((x - 1040.0) / 3.0) ** 2), y_kind="absorbance")
    text = Path(wk.write_jcamp(s, tmp_path / "w.jdx")).read_text()
    wrong = write(tmp_path, text.replace("##NPOINTS=401", "##NPOINTS=406"), "n.jdx")
    with pytest.raises(SpectrumFormatError, match="NPOINTS=406"):
        read_jcamp(wrong)
    back = read_jcamp(wrong, checks="warn")  # every line X fits 401 points: self-consistency
    assert np.array_equal(back.x, x) and "NPOINTS=406" in back.meta["warnings"][0]
    lines = text.splitlines()
    data_end = lines.index("##END=")
    cut = "\n".join(lines[:data_end - 4] + lines[data_end:]) + "\n"  # the last lines lost
    with pytest.raises(SpectrumFormatError, match="NPOINTS=401"):
        read_jcamp(write(tmp_path, cut, "c.jdx"), checks="warn")


def test_a_micrometre_survey_with_a_continued_owner_label_is_read():
    # hand-made file: ##OWNER= continues over two more lines, x in micrometres times XFACTOR
    s = read_spectrum(DATA / "lr26_micrometre_survey.jdx")
    assert s.meta["jcamp"]["owner"].splitlines()[2] == "free to use."
    # 1e4 / lambda[um] for 2.509 um (LASTX) and 2.500 um (FIRSTX), ascending wavenumber
    assert s.x[0] == pytest.approx(1e4 / 2.509, rel=1e-12)
    assert s.x[-1] == pytest.approx(1e4 / 2.5, rel=1e-12)
    assert s.y[-1] == pytest.approx(0.9) and s.y[0] == pytest.approx(0.55)  # 9000, 5500 x 1e-4
    assert s.meta["sample_state"] == "gas" and "resolution" not in s.meta  # "4" in um: unsaid
    assert s.meta["transmittance_percent"] is False


def test_a_huge_npoints_with_a_matching_dup_count_fails_at_once(tmp_path):
    # a corrupt pair: NPOINTS 3e7 and one DUP count of 3e7 would fill gigabytes of memory
    text = _xydata_file(["1 A" + "S" + "29999999"], 30_000_000)
    with pytest.raises(SpectrumFormatError, match="not a spectrum size") as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 6
