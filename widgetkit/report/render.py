"""The sections of a report, once, and their Markdown rendering.

:func:`report_blocks` lays out every report as the same list of blocks
(headings, paragraphs, bullet lists, tables, figures), so Markdown, HTML and
LaTeX show the same sections in the same order with the same cells:

1. the title, when and with what it was made, the notation of uncertainties;
2. verification: replayed and reproduced, NOT reproduced (with the mismatches),
   or not run (and how to run it);
3. methods: how every number was obtained (:mod:`.methods`);
4. flags: what to look at twice (:mod:`.flags`);
5. the source data (file, sha256), the processing record (steps from 0, the load
   being step 0, with their parameters exactly as recorded), figures;
6. the notes of the assignment, the tables of results (lines, assignments,
   constants, further tables), the software versions.

Text is Unicode with one unit notation (cm⁻¹); :mod:`.latex` turns it into
LaTeX. The CSV form (:mod:`.csvout`) holds the same tables at full precision.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import pandas as pd

from ..formatting import plural, summary_text, tidy_text
from .cells import MISSING, cell_text, table_columns
from .data import ReportData

__all__ = ["render_markdown", "report_blocks", "Block", "SECTION_TITLES", "NOTATION_NOTE",
           "verify_text"]

SECTION_TITLES = {"lines": "Fitted lines", "assignments": "Assignments", "constants": "Constants",
                  "combination_differences": "Combination differences"}
NOTATION_NOTE = ("Values written as 2885.977(3) mean 2885.977 ± 0.003: the number in parentheses "
                 "is one standard error in units of the last digits shown; every other number is "
                 "rounded to the digits its uncertainty supports. Wavenumbers are in cm⁻¹.")
_SOURCE_HEAD = ["id", "file", "format", "bytes", "sha256 of the file", "sha256 of the data"]
_STEP_HEAD = ["step", "kind", "parameters", "summary", "time (UTC)"]


@dataclass(frozen=True)
class Block:
    """One block of a report.

    ``kind`` is ``"title"``, ``"heading"``, ``"para"``, ``"bullets"``, ``"table"``,
    ``"figures"``; ``text`` the heading or paragraph; ``items`` the bullets or the
    table rows; ``head`` the table heading; ``code`` the columns shown as code
    (hashes, parameters); ``tone`` of a paragraph: ``"ok"``, ``"bad"``, ``"warn"``;
    ``widths`` of a table: column -> width hint in cm for a paged format (LaTeX).
    """

    kind: str
    text: str = ""
    items: list = field(default_factory=list)
    head: list = field(default_factory=list)
    code: tuple = ()
    tone: str = ""
    widths: dict = field(default_factory=dict)


def _title(name: str) -> str:
    return SECTION_TITLES.get(name, name.replace("_", " ").capitalize())


def version_of(data: ReportData) -> str:
    """The widgetkit version the session's steps recorded."""
    return data.software.get("widgetkit", "unknown")


def verify_text(data: ReportData) -> tuple[str, str]:
    """(sentence, tone) of the verification: reproduced, not reproduced, or not run."""
    if data.verified is None:
        return ("Verification not run: this report was written without replaying the session. "
                "Run `widgetkit verify session.json` (or `widgetkit report --verify`) to replay "
                "every step from the embedded data and compare it with the record.", "warn")
    if data.verified:
        return (f"Verified: all {plural(len(data.steps), 'step')} replay from the source data to "
                "their recorded results.", "ok")
    return "NOT verified: " + "; ".join(data.verify_messages), "bad"


def _source_rows(data: ReportData) -> list[list[str]]:
    return [[str(s.get("id") or MISSING), str(s.get("path") or "(in memory)"),
             str(s.get("format") or MISSING), MISSING if s.get("size") is None else str(s["size"]),
             str(s.get("sha256") or MISSING), str(s.get("data_sha256") or MISSING)]
            for s in data.sources]


def _empty_column(values: pd.Series) -> bool:
    """No entry at all: every value missing, or a yes/no column that is "no" everywhere."""
    if values.isna().all():
        return True
    return values.dtype == bool and not values.any()


