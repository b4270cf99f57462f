"""Reports and the supplementary bundle show exactly the session's values.

The session analysed here is the demo spectrum (invented scenario, simulated data):
every check is a self-consistency check between the session and what the report
says, read back from the report files.
"""

from __future__ import annotations

import hashlib
import json
import math
import re

import numpy as np
import pandas as pd
import pytest

import widgetkit as wk
from widgetkit.cli import main
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
    write_bundle,
    write_report,
)
from widgetkit.report.cells import table_columns
from widgetkit.report.figures import spectrum_figure, to_svg


@pytest.fixture(scope="module")
def session():
    """The 296 K HCl demo band analysed end to end (cropped, Gaussian lines: fast)."""
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.crop(2690.0, 3070.0)
    s.to_absorbance()
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="gaussian", baseline="linear")
    s.assign_band(wk.Diatomic("H", "Cl"), temperature=296)
    s.note("demo analysis for the report tests")
    return s


@pytest.fixture(scope="module")
def data(session):
    return collect(session)


def _md_tables(text: str) -> dict[str, list[dict[str, str]]]:
    """The pipe tables of a Markdown report by section heading, as lists of row dicts."""
    out = {}
    for block in re.split(r"^## ", text, flags=re.M)[1:]:
        title, _, body = block.partition("\n")
        rows = [ln for ln in body.splitlines() if ln.startswith("| ") and not ln.startswith("| ---")]
        if len(rows) < 1:
            continue
        split = [[c.strip().replace("\\|", "|") for c in re.split(r"(?<!\\)\|", r)[1:-1]]
                 for r in rows]
        head = split[0]
        out[title.strip()] = [dict(zip(head, r)) for r in split[1:]]
    return out


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
    tables = _md_tables(render_markdown(data))
    rows = tables["Constants"]
    consts = session.constants
    assert len(rows) == len(consts) > 0
    for row, (_, c) in zip(rows, consts.iterrows()):
        assert row["isotopologue"] == c["isotopologue"] and row["name"] == c["name"]
        assert row["unit"] == c["unit"]
        stderr = None if pd.isna(c["stderr"]) else float(c["stderr"])
        assert _agrees(row["value"], float(c["value"]), stderr), (row, c.to_dict())


def test_markdown_lines_and_assignments_equal_the_session_tables(session, data):
    tables = _md_tables(render_markdown(data))
    lines = session.lines
    for row, (_, ln) in zip(tables["Fitted lines"], lines.iterrows(), strict=True):
        assert int(row["line_id"]) == ln["line_id"]
        assert _agrees(row["position (cm⁻¹)"], ln["position"], ln["position_err"])
        assert _agrees(row["area"], ln["area"], ln["area_err"])
    a = session.assignments
    for row, (_, r) in zip(tables["Assignments"], a.iterrows(), strict=True):
        assert parse_cell(row["label"]) == (r["label"] if isinstance(r["label"], str) else None)
        if pd.notna(r["obs_minus_calc"]):
            shown = parse_cell(row["obs − calc (cm⁻¹)"])
            assert shown == pytest.approx(float(r["obs_minus_calc"]), rel=1e-9, abs=1e-15)
        assert parse_cell(row["outlier"]) == bool(r["outlier"])


def test_markdown_names_the_source_hash_and_every_step_with_its_parameters(session, data):
    text = render_markdown(data)
    tables = _md_tables(text)
    src = session.sources[0]
    assert tables["Source data"][0]["sha256 of the file"] == src["sha256"]
    steps = tables["Processing record"]
    assert [s["step"] for s in steps] == [s.kind for s in session.history]
    for shown, step in zip(steps, session.history):
        assert json.loads(shown["parameters"].strip("`")) == step.params
    assert {r["package"]: r["version"] for r in tables["Software"]}["numpy"] == np.__version__
    assert session.assignment.messages and all(f"- {m}" in text for m in session.assignment.messages)


def test_csv_reads_back_to_exactly_the_session_tables(session, data):
    tables = read_report_csv(render_csv(data))
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
    assert tables["sources"]["sha256"].iloc[0] == session.sources[0]["sha256"]
    assert tables["notes"]["message"].tolist() == list(session.assignment.messages)


def test_html_is_one_self_contained_page_with_inline_figures(data):
    page = render_html(data)
    assert page.startswith("<!DOCTYPE html>") and page.rstrip().endswith("</html>")
    assert page.count("<svg") >= 2                       # spectrum and residual figures inline
    assert "<script" not in page
    assert not re.search(r"""(src|href)=["']?(https?:|//|file:)""", page)   # nothing fetched
    # the constants it shows are the Markdown report's (the same cells)
    for row in _md_tables(render_markdown(data))["Constants"]:
        assert f">{row['value']}<" in page


