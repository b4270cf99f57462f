"""A self-contained HTML rendering of a report: one file, styles and figures inline.

Figures are inline SVG drawn with matplotlib (:mod:`.figures`), so the page
needs no network, no script and no second file; it prints well and opens in any
browser. Sections and values are those of the Markdown report.
"""

from __future__ import annotations

from html import escape

import pandas as pd

from .cells import cell_text, table_columns
from .data import ReportData
from .figures import report_figures, to_svg
from .render import NOTATION_NOTE, _source_rows, _title, _verify_line, _version

__all__ = ["render_html"]

_CSS = """
body { font: 14px/1.45 system-ui, sans-serif; margin: 2em auto; max-width: 70em; padding: 0 1em;
       color: #222; }
h1 { font-size: 1.5em; } h2 { font-size: 1.15em; margin-top: 1.6em; }
table { border-collapse: collapse; margin: 0.5em 0; font-variant-numeric: tabular-nums; }
thead th { border-top: 2px solid #222; border-bottom: 1px solid #222; }
tbody tr:last-child td { border-bottom: 2px solid #222; }
th, td { padding: 0.2em 0.7em; text-align: left; vertical-align: top; }
td.num { text-align: right; white-space: nowrap; }
code, .hash { font-family: ui-monospace, monospace; font-size: 0.85em; word-break: break-all; }
.ok { color: #05612a; } .bad { color: #a3001b; }
figure { margin: 1em 0; } figure svg { max-width: 100%; height: auto; }
"""


def _is_num(text: str) -> bool:
    t = text.replace("−", "-").split("(")[0].split("e")[0].lstrip("+-")
    return t.replace(".", "", 1).isdigit()


def _table(head: list[str], rows: list[list[str]], *, code_cols: tuple[int, ...] = ()) -> str:
    out = ["<table>", "<thead><tr>" + "".join(f"<th>{escape(h)}</th>" for h in head) + "</tr></thead>",
           "<tbody>"]
    for r in rows:
        cells = []
        for i, c in enumerate(r):
            if i in code_cols:
                cells.append(f'<td><code class="hash">{escape(c)}</code></td>')
            elif _is_num(c):
                cells.append(f'<td class="num">{escape(c)}</td>')
            else:
                cells.append(f"<td>{escape(c)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "\n".join(out)


def _df_table(df: pd.DataFrame) -> str:
    if not len(df):
        return "<p>(none)</p>"
    cols = table_columns(df)
    return _table([c.heading for c in cols],
                  [[cell_text(row, c) for c in cols] for _, row in df.iterrows()])


def render_html(data: ReportData, *, figures=True) -> str:
    """The report as one self-contained HTML page (inline CSS and SVG figures).

    ``figures``: True to draw them (:func:`~widgetkit.report.figures.report_figures`),
    False for none, or a mapping name -> matplotlib Figure already drawn.
    """
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>Analysis report: {escape(data.title)}</title>", f"<style>{_CSS}</style>",
           "</head>", "<body>", f"<h1>Analysis report: {escape(data.title)}</h1>",
           f"<p>Generated {escape(data.generated)} by widgetkit {escape(_version(data))}. "
           f"{escape(NOTATION_NOTE)}</p>"]
    v = _verify_line(data)
    if v:
        out.append(f'<p class="{"ok" if data.verified else "bad"}">{escape(v)}</p>')
    out += ["<h2>Source data</h2>",
            _table(["id", "file", "format", "bytes", "sha256 of the file", "sha256 of the data"],
                   _source_rows(data), code_cols=(4, 5)),
            "<h2>Processing record</h2>",
            _table(["#", "step", "parameters", "summary", "time (UTC)"],
                   [[str(s.number), s.kind, s.params_text, s.summary, s.at] for s in data.steps],
                   code_cols=(2,))]
    if figures:
        figs = report_figures(data) if figures is True else figures
        for name, fig in figs.items():
            out.append(f'<figure id="figure-{escape(name)}">{to_svg(fig)}'
                       f"<figcaption>{escape(name)}</figcaption></figure>")
    if data.messages:
        out += ["<h2>Notes of the assignment</h2>", "<ul>"]
        out += [f"<li>{escape(m)}</li>" for m in data.messages] + ["</ul>"]
    for name, df in data.tables().items():
        out += [f"<h2>{escape(_title(name))}</h2>", _df_table(df)]
    out += ["<h2>Software</h2>",
            _table(["package", "version"], [[k, v] for k, v in data.software.items()]),
            "</body>", "</html>", ""]
    return "\n".join(out)
