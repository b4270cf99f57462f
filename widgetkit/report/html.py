"""A self-contained HTML rendering of a report: one file, styles and figures inline.

Figures are inline SVG drawn with matplotlib (:mod:`.figures`), so the page
needs no network, no script and no second file; it prints well and opens in any
browser. Sections and values are those of the Markdown report.
"""

from __future__ import annotations

from html import escape

from .data import ReportData
from .figures import report_figures, to_svg
from .render import report_blocks

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
.ok { color: #05612a; } .bad { color: #a3001b; font-weight: bold; }
.warn { color: #7a4b00; font-weight: bold; }
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


def render_html(data: ReportData, *, figures=True) -> str:
    """The report as one self-contained HTML page (inline CSS and SVG figures).

    ``figures``: True to draw them (:func:`~widgetkit.report.figures.report_figures`),
    False for none, or a mapping name -> matplotlib Figure already drawn.
    """
    figs = (report_figures(data) if figures is True else figures) or {}
    out = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
           f"<title>Analysis report: {escape(data.title)}</title>", f"<style>{_CSS}</style>",
           "</head>", "<body>"]
    for b in report_blocks(data, figures={n: f for n, f in figs.items()}):
        if b.kind == "title":
            out.append(f"<h1>{escape(b.text)}</h1>")
        elif b.kind == "heading":
            out.append(f"<h2>{escape(b.text)}</h2>")
        elif b.kind == "para":
            cls = f' class="{b.tone}"' if b.tone else ""
            out.append(f"<p{cls}>{escape(b.text)}</p>")
        elif b.kind == "bullets":
            out += ["<ul>"] + [f"<li>{escape(i)}</li>" for i in b.items] + ["</ul>"]
        elif b.kind == "table":
            out.append(_table(b.head, b.items, code_cols=b.code))
        elif b.kind == "figures":
            out += [f'<figure id="figure-{escape(name)}">{to_svg(fig)}'
                    f"<figcaption>{escape(name)}</figcaption></figure>" for name, fig in b.items]
    out += ["</body>", "</html>", ""]
    return "\n".join(out)
