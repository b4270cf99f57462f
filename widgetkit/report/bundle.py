"""The supplementary bundle: one folder with everything a referee needs.

``write_bundle(session, folder)`` writes

========================  ==========================================================
``session.json``          the session, self-contained (raw data embedded with sha256)
``report.md``             the report (with ``report_*.png`` figures beside it)
``report.html``           the same report as one self-contained page
``report.tex``            the tables as LaTeX (booktabs), figures as ``report_*.pdf``
``report.csv``            every table at full precision
``spectrum_processed.jdx``  the processed spectrum, JCAMP-DX (DIFDUP, 7 significant digits)
``spectrum_processed.csv``  the processed spectrum, exact (shortest round-trip numbers)
``spectrum_source.csv``   the raw spectrum as loaded, exact
``README.md``             for the referee: what each file is and how to verify it
``SHA256SUMS``            sha256 of every other file (``sha256sum -c SHA256SUMS``)
========================  ==========================================================
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path

from ..errors import WidgetkitError
from .data import ReportData, collect
from .figures import report_figures
from .write import _file_mode, atomic_write, write_report

__all__ = ["Bundle", "BundleExistsError", "write_bundle", "referee_readme"]

_DESCRIPTIONS = {
    "session.json": "the analysis session: raw data embedded (with sha256) and every step with its "
                    "parameters and recorded results",
    "report.md": "the report (Markdown)",
    "report.html": "the report as one self-contained web page (figures inline)",
    "report.tex": "the report as LaTeX with booktabs tables",
    "report.csv": "all report tables at full float64 precision",
    "spectrum_processed.jdx": "the processed spectrum, JCAMP-DX 4.24, compressed (DIFDUP)",
    "spectrum_processed.csv": "the processed spectrum as comma-separated text (exact values)",
    "spectrum_source.csv": "the raw spectrum as loaded, comma-separated text (exact values)",
}


class BundleExistsError(WidgetkitError, FileExistsError):
    """The bundle folder already holds files and overwriting was not asked for."""


@dataclass(frozen=True)
class Bundle:
    """A written supplementary bundle: its folder and the files in it with their sha256."""

    folder: str
    files: dict

    def __str__(self) -> str:
        return f"supplementary bundle in {self.folder} ({len(self.files)} files)"


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def referee_readme(data: ReportData, files: dict[str, str]) -> str:
    """The referee's README: what each file is and how to check and re-run the analysis."""
    version = data.software.get("widgetkit", "unknown")
    src = data.sources[0] if data.sources else {}
    rows = "\n".join(f"| `{name}` | {_DESCRIPTIONS.get(name, 'figure of the report')} |"
                     for name in files)
    steps = "\n".join(f"{s.number}. `{s.kind}`: {s.summary}" for s in data.steps)
    software = ", ".join(f"{k} {v}" for k, v in data.software.items())
    return f"""# Supplementary material: {data.title}

This folder holds a complete, replayable analysis made with widgetkit {version}.
The raw spectrum is embedded in `session.json` together with every processing
step, its parameters exactly as given and the results it produced.

Raw data: `{src.get('path') or '(in memory)'}`, format {src.get('format') or 'unknown'},
sha256 of the file `{src.get('sha256') or 'unknown'}`,
sha256 of the embedded float64 data `{src.get('data_sha256') or 'unknown'}`.

## Files

| file | what it is |
| --- | --- |
{rows}
| `SHA256SUMS` | sha256 of every file above |

## How to verify

1. Check that the files are intact:

       sha256sum -c SHA256SUMS

2. Install widgetkit {version} in a fresh environment (`pip install widgetkit=={version}`;
   the recorded software versions are listed below), then replay the analysis:

       widgetkit verify session.json

   This re-runs every step from the embedded raw data and compares each result with
   the recorded one. Exit status 0 means the analysis reproduces; otherwise each
   mismatch is printed with the step and field it concerns.

3. Regenerate the report from the session and compare it with `report.md`:

       widgetkit report session.json -o check.md

4. To look further, open the session in Python or Jupyter:

       import widgetkit as wk
       s = wk.Session.load("session.json")
       s.history, s.lines, s.assignments, s.constants

## Steps of the analysis

{steps}

## Recorded software

{software}
"""


def write_bundle(session, folder, *, overwrite: bool = False, title: str | None = None) -> Bundle:
    """Write the supplementary bundle of ``session`` to ``folder`` (see the module docstring).

    Parameters
    ----------
    session : widgetkit.Session
    folder : str or path-like
        Created when missing. A folder that already holds files is refused unless
        ``overwrite=True`` (then the bundle's own files are replaced; other files stay).
    title : str, optional
        Report title.

    Returns
    -------
    Bundle

    Raises
    ------
    BundleExistsError
        ``folder`` is not empty and ``overwrite`` is False.
    """
    from ..io import write_csv, write_jcamp

    out = Path(folder).expanduser().absolute()
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise BundleExistsError(
            f"the bundle folder {out} already holds files; choose an empty or new folder, or "
            "pass overwrite=True (--overwrite) to replace the bundle's files in it")
    out.mkdir(parents=True, exist_ok=True)
    data = collect(session, title=title)
    session_copy_path = out / "session.json"
    # save a copy without moving the live session's own path
    text_path = session.path
    session.save(session_copy_path)
    session.path = text_path
    written = [session_copy_path]
    figs = report_figures(data)  # drawn once, saved as PNG, SVG and PDF
    for suffix in (".md", ".html", ".tex", ".csv"):
        written += [Path(p) for p in write_report(data, out / f"report{suffix}", figures=figs)]
    state = session.state_at(len(session.history) - 1)
    processed = state.require_spectrum()
    written.append(Path(write_jcamp(processed, out / "spectrum_processed.jdx", form="DIFDUP",
                                    title=data.title + " (processed)")))
    written.append(Path(write_csv(processed, out / "spectrum_processed.csv",
                                  title=data.title + " (processed)")))
    written.append(Path(write_csv(session.source_spectrum, out / "spectrum_source.csv",
                                  title=data.title + " (as loaded)")))
    for p in written:  # writers of other layers create private (0600) temporary files
        os.chmod(p, _file_mode())
    files = {p.name: _sha256(p) for p in written}
    readme = out / "README.md"
    atomic_write(readme, referee_readme(data, files).encode("utf-8"))
    files["README.md"] = _sha256(readme)
    sums = "".join(f"{h}  {name}\n" for name, h in files.items())
    atomic_write(out / "SHA256SUMS", sums.encode("utf-8"))
    return Bundle(folder=str(out), files=files)
