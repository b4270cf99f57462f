"""The supplementary bundle: one folder with everything a referee needs.

``write_bundle(session, folder)`` writes

=================================  =====================================================
``session.json``                   the session, self-contained (raw data embedded, sha256)
``report.md``                      the report (with ``report_*.png`` figures beside it)
``report.html``                    the same report as one self-contained page
``report.tex``                     the report as LaTeX (booktabs), figures ``report_*.pdf``
``report.csv``                     index of the tables, each in ``report_<table>.csv``
``spectrum_processed.jdx``         the processed spectrum, JCAMP-DX (DIFDUP, 7 digits)
``spectrum_processed.csv``         the processed spectrum, exact (shortest round-trip)
``spectrum_source.csv``            the raw spectrum as loaded, exact
``software/widgetkit-*.whl``       the widgetkit code that wrote the bundle, as a wheel
``software/requirements.txt``      the dependency versions the session recorded
``README.md``                      for the referee: what each file is, how to verify
``SHA256SUMS``                     sha256 of every other file (``sha256sum -c SHA256SUMS``)
=================================  =====================================================
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

from ..errors import WidgetkitError
from ..formatting import plural, summary_text
from .data import ReportData, collect
from .figures import report_figures
from .wheel import WheelInfo, build_wheel, dependency_names
from .write import atomic_write, check_folder, write_report

__all__ = ["Bundle", "BundleExistsError", "write_bundle", "referee_readme", "check_bundle_folder"]

_DESCRIPTIONS = {
    "session.json": "the analysis session: raw data embedded (with sha256) and every step with its "
                    "parameters and recorded results",
    "report.md": "the report (Markdown)",
    "report.html": "the report as one self-contained web page (figures inline)",
    "report.tex": "the report as LaTeX with booktabs tables",
    "report.csv": "index of the report's tables (one CSV file each, full float64 precision)",
    "spectrum_processed.jdx": "the processed spectrum, JCAMP-DX 4.24, compressed (DIFDUP)",
    "spectrum_processed.csv": "the processed spectrum as comma-separated text (exact values)",
    "spectrum_source.csv": "the raw spectrum as loaded, comma-separated text (exact values)",
    "software/requirements.txt": "the dependency versions to install with the wheel",
}


class BundleExistsError(WidgetkitError, FileExistsError):
    """The bundle folder already holds files and overwriting was not asked for."""


@dataclass(frozen=True)
class Bundle:
    """A written supplementary bundle: its folder, every file in it (relative name -> sha256;
    SHA256SUMS, which lists them, is the one file more) and the wheel of the software."""

    folder: str
    files: dict
    wheel: WheelInfo | None = None

    def __str__(self) -> str:
        return (f"supplementary bundle in {self.folder}: {plural(len(self.files) + 1, 'file')} "
                "(SHA256SUMS holds the sha256 of the others)")


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _description(name: str) -> str:
    if name.endswith(".whl"):
        return "the widgetkit code that wrote this bundle (a wheel: install it with pip)"
    if name.startswith("report_") and name.endswith(".csv"):
        return f"report table {name[7:-4]} (CSV)"
    return _DESCRIPTIONS.get(name, "figure of the report")


def _requirements(data: ReportData) -> str:
    lines = ["# the versions the session's steps recorded (numerical results depend on these)"]
    lines += [f"{k}=={v}" for k, v in data.software.items()
              if k not in ("python", "widgetkit") and v not in ("", "unknown")]
    lines.append("# the other dependencies, as installed when the bundle was written")
    recorded = {k.lower() for k in data.software}
    for pkg in dependency_names():
        if pkg.lower() in recorded:
            continue
        try:
            lines.append(f"{pkg}=={metadata.version(pkg)}")
        except metadata.PackageNotFoundError:
            continue
    return "\n".join(lines) + "\n"


def referee_readme(data: ReportData, files: dict[str, str], wheel: WheelInfo | None = None) -> str:
    """The referee's README: what each file is and how to install, check and re-run it."""
    version = data.software.get("widgetkit", "unknown")
    src = data.sources[0] if data.sources else {}
    rows = "\n".join(f"| `{name}` | {_description(name)} |" for name in files)
    steps = "\n".join(f"- step {s.number}: `{s.kind}`, {summary_text(s.summary)}" for s in data.steps)
    software = ", ".join(f"{k} {v}" for k, v in data.software.items())
    python = data.software.get("python", "3")
    if wheel is not None:
        rel = f"software/{wheel.path.name}"
        same = "" if wheel.version == version else (
            f" Note: the session recorded widgetkit {version}; the wheel is {wheel.version}.")
        install = f"""2. Install the exact software in a fresh environment (Python {python} was used).
   `{rel}` is the widgetkit code that wrote this bundle ({wheel.origin};
   sha256 `{wheel.sha256}`), so no package registry is needed for widgetkit
   itself.{same} Its dependencies are pinned to the recorded versions in
   `software/requirements.txt`:

       python -m venv venv && . venv/bin/activate
       python -m pip install -r software/requirements.txt {rel}

   Offline, put wheels of those dependencies in a folder and add
   `--no-index --find-links FOLDER` to the last command."""
    else:
        install = f"""2. Install widgetkit {version} in a fresh environment (Python {python} was used)."""
    return f"""# Supplementary material: {data.title}

This folder holds a complete, replayable analysis made with widgetkit {version}.
The raw spectrum is embedded in `session.json` together with every processing
step, its parameters exactly as given and the results it produced. How every
number was obtained is described under "Methods" in `report.md` (or `report.html`);
what deserves a second look is listed there under "Flags".

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

{install}

3. Replay the analysis:

       widgetkit verify session.json

   This re-runs every step from the embedded raw data and compares each result with
   the recorded one. Exit status 0 means the analysis reproduces; otherwise each
   mismatch is printed with the step and field it concerns.

4. Regenerate the report from the session and compare it with `report.md`:

       widgetkit report session.json -o check.md --verify

5. To look further, open the session in Python or Jupyter:

       import widgetkit as wk
       s = wk.Session.load("session.json")
       s.history, s.lines, s.assignments, s.constants

   The tables are also plain CSV files (`report_constants.csv`, ...): `pandas.read_csv`
   reads each of them.

## Steps of the analysis (step 0 is the load)

{steps}

## Recorded software

{software}
"""