def _table_blocks(df: pd.DataFrame, data: ReportData) -> list[Block]:
    """A result table, leaving out the columns without any entry (said below it; the CSV
    tables keep every column)."""
    left_out = [str(c) for c in df.columns if _empty_column(df[c])]
    cols = [c for c in table_columns(df.drop(columns=left_out)) if c.name not in left_out]
    rows = [[cell_text(row, c, at_bound=data.at_bound) for c in cols] for _, row in df.iterrows()]
    out = [Block("table", head=[c.heading for c in cols], items=rows)]
    if left_out:
        out.append(Block("para", "Columns without any entry, left out here: "
                                 + ", ".join(left_out) + "."))
    return out


def report_blocks(data: ReportData, *, figures: Mapping | None = None) -> list[Block]:
    """The report as blocks (see the module docstring); ``figures`` maps names to whatever
    the renderer shows for them (a link, a path, an SVG text)."""
    verify, tone = verify_text(data)
    out = [Block("title", f"Analysis report: {data.title}"),
           Block("para", f"Generated {data.generated} by widgetkit {version_of(data)}. "
                         + NOTATION_NOTE),
           Block("para", verify, tone=tone),
           Block("heading", "Methods")]
    out += [Block("para", p) for p in data.methods] or [Block("para", "(no steps)")]
    out += [Block("heading", "Flags")]
    out.append(Block("bullets", items=list(data.flags)) if data.flags else
               Block("para", "None: no parameter on a bound, no doubtful result, no outlier."))
    out += [Block("heading", "Source data"),
            Block("table", head=_SOURCE_HEAD, items=_source_rows(data), code=(4, 5),
                  widths={1: 3.6, 4: 3.4, 5: 3.4}),
            Block("heading", "Processing record"),
            Block("para", "Step 0 is the load; step i is the i-th change after it. Parameters "
                          "are shown exactly as recorded."),
            Block("table", head=_STEP_HEAD, code=(2,), widths={2: 4.6, 3: 4.4, 4: 2.3},
                  items=[[str(s.number), s.kind, s.params_text, summary_text(s.summary), s.at]
                         for s in data.steps])]
    if figures:
        out.append(Block("figures", items=list(figures.items())))
    if data.messages:
        out += [Block("heading", "Notes of the assignment"),
                Block("bullets", items=[tidy_text(m) for m in data.messages])]
    for name, df in data.tables().items():
        out.append(Block("heading", _title(name)))
        out += _table_blocks(df, data) if len(df) else [Block("para", "(none)")]
    out += [Block("heading", "Software"),
            Block("table", head=["package", "version"],
                  items=[[k, v] for k, v in data.software.items()])]
    return out


# ---------------------------------------------------------------------- Markdown
def _md_escape(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def _md_table(head: list[str], rows: list[list[str]], code: tuple = ()) -> str:
    out = ["| " + " | ".join(_md_escape(h) for h in head) + " |",
           "|" + "|".join(" --- " for _ in head) + "|"]
    out += ["| " + " | ".join(f"`{_md_escape(c)}`" if i in code and c != MISSING else
                              _md_escape(c) for i, c in enumerate(r)) + " |" for r in rows]
    return "\n".join(out)


def render_markdown(data: ReportData, *, figures: Mapping[str, str] | None = None) -> str:
    """The report as Markdown (GitHub-flavoured pipe tables).

    Parameters
    ----------
    figures : mapping of figure name -> link, optional
        Images to show (for example ``{"spectrum": "report_spectrum.png"}``).
    """
    out: list[str] = []
    for b in report_blocks(data, figures=figures):
        if b.kind == "title":
            out += [f"# {b.text}"]
        elif b.kind == "heading":
            out += ["", f"## {b.text}"]
        elif b.kind == "para":
            out += ["", f"**{b.text}**" if b.tone in ("bad", "warn") else b.text]
        elif b.kind == "bullets":
            out += [""] + [f"- {_md_escape(i)}" for i in b.items]
        elif b.kind == "table":
            out += ["", _md_table(b.head, b.items, b.code)]
        elif b.kind == "figures":
            out += [line for name, link in b.items for line in ("", f"![{name}]({link})")]
    return "\n".join(out) + "\n"
