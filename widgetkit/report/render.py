"""Markdown, LaTeX and CSV renderings of a :class:`~widgetkit.report.data.ReportData`.

All three show the same sections in the same order: source data (file and
sha256), the processing record (each step with its parameters), fitted lines,
assignments (with obs − calc), constants (with uncertainties and units), any
further tables of the assignment, and software versions. Markdown and LaTeX
write values in the uncertainty notation of the trade; the CSV keeps every
number at full float64 precision (shortest round-trip form) so that it reads
back to exactly the session's values (:func:`read_report_csv`).
"""

from __future__ import annotations

import csv
import io
import json
import re
from collections.abc import Mapping

import pandas as pd

from .cells import MISSING, Column, cell_text, table_columns
from .data import ReportData

__all__ = ["render_markdown", "render_latex", "render_csv", "read_report_csv", "tex_escape", "SECTION_TITLES",
           "NOTATION_NOTE"]

SECTION_TITLES = {"lines": "Fitted lines", "assignments": "Assignments", "constants": "Constants",
                  "combination_differences": "Combination differences"}
NOTATION_NOTE = ("Values written as 2885.977(3) mean 2885.977 ± 0.003: the number in parentheses "
                 "is one standard error in units of the last digits shown.")


def _title(name: str) -> str:
    return SECTION_TITLES.get(name, name.replace("_", " ").capitalize())


def _version(data: ReportData) -> str:
    return data.software.get("widgetkit", "unknown")


def _source_rows(data: ReportData) -> list[list[str]]:
    return [[str(s.get("id") or MISSING), str(s.get("path") or "(in memory)"),
             str(s.get("format") or MISSING), MISSING if s.get("size") is None else str(s["size"]),
             str(s.get("sha256") or MISSING), str(s.get("data_sha256") or MISSING)]
            for s in data.sources]


_SOURCE_HEAD = ["id", "file", "format", "bytes", "sha256 of the file", "sha256 of the data"]
_STEP_HEAD = ["#", "step", "parameters", "summary", "time (UTC)"]


def _verify_line(data: ReportData) -> str | None:
    if data.verified is None:
        return None
    if data.verified:
        return f"Verified: all {len(data.steps)} steps replay from the source data to their record."
    return "NOT verified: " + "; ".join(data.verify_messages)


def _table_cells(df: pd.DataFrame) -> tuple[list[Column], list[list[str]]]:
    cols = table_columns(df)
    return cols, [[cell_text(row, c) for c in cols] for _, row in df.iterrows()]


# ---------------------------------------------------------------------- Markdown
def _md_escape(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def _md_table(head: list[str], rows: list[list[str]]) -> str:
    out = ["| " + " | ".join(_md_escape(h) for h in head) + " |",
           "|" + "|".join(" --- " for _ in head) + "|"]
    out += ["| " + " | ".join(_md_escape(c) for c in r) + " |" for r in rows]
    return "\n".join(out)


def render_markdown(data: ReportData, *, figures: Mapping[str, str] | None = None) -> str:
    """The report as Markdown (GitHub-flavoured pipe tables).

    Parameters
    ----------
    figures : mapping of figure name -> link, optional
        Images to show (for example ``{"spectrum": "report_spectrum.png"}``).
    """
    out = [f"# Analysis report: {data.title}", "",
           f"Generated {data.generated} by widgetkit {_version(data)}. {NOTATION_NOTE}"]
    v = _verify_line(data)
    if v:
        out += ["", v]
    out += ["", "## Source data", "", _md_table(_SOURCE_HEAD, _source_rows(data))]
    out += ["", "## Processing record", "",
            _md_table(_STEP_HEAD, [[str(s.number), s.kind, f"`{s.params_text}`", s.summary, s.at]
                                   for s in data.steps])]
    for name, link in (figures or {}).items():
        out += ["", f"![{name}]({link})"]
    if data.messages:
        out += ["", "## Notes of the assignment", ""] + [f"- {_md_escape(m)}" for m in data.messages]
    for name, df in data.tables().items():
        out += ["", f"## {_title(name)}", ""]
        if not len(df):
            out.append("(none)")
            continue
        cols, rows = _table_cells(df)
        out.append(_md_table([c.heading for c in cols], rows))
    out += ["", "## Software", "", _md_table(["package", "version"],
                                             [[k, v] for k, v in data.software.items()]), ""]
    return "\n".join(out)


# ---------------------------------------------------------------------- LaTeX
_TEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                "^": r"\textasciicircum{}"}
_TEX_UNICODE = {"−": "$-$", "⁻¹": "$^{-1}$", "σ": r"$\sigma$", "Å": r"\AA{}", "±": r"$\pm$",
                "–": "--", "′": "$'$", "″": "$''$", "ν": r"$\nu$", "₀": "$_0$"}