def check_bundle_folder(folder, *, overwrite: bool = False) -> Path:
    """``folder`` as an absolute path, checked before any work: not a file, creatable and
    writable (:class:`~.write.ReportPathError`), and empty unless ``overwrite``
    (:class:`BundleExistsError`); the messages name the folder as given."""
    out = check_folder(folder, "bundle", create=True)
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise BundleExistsError(
            f"the bundle folder {folder} ({out}) already holds files; choose an empty or new "
            "folder, or pass overwrite=True (--overwrite) to replace the bundle's files in it")
    return out


def write_bundle(session, folder, *, overwrite: bool = False, title: str | None = None,
                 wheel: bool = True, verify: bool = False, data: ReportData | None = None) -> Bundle:
    """Write the supplementary bundle of ``session`` to ``folder`` (see the module docstring).

    Parameters
    ----------
    session : widgetkit.Session
    folder : str or path-like
        Created when missing. A folder that already holds files is refused unless
        ``overwrite=True`` (then the bundle's own files are replaced; other files stay).
    title : str, optional
        Report title.
    wheel : bool, default True
        Include the wheel of the running widgetkit (:func:`~.wheel.build_wheel`).
    verify : bool, default False
        Replay the session first; the reports then say whether it reproduced.
    data : ReportData, optional
        The session's report data already collected (:func:`~.data.collect`), to reuse
        a verification; ``title`` and ``verify`` are then not used.

    Returns
    -------
    Bundle

    Raises
    ------
    ReportPathError
        ``folder`` is a file, or cannot be created or written (the message names it).
    BundleExistsError
        ``folder`` is not empty and ``overwrite`` is False.
    """
    from ..io import write_csv, write_jcamp

    out = check_bundle_folder(folder, overwrite=overwrite)
    (out / "software").mkdir(parents=True, exist_ok=True)
    data = data if data is not None else collect(session, title=title, verify=verify)
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
    info = build_wheel(out / "software") if wheel else None
    if info is not None:
        written.append(info.path)
    atomic_write(out / "software" / "requirements.txt", _requirements(data).encode("utf-8"))
    written.append(out / "software" / "requirements.txt")
    files = {p.relative_to(out).as_posix(): _sha256(p) for p in written}
    atomic_write(out / "README.md", referee_readme(data, files, info).encode("utf-8"))
    files["README.md"] = _sha256(out / "README.md")
    sums = "".join(f"{h}  {name}\n" for name, h in files.items())
    atomic_write(out / "SHA256SUMS", sums.encode("utf-8"))
    return Bundle(folder=str(out), files=files, wheel=info)