def test_latex_has_booktabs_tables_and_escaped_text(data):
    tex = render_latex(data)
    assert tex.startswith(r"\documentclass") and r"\usepackage{booktabs}" in tex
    n = tex.count(r"\begin{longtable}")
    assert n >= 5 and tex.count(r"\toprule") == n == tex.count(r"\bottomrule")
    assert r"B\_upper" in tex and "B_upper" not in tex.replace(r"B\_upper", "")
    assert not re.search(r"[−⁻¹σ]", tex)                 # written as LaTeX, not raw symbols
    body = re.sub(r"\\[{}]", "", tex)
    assert body.count("{") == body.count("}")


def test_latex_shows_the_markdown_values_in_math_mode(data):
    tex = render_latex(data)
    for row in _md_tables(render_markdown(data))["Constants"]:
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
    tables = read_report_csv(render_csv(d))
    assert tables["steps"]["kind"].tolist() == ["load", "to_absorbance"]
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
    write_report(session, tmp_path / "r.csv")
    assert "# table: constants" in (tmp_path / "r.csv").read_text(encoding="utf-8")
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


def test_bundle_holds_everything_with_matching_checksums(session, tmp_path):
    b = write_bundle(session, tmp_path / "supp")
    folder = tmp_path / "supp"
    for name in ("session.json", "report.md", "report.html", "report.tex", "report.csv",
                 "spectrum_processed.jdx", "spectrum_processed.csv", "spectrum_source.csv",
                 "README.md", "SHA256SUMS"):
        assert (folder / name).is_file(), name
    for line in (folder / "SHA256SUMS").read_text(encoding="utf-8").splitlines():
        digest, name = line.split("  ", 1)
        assert hashlib.sha256((folder / name).read_bytes()).hexdigest() == digest == b.files[name]
    readme = (folder / "README.md").read_text(encoding="utf-8")
    assert "widgetkit verify session.json" in readme and "sha256sum -c SHA256SUMS" in readme
    assert wk.Session.load(folder / "session.json").verify().ok
    exact = wk.read_spectrum(folder / "spectrum_processed.csv")
    assert np.array_equal(exact.x, session.spectrum.x) and np.array_equal(exact.y, session.spectrum.y)
    jdx = wk.read_spectrum(folder / "spectrum_processed.jdx")
    # DIFDUP keeps 7 significant digits of the largest |y| (write_jcamp's documented contract)
    assert np.allclose(jdx.y, session.spectrum.y, rtol=0, atol=np.abs(session.spectrum.y).max() * 1e-6)
    assert session.path is None or not str(session.path).startswith(str(folder))


def test_bundle_refuses_a_folder_that_holds_files_unless_told(session, tmp_path):
    (tmp_path / "notes.txt").write_text("mine", encoding="utf-8")
    with pytest.raises(wk.WidgetkitError, match="overwrite=True"):
        write_bundle(session, tmp_path)
    write_bundle(session, tmp_path, overwrite=True)
    assert (tmp_path / "notes.txt").read_text(encoding="utf-8") == "mine"
    assert (tmp_path / "session.json").is_file()


def test_cli_report_writes_reports_and_bundles(session, tmp_path, capsys):
    saved = tmp_path / "s.json"
    session.save(saved)
    out = tmp_path / "out.html"
    assert main(["report", str(saved), "-o", str(out), "--verify", "--bundle", str(tmp_path / "b")]) == 0
    assert "Verified: all" in out.read_text(encoding="utf-8")
    assert (tmp_path / "b" / "SHA256SUMS").is_file()
    assert main(["report", str(saved), "--bundle", str(tmp_path / "b")]) == 2   # not empty
    assert "overwrite" in capsys.readouterr().err
    assert main(["report", str(tmp_path / "missing.json"), "-o", str(tmp_path / "x.md")]) == 2
    assert main(["report", str(saved), "-o", str(tmp_path / "x.docx")]) == 2
    assert "x.docx" in capsys.readouterr().err
    assert main(["report", str(saved)]) == 2                                    # nothing asked


def test_cli_report_exits_1_and_says_so_when_the_record_does_not_replay(tmp_path):
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.find_peaks(min_snr=8)
    doc = s.to_document()
    doc["steps"][-1]["result"]["tampered"] = True      # a result the replay cannot produce
    (tmp_path / "t.json").write_text(json.dumps(doc), encoding="utf-8")
    assert main(["report", str(tmp_path / "t.json"), "-o", str(tmp_path / "t.md"), "--verify"]) == 1
    assert "NOT verified" in (tmp_path / "t.md").read_text(encoding="utf-8")