_NUMBER = re.compile(r"^[-+−]?\d+(?:\.\d*)?(?:\(\d+\))?(?:e[-+]?\d+)?$")


def tex_escape(text: str) -> str:
    """Escape LaTeX specials and write the few non-ASCII symbols reports use as LaTeX."""
    s = "".join(_TEX_SPECIAL.get(ch, ch) for ch in str(text))
    for k, v in _TEX_UNICODE.items():
        s = s.replace(k, v)
    return s


def _tex_cell(text: str) -> str:
    if _NUMBER.match(text):
        t = text.replace("−", "-")
        mant, _, exp = t.partition("e")
        return f"${mant}\\times10^{{{int(exp)}}}$" if exp else f"${mant}$"
    return tex_escape(text)


def _tex_table(head: list[str], rows: list[list[str]], *, spec: str | None = None,
               cell=_tex_cell) -> str:
    spec = spec or "l" * len(head)
    out = [f"\\begin{{longtable}}{{{spec}}}", "\\toprule",
           " & ".join(tex_escape(h) for h in head) + r" \\", "\\midrule", "\\endhead",
           "\\bottomrule", "\\endfoot"]
    out += [" & ".join(cell(c) for c in r) + r" \\" for r in rows]
    out.append("\\end{longtable}")
    return "\n".join(out)


def render_latex(data: ReportData, *, figures: Mapping[str, str] | None = None,
                 standalone: bool = True) -> str:
    """The report as LaTeX with booktabs rules in ``longtable`` tables.

    ``standalone=True`` wraps it in a complete ``article`` document (packages
    booktabs, longtable, graphicx); otherwise it is a fragment to ``\\input``.
    ``figures`` maps figure names to image files for ``\\includegraphics``.
    """
    out = []
    if standalone:
        out += [r"\documentclass[10pt]{article}", r"\usepackage[margin=2cm]{geometry}",
                r"\usepackage{booktabs}", r"\usepackage{longtable}", r"\usepackage{graphicx}",
                r"\begin{document}"]
    out += [f"\\section*{{Analysis report: {tex_escape(data.title)}}}",
            tex_escape(f"Generated {data.generated} by widgetkit {_version(data)}. ")
            + tex_escape(NOTATION_NOTE)]
    v = _verify_line(data)
    if v:
        out += ["", tex_escape(v)]
    out += ["", r"\subsection*{Source data}",
            _tex_table(_SOURCE_HEAD, _source_rows(data), spec="lllrp{3.2cm}p{3.2cm}",
                       cell=lambda t: r"\texttt{\small " + tex_escape(t) + "}" if len(t) == 64
                       else tex_escape(t))]
    out += ["", r"\subsection*{Processing record}",
            _tex_table(_STEP_HEAD, [[str(s.number), s.kind, s.params_text, s.summary, s.at]
                                    for s in data.steps], spec="rlp{5.5cm}p{4.5cm}l",
                       cell=tex_escape)]
    for name, path in (figures or {}).items():
        out += ["", r"\begin{figure}[h]\centering",
                f"\\includegraphics[width=\\textwidth]{{{path}}}",
                f"\\caption{{{tex_escape(name)}}}", r"\end{figure}"]
    if data.messages:
        out += ["", r"\subsection*{Notes of the assignment}", r"\begin{itemize}"]
        out += [r"\item " + tex_escape(m) for m in data.messages] + [r"\end{itemize}"]
    for name, df in data.tables().items():
        out += ["", f"\\subsection*{{{tex_escape(_title(name))}}}"]
        if not len(df):
            out.append("(none)")
            continue
        cols, rows = _table_cells(df)
        spec = "".join("r" if _numeric_column(r[i] for r in rows) else "l" for i in range(len(cols)))
        out.append(_tex_table([c.heading for c in cols], rows, spec=spec))
    out += ["", r"\subsection*{Software}",
            _tex_table(["package", "version"], [[k, v] for k, v in data.software.items()],
                       cell=tex_escape)]
    if standalone:
        out.append(r"\end{document}")
    return "\n".join(out) + "\n"


