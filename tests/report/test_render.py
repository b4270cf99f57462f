"""Reports show exactly the session's values, rounded by their uncertainties, in one notation.

The session analysed here is the demo spectrum (invented scenario, simulated data): every
check is a self-consistency check between the session and what the report says, read back
from the report.
"""

from __future__ import annotations

import json
import math
import re

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.report import (
    ReportFormatError,
    collect,
    parse_cell,
    parse_uncertainty,
    read_report_csv,
    render_csv,
    render_html,
    render_latex,
    render_markdown,
    write_report,
)
from widgetkit.report.cells import table_columns
from widgetkit.report.figures import spectrum_figure, to_svg

from .mdtables import md_section, md_tables


def _shown_decimals(cell: str) -> int:
    mant = cell.split("(")[0]
    exp = int(cell.split("e")[1]) if "e" in cell else 0
    return len(mant.split(".")[1]) - exp if "." in mant else -exp


def _agrees(cell: str, value: float, stderr: float | None) -> bool:
    """Does a value(uncertainty) cell show ``value`` and ``stderr`` rounded to its digits?"""
    v, u = parse_uncertainty(cell)
    half = 0.5 * 10.0 ** (-_shown_decimals(cell))
    if u is not None:  # "12350(20)": rounded to the uncertainty's leading decade
        half = max(half, 0.5 * 10.0 ** math.floor(math.log10(u)))
    ok = abs(v - value) <= half * (1 + 1e-9) + 1e-12 * abs(value)
    if stderr is not None and math.isfinite(stderr) and stderr > 0:
        # the uncertainty is rounded to 1 significant digit (possibly up a decade: 0.96 -> 1)
        ok = ok and u is not None and abs(u - stderr) <= max(half, 0.5 * 10 ** math.floor(
            math.log10(u))) * (1 + 1e-9)
    return ok


def test_parse_uncertainty_reads_the_notation_of_the_trade():
    # 2885.977(3) = 2885.977 ± 0.003 (common practice, as in the CODATA tables)
    assert parse_uncertainty("2885.977(3)") == pytest.approx((2885.977, 0.003))
    # CODATA style of the Newtonian constant of gravitation, 6.67430(15)e-11 (common practice)
    assert parse_uncertainty("6.67430(15)e-11") == pytest.approx((6.67430e-11, 0.00015e-11))
    assert parse_uncertainty("12350(20)") == pytest.approx((12350.0, 20.0))
    assert parse_uncertainty("296.1") == (296.1, None)
    with pytest.raises(ValueError):
        parse_uncertainty("R(3)")


def test_value_columns_are_paired_with_their_error_columns():
    df = pd.DataFrame(columns=["line_id", "position", "position_err", "area", "area_err", "height"])
    cols = [(c.name, c.err) for c in table_columns(df)]
    assert cols == [("line_id", None), ("position", "position_err"), ("area", "area_err"),
                    ("height", None)]
    cols = [(c.name, c.err) for c in table_columns(pd.DataFrame(columns=["name", "value", "stderr"]))]
    assert cols == [("name", None), ("value", "stderr")]


def test_markdown_constants_equal_the_session_constants(session, data):
    rows = md_tables(render_markdown(data))["Constants"]
    consts = session.constants
    assert len(rows) == len(consts) > 0
    for row, (_, c) in zip(rows, consts.iterrows()):
        # isotopologues as the trade writes them, units in one notation (the data keep ASCII)
        assert row["isotopologue"] == wk.formatting.display_isotopologue(c["isotopologue"])
        assert row["isotopologue"] in ("H³⁵Cl", "H³⁷Cl") and row["name"] == c["name"]
        assert row["unit"] == c["unit"].replace("cm-1", "cm⁻¹")
        stderr = None if pd.isna(c["stderr"]) else float(c["stderr"])
        if stderr is not None:
            assert _agrees(row["value"], float(c["value"]), stderr), (row, c.to_dict())
    stats = {r["name"]: r["value"] for r in rows}
    assert re.fullmatch(r"0\.00\d\d\d", stats["rms"])        # a statistic: 3 significant digits
    assert stats["n_lines"].isdigit()


def test_markdown_lines_and_assignments_equal_the_session_tables(session, data):
    tables = md_tables(render_markdown(data))
    lines = session.lines
    for row, (_, ln) in zip(tables["Fitted lines"], lines.iterrows(), strict=True):
        assert int(row["line"]) == ln["line_id"]
        assert _agrees(row["position (cm⁻¹)"], ln["position"], ln["position_err"])
        assert _agrees(row["area"], ln["area"], ln["area_err"])
    a = session.assignments
    for row, (_, r) in zip(tables["Assignments"], a.iterrows(), strict=True):
        assert parse_cell(row["label"]) == (r["label"] if isinstance(r["label"], str) else None)
        if "outlier" in row:                   # left out when no line is one
            assert parse_cell(row["outlier"]) == bool(r["outlier"])
        else:
            assert not a["outlier"].any()
        if pd.notna(r["obs_minus_calc"]):
            # obs − calc rounded to the decimal place of the position as shown
            shown = row["obs − calc (cm⁻¹)"]
            decimals = _shown_decimals(row["position (cm⁻¹)"])
            assert _shown_decimals(shown) == decimals, (shown, row["position (cm⁻¹)"])
            assert abs(float(shown) - r["obs_minus_calc"]) <= 0.5 * 10.0 ** -decimals * (1 + 1e-9)
        # weights 1/σ² with two significant digits (σ itself is known to about one)
        w = row["weight (cm²)"]
        assert float(w) == pytest.approx(float(f"{r['weight']:.2g}"), rel=1e-12)
        assert len(re.sub(r"e.*|^0\.0*|\.", "", w).rstrip("0") or "0") <= 2, w


