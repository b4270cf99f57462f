"""Write a report file in the format its suffix names."""

from __future__ import annotations

import io
import os
from collections.abc import Mapping
from pathlib import Path

from ..errors import FilePathError, WidgetkitError
from .csvout import render_csv
from .data import ReportData, collect
from .figures import report_figures
from .html import render_html
from .latex import render_latex
from .render import render_markdown

__all__ = ["REPORT_FORMATS", "ReportFormatError", "ReportPathError", "write_report",
           "as_report_data", "atomic_write", "check_report_path", "check_folder"]

#: file suffix -> format name
REPORT_FORMATS = {".md": "markdown", ".html": "html", ".htm": "html", ".tex": "latex", ".csv": "csv"}


class ReportFormatError(WidgetkitError, ValueError):
    """The output name of a report does not end in a known suffix."""


class ReportPathError(WidgetkitError, OSError):
    """A report or bundle cannot be written where asked (the message names the path)."""


def _shown(path) -> str:
    """The user's path as typed, and the absolute one when it differs."""
    typed = str(path)
    full = str(Path(path).expanduser().absolute())
    return typed if typed == full else f"{typed} ({full})"


def check_folder(folder, what: str, *, create: bool = False) -> Path:
    """``folder`` as an absolute path, refused with a :class:`ReportPathError` naming it when
    it is a file, does not exist (unless ``create``: then its parents must be creatable) or
    cannot be written."""
    p = Path(folder).expanduser().absolute()
    if p.exists() and not p.is_dir():
        raise ReportPathError(f"{what}: {_shown(folder)} is a file, not a folder; give the name "
                              "of a folder (it is created when missing)" if create else
                              f"{what}: {_shown(folder)} is a file, not a folder")
    if not p.exists():
        if not create:
            raise ReportPathError(f"{what}: the folder {_shown(folder)} does not exist; create it "
                                  f"first (mkdir -p {folder}) or choose another place")
        blocker = next((q for q in [p, *p.parents] if q.exists()), None)
        if blocker is not None and not blocker.is_dir():
            raise ReportPathError(f"{what}: cannot create {_shown(folder)}: {blocker} is a file, "
                                  "not a folder")
        if blocker is not None and not os.access(blocker, os.W_OK | os.X_OK):
            raise ReportPathError(f"{what}: cannot create {_shown(folder)}: no permission to "
                                  f"write in {blocker}")
    elif not os.access(p, os.W_OK | os.X_OK):
        raise ReportPathError(f"{what}: no permission to write in the folder {_shown(folder)}")
    return p


def check_report_path(path) -> tuple[Path, str]:
    """The absolute report path and its format, checked before any work is done: the suffix
    must name a format (:class:`ReportFormatError`) and the folder must exist and be writable,
    and the path must not be a folder (:class:`ReportPathError`, naming the path)."""
    out = Path(path).expanduser().absolute()
    if out.is_dir():
        raise ReportPathError(f"report: {_shown(path)} is a folder; give a file name such as "
                              f"{Path(path) / 'report.html'}")
    fmt = REPORT_FORMATS.get(out.suffix.lower())
    if fmt is None:
        raise ReportFormatError(
            f"cannot tell the report format from {str(path)!r}: the name must end in "
            f"{', '.join(REPORT_FORMATS)} (for example report.html)")
    check_folder(Path(path).expanduser().parent, f"report {Path(path).name}")
    return out, fmt


def as_report_data(source, *, title: str | None = None, verify: bool = False) -> ReportData:
    """``source`` as :class:`ReportData`: a session is collected, report data passes through."""
    if isinstance(source, ReportData):
        return source
    return collect(source, title=title, verify=verify)


def atomic_write(path: Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically with the one writer of the package
    (:func:`widgetkit._files.atomic_write`: the umask's mode, links written through,
    temporaries of killed writes removed); a place that cannot be written is a
    :class:`ReportPathError` naming it."""
    from .._files import atomic_write as write

    try:
        write(path, data, what="report")
    except FilePathError as exc:
        raise ReportPathError(str(exc)) from None


def _write_figures(figs: Mapping, out: Path, fmt: str) -> dict[str, str]:
    """Figure files beside ``out`` (``<stem>_<name>.<fmt>``); returns name -> relative file name."""
    links = {}
    for name, fig in figs.items():
        target = out.with_name(f"{out.stem}_{name}.{fmt}")
        meta = {"Software": None} if fmt == "png" else {"CreationDate": None}
        buf = io.BytesIO()
        fig.savefig(buf, format=fmt, dpi=150, metadata=meta)
        atomic_write(target, buf.getvalue())
        links[name] = target.name
    return links


def write_report(source, path, *, title: str | None = None, verify: bool = False,
                 figures: bool | Mapping = True) -> list[str]:
    """Write the report of a session to ``path``; the format follows the suffix.

    Parameters
    ----------
    source : Session or ReportData
    path : str or path-like
        ``.md`` (Markdown; figures as PNG files beside it), ``.html`` (one
        self-contained page, figures inline as SVG), ``.tex`` (LaTeX with booktabs
        tables; figures as PDF files beside it) or ``.csv`` (an index file and one
        tidy CSV file per table beside it, ``<stem>_<table>.csv``, full precision).
    title : str, optional
        The report title (default: the spectrum's title or file name).
    verify : bool, default False
        Replay the session first and state the outcome in the report.
    figures : bool or mapping, default True
        Draw the spectrum and residual figures; or a mapping name -> matplotlib
        Figure drawn before (:func:`~widgetkit.report.figures.report_figures`), to
        draw them once for several formats.

    Returns
    -------
    list of str
        The files written, the report first.

    Raises
    ------
    ReportFormatError
        When the suffix is not one of .md, .html, .tex, .csv.
    ReportPathError
        When the folder of ``path`` does not exist, cannot be written, or ``path`` is
        a folder (checked before any work; the message names the path).
    """
    out, fmt = check_report_path(path)
    data = as_report_data(source, title=title, verify=verify)
    written = [str(out)]
    figs: Mapping = {}
    if figures is True and fmt in ("markdown", "latex"):
        figs = report_figures(data)
    elif isinstance(figures, Mapping):
        figs = figures
    if fmt == "markdown":
        links = _write_figures(figs, out, "png")
        text = render_markdown(data, figures=links)
        written += [str(out.with_name(v)) for v in links.values()]
    elif fmt == "latex":
        links = _write_figures(figs, out, "pdf")
        text = render_latex(data, figures=links)
        written += [str(out.with_name(v)) for v in links.values()]
    elif fmt == "html":
        text = render_html(data, figures=figures)
    else:
        texts = render_csv(data, index_name=out.name)
        for name, body in texts.items():
            atomic_write(out.with_name(name), body.encode("utf-8"))
        return [str(out.with_name(name)) for name in texts]
    atomic_write(out, text.encode("utf-8"))
    return written
