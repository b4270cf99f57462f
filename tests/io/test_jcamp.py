"""JCAMP-DX reading and writing, checked against the IUPAC specification.

Spec: R. S. McDonald and P. A. Wilks, Applied Spectroscopy 42 (1988) 151 (JCAMP-DX 4.24), and
P. Lampen et al., Applied Spectroscopy 48 (1994) 1545 (JCAMP-DX 5.01). The sample files in
tests/data/io were hand-encoded from the spec's tables (see tests/data/io/README.md).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_jcamp, write_jcamp
from widgetkit.io.jcamp import normalise_label, yfactor_for

DATA = Path(__file__).parent.parent / "data" / "io"
LR07 = (DATA / "lr07_difdup.jdx").read_text()


def write(tmp_path, text: str, name: str = "s.jdx") -> Path:
    p = tmp_path / name
    p.write_text(text)
    return p


def test_a_difdup_file_decodes_to_the_hand_encoded_ordinates():
    s = read_jcamp(DATA / "lr07_difdup.jdx")
    # hand-decoded: A00 K T % O | (A10 check) j5 % T j5 J | (H1 check) -> times YFACTOR 0.001
    ints = [100, 102, 104, 104, 110, 95, 95, 95, 80, 81]
    assert s.y == pytest.approx(np.array(ints) * 0.001, rel=1e-15)
    assert s.x.tolist() == list(range(2000, 2010))  # FIRSTX 2000, LASTX 2009, NPOINTS 10
    assert s.y_kind == "absorbance"
    assert s.meta["jcamp"]["origin"] == "Larkspur Ridge bench lab (invented)"
    assert s.meta["jcamp"]["jcampdx"] == "4.24"  # the $$ comment is removed
    assert s.source["format"] == "jcamp-dx"


def test_labels_compare_without_blanks_dashes_slashes_underscores_or_case():
    # spec rule for label names
    assert normalise_label("Data Type") == normalise_label("data_type") == "DATATYPE"
    assert normalise_label("JCAMP-DX") == "JCAMPDX"
    assert normalise_label("PEAK TABLE") == normalise_label("peak/table") == "PEAKTABLE"
    s = read_jcamp(DATA / "lr08_sqz_pac_affn.jdx")  # uses ##FIRST X= and ##LAST_X=
    assert s.x[0] == 100.0 and s.x[-1] == 111.0


def test_sqz_pac_and_affn_lines_in_one_record_decode_alike():
    s = read_jcamp(DATA / "lr08_sqz_pac_affn.jdx")
    assert s.y.tolist() == [1234, -56, 0, 7] * 3  # the same ordinates written three ways


def test_nanometre_transmittance_is_converted_to_ascending_wavenumber():
    s = read_jcamp(DATA / "lr09_nm_transmittance.jdx")
    # 1e7 / lambda[nm] for 2500, 2250 (FIRSTX + DELTAX), 2000 nm
    assert s.x == pytest.approx([1e7 / 2500, 1e7 / 2250, 1e7 / 2000], rel=1e-15)
    assert s.y.tolist() == [0.25, 0.5, 0.9]
    assert s.y_kind == "transmittance" and s.meta["transmittance_percent"] is False


def test_a_peak_table_is_read_as_points_sorted_by_position():
    s = read_jcamp(DATA / "lr10_points.jdx")
    assert s.x.tolist() == [2843.6, 2865.1, 2906.2, 2925.9]  # as written in the file
    assert s.y.tolist() == [0.30, 0.43, 0.51, 0.62]
    assert s.meta["data_form"] == "PEAK TABLE"


def test_a_compound_file_gives_its_first_spectrum_or_the_named_one():
    p = DATA / "lr11_compound.jdx"
    assert read_jcamp(p).y.tolist() == [0.1, 0.2, 0.3]
    assert read_jcamp(p, block="LR-11 reference").y.tolist() == [0.7, 0.8, 0.9]
    assert read_jcamp(p, block=1).meta["title"] == "LR-11 reference"
    with pytest.raises(SpectrumFormatError, match="LR-11 sample"):
        read_jcamp(p, block="LR-11 missing")
    with pytest.raises(SpectrumFormatError, match="out of range"):
        read_jcamp(p, block=2)


def test_a_compound_file_with_fewer_blocks_than_announced_is_refused(tmp_path):
    text = (DATA / "lr11_compound.jdx").read_text().replace("##BLOCKS=2", "##BLOCKS=3")
    with pytest.raises(SpectrumFormatError, match="BLOCKS=3") as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 4


def test_wrong_npoints_is_refused_at_the_npoints_line(tmp_path):
    p = write(tmp_path, LR07.replace("##NPOINTS=10", "##NPOINTS=11"))
    with pytest.raises(SpectrumFormatError, match="NPOINTS=11") as info:
        read_jcamp(p)
    assert info.value.line == 13


def test_a_failed_y_check_is_refused_at_its_line(tmp_path):
    p = write(tmp_path, LR07.replace("2004A10j5", "2004A11j5"))  # check 111 != 110
    with pytest.raises(SpectrumFormatError, match="Y-check") as info:
        read_jcamp(p)
    assert info.value.line == 17


def test_a_truncated_file_is_refused(tmp_path):
    cut = LR07[: LR07.index("2009H1")]
    with pytest.raises(SpectrumFormatError, match="truncated"):
        read_jcamp(write(tmp_path, cut))


def test_a_line_x_that_does_not_match_its_point_is_refused(tmp_path):
    p = write(tmp_path, LR07.replace("2004A10j5", "2007A10j5"))
    with pytest.raises(SpectrumFormatError, match="line is missing") as info:
        read_jcamp(p)
    assert info.value.line == 17


def test_a_firsty_beyond_its_written_digits_is_refused_and_a_nominal_deltax_only_warned(
        tmp_path):
    with pytest.raises(SpectrumFormatError, match="FIRSTY") as info:
        read_jcamp(write(tmp_path, LR07.replace("##FIRSTY=0.100", "##FIRSTY=0.2")))
    assert info.value.line == 14 and "checks='warn'" in str(info.value)
    # x comes from FIRSTX, LASTX and NPOINTS, which the line X values confirm
    s = read_jcamp(write(tmp_path, LR07.replace("##DELTAX=1", "##DELTAX=2")))
    assert s.x.tolist() == list(range(2000, 2010)) and "DELTAX=2" in s.meta["warnings"][0]


def test_ntuples_is_refused_naming_the_label_and_line(tmp_path):
    text = LR07.replace("##XYDATA=(X++(Y..Y))", "##NTUPLES=INFRARED SPECTRUM")
    with pytest.raises(SpectrumFormatError, match="NTUPLES") as info:
        read_jcamp(write(tmp_path, text))
    assert info.value.line == 15


def test_other_variable_lists_are_refused(tmp_path):
    text = LR07.replace("##XYDATA=(X++(Y..Y))", "##XYDATA=(X++(R..R))")
    with pytest.raises(SpectrumFormatError, match=r"\(X\+\+\(R\.\.R\)\)"):
        read_jcamp(write(tmp_path, text))


def test_a_hertz_axis_is_refused_unless_x_unit_is_given(tmp_path):
    p = write(tmp_path, LR07.replace("##XUNITS=1/CM", "##XUNITS=HZ"))
    with pytest.raises(SpectrumFormatError, match="XUNITS=HZ") as info:
        read_jcamp(p)
    assert info.value.line == 6
    assert read_jcamp(p, x_unit="cm-1").x[0] == 2000.0


def test_micrometres_are_converted(tmp_path):
    s = read_jcamp(write(tmp_path, LR07.replace("##XUNITS=1/CM", "##XUNITS=MICROMETERS")))
    assert s.x[-1] == pytest.approx(1e4 / 2000)  # 1e4 / lambda[um]


def test_reflectance_is_read_as_intensity_and_says_so(tmp_path):
    s = read_jcamp(write(tmp_path, LR07.replace("##YUNITS=ABSORBANCE", "##YUNITS=REFLECTANCE")))
    assert s.y_kind == "intensity" and s.meta["y_quantity"] == "reflectance"


def test_percent_transmittance_is_divided_by_one_hundred(tmp_path):
    text = (DATA / "lr09_nm_transmittance.jdx").read_text().replace(
        "0.90 0.50", "90 50").replace("2500 0.25", "2500 25")
    s = read_jcamp(write(tmp_path, text))
    assert s.y.tolist() == [0.25, 0.5, 0.9] and s.meta["transmittance_percent"] is True


def test_unknown_y_units_need_y_kind(tmp_path):
    p = write(tmp_path, LR07.replace("##YUNITS=ABSORBANCE", "##YUNITS=KUBELKA-MUNK"))
    with pytest.raises(SpectrumFormatError, match="y_kind"):
        read_jcamp(p)
    assert read_jcamp(p, y_kind="intensity").y_kind == "intensity"


def test_labels_before_the_title_belong_to_the_first_block(tmp_path):
    own = LR07.replace("##JCAMP-DX=4.24 $$ hand-made test file\n", "")
    text = "##JCAMP-DX=4.24\n##XUNITS=MICROMETERS\n" + own
    s = read_jcamp(write(tmp_path, text))
    assert s.meta["jcamp"]["jcampdx"] == "4.24" and len(s) == 10
    assert s.meta["x_unit"] == "cm-1"  # the block's own ##XUNITS=1/CM wins over the preamble


def test_records_after_the_last_end_are_ignored_with_a_warning_unless_they_hold_data(tmp_path):
    s = read_jcamp(write(tmp_path, LR07 + "##YUNITS=ABSORBANCE\n"))
    assert len(s) == 10 and "line 20" in s.meta["warnings"][0]
    assert len(read_jcamp(write(tmp_path, LR07 + "##END=\n"))) == 10  # a stray END is harmless
    with pytest.raises(SpectrumFormatError, match="outside any block") as info:
        read_jcamp(write(tmp_path, LR07 + "##XYPOINTS=(XY..XY)\n1,2\n"))
    assert info.value.line == 20


def test_the_yfactor_keeps_seven_significant_digits():
    assert yfactor_for(np.array([0.95, -0.2])) == 1e-7  # 0.95 / 1e-7 = 9.5e6: 7 digits
    assert yfactor_for(np.array([1234.5])) == 1e-3
    assert yfactor_for(np.zeros(3)) == 1.0
    assert yfactor_for(np.array([5e-324])) == 1e-300  # clamped, still a normal float


def test_a_written_difdup_file_follows_the_spec_layout(tmp_path):
    x = np.linspace(1000.0, 1100.0, 201)
    s = wk.Spectrum(x, np.exp(-((x - 1050) / 8) ** 2), y_kind="absorbance",
                    meta={"title": "LR demo"})
    p = write_jcamp(s, tmp_path / "o.jdx")
    lines = Path(p).read_text().splitlines()
    assert lines[0] == "##TITLE=LR demo" and lines[-1] == "##END="  # first and last records
    for required in ("##JCAMP-DX=", "##DATA TYPE=", "##ORIGIN=", "##OWNER=", "##XUNITS=",
                     "##YUNITS=", "##XFACTOR=", "##YFACTOR=", "##FIRSTX=", "##LASTX=",
                     "##NPOINTS=", "##FIRSTY=", "##XYDATA=(X++(Y..Y))"):
        assert any(ln.startswith(required) for ln in lines), required  # spec 4.24 labels
    assert max(map(len, lines)) <= 80  # spec line length
    back = read_jcamp(p)
    assert np.array_equal(back.x, s.x)
    # max |y| = 1 (the band peak), so YFACTOR = 1e-6 keeps 7 digits; error <= YFACTOR/2
    assert back.meta["jcamp"]["yfactor"] == "1E-06"
    assert np.max(np.abs(back.y - s.y)) <= 0.5e-6 * (1 + 1e-9)


def test_affn_and_xypoints_forms_round_trip_exactly(tmp_path):
    x = np.linspace(500.0, 600.0, 51)
    s = wk.Spectrum(x, np.cos(x) * 1e-3, y_kind="intensity")
    assert read_jcamp(write_jcamp(s, tmp_path / "a.jdx", form="AFFN")) == s
    uneven = wk.Spectrum(x ** 1.01, s.y, y_kind="intensity")
    assert read_jcamp(write_jcamp(uneven, tmp_path / "p.jdx", form="XYPOINTS")) == uneven
    with pytest.raises(SpectrumFormatError, match="evenly spaced"):
        write_jcamp(uneven, tmp_path / "u.jdx", form="DIFDUP")


values = st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.lists(values, min_size=3, max_size=200), st.floats(-5000, 5000),
       st.floats(0.01, 10.0), st.sampled_from(["absorbance", "transmittance", "intensity"]))
def test_any_evenly_spaced_spectrum_round_trips_through_difdup(tmp_path, ys, x0, dx, kind):
    y = np.array(ys)
    if kind == "transmittance":
        y = np.abs(y) / 1e6  # a fraction, so no percent is detected
    x = x0 + dx * np.arange(y.size)
    s = wk.Spectrum(x, y, y_kind=kind)
    back = read_jcamp(write_jcamp(s, tmp_path / "h.jdx"))
    yf = yfactor_for(y)
    assert back.y_kind == kind
    assert back.x == pytest.approx(s.x, rel=1e-12, abs=1e-9)
    # self-consistency: within the YFACTOR/2 quantisation
    assert np.all(np.abs(back.y - y) <= 0.5 * yf + 1e-12 * np.abs(y).max())


def test_a_descending_file_is_read_ascending_with_its_ordinates(tmp_path):
    text = (LR07.replace("##FIRSTX=2000", "##FIRSTX=2009").replace("##LASTX=2009", "##LASTX=2000")
            .replace("##DELTAX=1", "##DELTAX=-1").replace("2004A10", "2005A10")
            .replace("2000A00", "2009A00").replace("2009H1", "2000H1"))
    s = read_jcamp(write(tmp_path, text))
    assert s.x.tolist() == list(range(2000, 2010))
    ints = [100, 102, 104, 104, 110, 95, 95, 95, 80, 81][::-1]  # hand-decoded, reversed
    assert s.y == pytest.approx(np.array(ints) * 0.001, rel=1e-15)


def test_xfactor_and_yfactor_scale_point_lists(tmp_path):
    text = ("##TITLE=LR-16 scaled points\n##JCAMP-DX=4.24\n##XUNITS=1/CM\n"
            "##YUNITS=ABSORBANCE\n##XFACTOR=0.5\n##YFACTOR=0.01\n##NPOINTS=3\n"
            "##XYPOINTS=(XY..XY)\n2000,10\n2002,20\n2004,30\n##END=\n")
    s = read_jcamp(write(tmp_path, text))
    assert s.x.tolist() == [1000.0, 1001.0, 1002.0]  # values times XFACTOR 0.5
    assert s.y == pytest.approx([0.1, 0.2, 0.3], rel=1e-15)  # values times YFACTOR 0.01


def test_xfactor_scales_the_line_x_of_xydata(tmp_path):
    text = LR07.replace("##XFACTOR=1.0", "##XFACTOR=0.1").replace("2000A00", "20000A00").replace(
        "2004A10", "20040A10").replace("2009H1", "20090H1")
    assert read_jcamp(write(tmp_path, text)).x[0] == 2000.0  # FIRSTX is unscaled (spec)
    with pytest.raises(SpectrumFormatError, match="line is missing"):
        read_jcamp(write(tmp_path, LR07.replace("##XFACTOR=1.0", "##XFACTOR=0.1")))


def test_a_corrupt_dup_count_cannot_expand_beyond_npoints(tmp_path):
    text = LR07.replace("2009H1", "2009H1s99999999")  # a count of 999,999,999
    with pytest.raises(SpectrumFormatError, match="DUP count of 999999999 expands"):
        read_jcamp(write(tmp_path, text))