def test_columns_without_any_entry_are_left_out_and_said_so(session, data):
    text = render_markdown(data)
    a = session.assignments
    empty = [c for c in a.columns if a[c].isna().all() or (a[c].dtype == bool and not a[c].any())]
    assert empty                                    # e.g. no blended line in the demo band
    heads = list(md_tables(text)["Assignments"][0])
    for c in empty:
        assert c not in heads and wk.formatting.column_label(c) not in heads
    assert "Columns without any entry, left out here: " + ", ".join(empty) + "." in text
    assert set(empty) <= set(read_report_csv(render_csv(data))["assignments"].columns)  # CSV: all


def test_no_number_shows_more_digits_than_its_uncertainty_supports(data):
    text = render_markdown(data)
    for title in ("Fitted lines", "Assignments", "Constants", "Combination differences"):
        for row in md_tables(text)[title]:
            for cell in row.values():
                # no plain float of 7 or more significant digits (the 10-digit cells are gone)
                assert not re.fullmatch(r"-?\d*\.\d{7,}", cell), (title, cell)


def test_markdown_names_the_source_hash_and_every_step_from_zero(session, data):
    text = render_markdown(data)
    tables = md_tables(text)
    src = session.sources[0]
    assert tables["Source data"][0]["sha256 of the file"] == src["sha256"]
    steps = tables["Processing record"]
    assert [s["kind"] for s in steps] == [s.kind for s in session.history]
    assert [int(s["step"]) for s in steps] == list(range(len(session.history)))  # load = step 0
    assert steps[0]["kind"] == "load"
    for shown, step in zip(steps, session.history):
        assert json.loads(shown["parameters"]) == step.params
    assert {r["package"]: r["version"] for r in tables["Software"]}["numpy"] == np.__version__
    notes = md_section(text, "Notes of the assignment")
    assert len(notes.strip().splitlines()) == len(session.assignment.messages)


def test_one_unit_notation_in_markdown_and_html(data):
    for text in (render_markdown(data), render_html(data, figures=False)):
        prose = re.sub(r"`[^`]*`", "", text)           # parameters are shown as recorded
        assert "cm-1" not in prose and "cm⁻¹" in prose
        assert "1H-35Cl" not in prose and "H³⁵Cl" in prose


def test_the_report_says_when_verification_was_not_run(session, data):
    assert data.verified is None
    for text in (render_markdown(data), render_html(data, figures=False), render_latex(data)):
        assert "Verification not run" in text and "widgetkit verify" in text
    checked = collect(session, verify=True)
    text = render_markdown(checked)
    assert "Verification not run" not in text and "Verified: all 8 steps replay" in text


def test_csv_tables_each_read_with_pandas_and_equal_the_session(session, data):
    texts = render_csv(data, index_name="r.csv")
    assert list(texts)[0] == "r.csv"
    for name, text in texts.items():
        assert not text.startswith("#")                   # no comment lines, no sections
        df = pd.read_csv(pd.io.common.StringIO(text))     # every file is one plain table
        assert len(df.columns) >= 1, name
    index = pd.read_csv(pd.io.common.StringIO(texts["r.csv"]))
    assert set(index["file"]) == set(texts) - {"r.csv"}
    assert dict(zip(index["table"], index["rows"]))["lines"] == len(session.lines)
    tables = read_report_csv(texts)
    pd.testing.assert_frame_equal(tables["constants"].reset_index(drop=True),
                                  session.constants.reset_index(drop=True), check_dtype=False,
                                  check_exact=True)
    got, want = tables["lines"], session.lines
    for col in ("position", "position_err", "area", "area_err", "fwhm", "fwhm_err"):
        assert np.array_equal(got[col].to_numpy(float), want[col].to_numpy(float)), col
    a = tables["assignments"]
    assert np.array_equal(a["obs_minus_calc"].to_numpy(float),
                          session.assignments["obs_minus_calc"].to_numpy(float), equal_nan=True)
    assert [json.loads(p) for p in tables["steps"]["params"]] == [s.params for s in session.history]
    assert tables["steps"]["step"].tolist() == list(range(len(session.history)))
    assert tables["sources"]["sha256"].iloc[0] == session.sources[0]["sha256"]
    assert tables["notes"]["message"].tolist() == list(session.assignment.messages)
    about = dict(zip(tables["report"]["key"], tables["report"]["value"]))
    assert about["verified"] == "not run"
    assert tables["methods"]["paragraph"].str.contains("reduced chi-square").any()