def _numeric_column(cells) -> bool:
    cells = [c for c in cells if c != MISSING]
    return bool(cells) and all(_NUMBER.match(c) for c in cells)


# ---------------------------------------------------------------------- CSV
def _csv_frame(df: pd.DataFrame) -> str:
    buf = io.StringIO()
    df.to_csv(buf, index=False, lineterminator="\n")
    return buf.getvalue()


def render_csv(data: ReportData) -> str:
    """The report as one CSV text with sections.

    A section starts with a comment line ``# table: NAME`` followed by a header
    row and data rows; sections are separated by an empty line. Sections:
    ``sources``, ``steps`` (``params`` as JSON), ``lines``, ``assignments``,
    ``constants``, further tables, ``notes`` (the assignment's messages),
    ``software``. Numbers are written in the shortest form that reads back to
    the same float64.
    """
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    out.write(f"# widgetkit report: {' '.join(data.title.split())}\n")
    out.write(f"# generated: {data.generated}\n")
    if data.verified is not None:
        out.write(f"# verified: {'yes' if data.verified else 'no'}\n")
    out.write("\n# table: sources\n")
    w.writerow(["id", "path", "format", "size", "sha256", "data_sha256"])
    for s in data.sources:
        w.writerow([s.get(k) if s.get(k) is not None else ""
                    for k in ("id", "path", "format", "size", "sha256", "data_sha256")])
    out.write("\n# table: steps\n")
    w.writerow(["number", "kind", "at", "summary", "params"])
    for s in data.steps:
        w.writerow([s.number, s.kind, s.at, s.summary,
                    json.dumps(s.params, sort_keys=True, ensure_ascii=False)])
    for name, df in data.tables().items():
        out.write(f"\n# table: {name}\n")
        out.write(_csv_frame(df))
    if data.messages:
        out.write("\n# table: notes\n")
        w.writerow(["message"])
        for m in data.messages:
            w.writerow([m])
    out.write("\n# table: software\n")
    w.writerow(["package", "version"])
    for k, v in data.software.items():
        w.writerow([k, v])
    return out.getvalue()


_TEXT_COLUMNS = {k: str for k in ("id", "path", "format", "sha256", "data_sha256", "kind", "at",
                                  "summary", "params", "package", "version", "isotopologue", "label",
                                  "message", "name", "unit")}


def read_report_csv(source) -> dict[str, pd.DataFrame]:
    """Read a report CSV (a path or the text) back into its tables by section name."""
    text = source
    if not isinstance(source, str) or "\n" not in source:
        with open(source, encoding="utf-8") as f:
            text = f.read()
    tables: dict[str, pd.DataFrame] = {}
    for block in text.split("\n# table: ")[1:]:
        name, _, body = block.partition("\n")
        body = body.strip("\n")
        tables[name.strip()] = (pd.read_csv(io.StringIO(body), dtype=_TEXT_COLUMNS)
                                if body else pd.DataFrame())
    return tables