def test_html_is_one_self_contained_page_with_inline_figures(data):
    page = render_html(data)
    assert page.startswith("<!DOCTYPE html>") and page.rstrip().endswith("</html>")
    assert page.count("<svg") >= 2                       # spectrum and residual figures inline
    assert "<script" not in page
    assert not re.search(r"""(src|href)=["']?(https?:|//|file:)""", page)   # nothing fetched
    # the constants it shows are the Markdown report's (the same cells)
    for row in md_tables(render_markdown(data))["Constants"]:
        assert f">{row['value']}<" in page


def test_latex_is_ascii_with_booktabs_tables_and_escaped_text(data):
    tex = render_latex(data)
    assert tex.startswith(r"\documentclass") and r"\usepackage{booktabs}" in tex
    assert tex.isascii()                                   # every symbol written as LaTeX
    n = tex.count(r"\begin{longtable}")
    assert n >= 5 and tex.count(r"\toprule") == n == tex.count(r"\bottomrule")
    assert r"B\_upper" in tex and "B_upper" not in tex.replace(r"B\_upper", "")
    assert "cm$^{-1}$" in tex and "cm-1" not in tex and "H$^{35}$Cl" in tex
    body = re.sub(r"\\[{}$]", "", tex)
    assert body.count("{") == body.count("}") and body.count("$") % 2 == 0


@pytest.mark.slow
def test_latex_compiles_without_errors_or_overfull_lines(session, tmp_path):
    # pdflatex (TeX Live) when installed; the check is skipped on machines without it
    import shutil
    import subprocess

    if shutil.which("pdflatex") is None:
        pytest.skip("pdflatex is not installed (Debian: apt-get install texlive-latex-recommended)")
    write_report(session, tmp_path / "r.tex")
    for _ in range(2):  # longtable settles its column widths on the second run
        r = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", "r.tex"],
                           cwd=tmp_path, capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stdout[-3000:]
    assert (tmp_path / "r.pdf").read_bytes()[:5] == b"%PDF-"
    assert "Overfull \\hbox" not in r.stdout and "Font Warning" not in r.stdout


def test_latex_shows_the_markdown_values_in_math_mode(data):
    tex = render_latex(data)
    for row in md_tables(render_markdown(data))["Constants"]:
        cell = row["value"]
        mant, _, exp = cell.partition("e")
        want = f"${mant}\\times10^{{{int(exp)}}}$" if exp else f"${cell}$"
        assert want in tex, cell


def test_a_session_without_results_still_reports_its_source_and_record(tmp_path):
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_420K.csv"))
    s.to_absorbance()
    d = collect(s)
    assert len(d.lines) == len(d.assignments) == len(d.constants) == 0 and d.messages == []
    md = render_markdown(d)
    assert "(none)" in md and s.sources[0]["sha256"] in md and "to_absorbance" in md
    assert "A = −log₁₀ T" in md_section(md, "Methods")
    tables = read_report_csv(render_csv(d))
    assert tables["steps"]["kind"].tolist() == ["load", "to_absorbance"]
    assert len(tables["lines"]) == 0 and "position" in tables["lines"].columns
    assert "<svg" in render_html(d) and r"\end{document}" in render_latex(d)


def test_figures_are_reproducible_svg(data):
    fig_a, fig_b = spectrum_figure(data), spectrum_figure(data)
    assert to_svg(fig_a) == to_svg(fig_b)


def test_write_report_picks_the_format_from_the_suffix(session, tmp_path):
    written = write_report(session, tmp_path / "r.md")
    assert written[0].endswith("r.md") and any(p.endswith("r_spectrum.png") for p in written)
    assert (tmp_path / "r_spectrum.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature
    assert (tmp_path / "r.md").read_text(encoding="utf-8").startswith("# Analysis report")
    write_report(session, tmp_path / "r.tex")
    assert (tmp_path / "r_spectrum.pdf").read_bytes()[:5] == b"%PDF-"
    written = write_report(session, tmp_path / "r.csv")
    assert written[0].endswith("r.csv") and str(tmp_path / "r_constants.csv") in written
    for p in written:
        pd.read_csv(p)                                      # each one a plain table
    assert read_report_csv(tmp_path / "r.csv")["constants"]["value"].tolist() == \
        session.constants["value"].tolist()
    with pytest.raises(ReportFormatError, match=r"\.md, \.html"):
        write_report(session, tmp_path / "r.docx")


def test_report_of_a_session_viewing_an_old_step_shows_the_latest_state(session):
    session.view(2)
    try:
        d = collect(session)
        assert len(d.constants) == len(session.state_at(len(session.history) - 1)
                                       .assignment.constants) > 0
        assert session.viewing == 2          # collecting did not move the view
    finally:
        session.view_latest()
