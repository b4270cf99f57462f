"""The spectra of a series: files, a folder, a glob pattern or Spectrum objects.

:func:`expand_sources` turns what the user gave into :class:`Source` records
(a display name unique in the series, the path or the in-memory spectrum, and
the session file name under ``out/sessions/``). Nothing is read here except
folder listings; each file is read by the worker that analyses it, so a
series is never all in memory at once.
"""

from __future__ import annotations

import glob
import hashlib
import os
import re
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

from ..errors import SeriesError
from ..spectrum import Spectrum

__all__ = ["Source", "expand_sources", "file_sha256", "SPECTRUM_SUFFIXES", "natural_key"]

#: file name endings taken from a folder (files given one by one or by a glob are all taken)
SPECTRUM_SUFFIXES = frozenset({".jdx", ".dx", ".jcm", ".jcamp", ".csv", ".tsv", ".txt", ".dat",
                               ".asc", ".prn", ".xy"})
_GLOB_CHARS = re.compile(r"[*?\[]")


@dataclass(frozen=True)
class Source:
    """One spectrum of a series.

    Attributes
    ----------
    name : str
        Unique in the series: the file name, or the path below the common folder when
        file names repeat; ``spectrum-<i>`` (or the title) for in-memory spectra.
    path : str or None
        Absolute path of the file.
    spectrum : Spectrum or None
        The in-memory spectrum (when no file was given).
    session_file : str
        Where its session is written, relative to the series folder
        (``sessions/<name>.session.json``, unique in the series).
    """

    name: str
    path: str | None = None
    spectrum: Spectrum | None = None
    session_file: str = ""

    def sha256(self) -> str | None:
        """sha256 of the file's bytes (of the data for an in-memory spectrum); None when
        the file cannot be read (the worker then reports why)."""
        if self.spectrum is not None:
            src = self.spectrum.source or {}
            return src.get("sha256") or self.spectrum.data_sha256()
        try:
            return file_sha256(self.path)
        except OSError:
            return None


def file_sha256(path: str | os.PathLike, chunk: int = 1 << 20) -> str:
    """sha256 (hex) of a file's bytes, read in chunks."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        while True:
            b = fh.read(chunk)
            if not b:
                break
            h.update(b)
    return h.hexdigest()


def natural_key(text: str) -> list:
    """Sort key with numbers compared as numbers (``run2`` before ``run10``)."""
    return [int(t) if t.isdigit() else t.lower() for t in re.split(r"(\d+)", str(text))]


def _files_of(item: str | os.PathLike) -> list[str]:
    text = os.fspath(item)
    p = Path(text).expanduser()
    if p.is_dir():
        files = [str(f.resolve()) for f in p.iterdir()
                 if f.is_file() and not f.name.startswith(".")
                 and f.suffix.lower() in SPECTRUM_SUFFIXES]
        if not files:
            raise SeriesError(f"sources: the folder {text} holds no spectrum files (names ending "
                              f"in {', '.join(sorted(SPECTRUM_SUFFIXES))}); give the files or a "
                              "glob pattern instead")
        return sorted(files, key=natural_key)
    if _GLOB_CHARS.search(text) and not p.exists():
        files = [str(Path(f).resolve()) for f in glob.glob(str(p)) if Path(f).is_file()]
        if not files:
            raise SeriesError(f"sources: the pattern {text!r} matches no file")
        return sorted(files, key=natural_key)
    return [str(p.resolve())]  # a missing file is reported on its own row


def expand_sources(sources) -> list[Source]:
    """The :class:`Source` records of ``sources`` (paths, folders, globs, Spectrum objects,
    or an iterable of those), in the order given (folders and globs in natural order).

    Raises
    ------
    SeriesError
        Nothing given, an empty folder, a glob matching nothing, an item of another type,
        or a file given twice.
    """
    if isinstance(sources, (str, os.PathLike, Spectrum)):
        items: Iterable = [sources]
    else:
        try:
            items = list(sources)
        except TypeError:
            raise SeriesError(f"sources must be paths, a folder, a glob pattern or Spectrum "
                              f"objects (or a list of them), got {type(sources).__name__}") from None
    raw: list[tuple[str | None, Spectrum | None]] = []
    for i, item in enumerate(items):
        if isinstance(item, Spectrum):
            raw.append((None, item))
        elif isinstance(item, (str, os.PathLike)):
            raw.extend((f, None) for f in _files_of(item))
        else:
            raise SeriesError(f"sources[{i}]: expected a path or a Spectrum, got "
                              f"{type(item).__name__}")
    if not raw:
        raise SeriesError("sources: no spectra given")
    paths = [p for p, _ in raw if p is not None]
    dup = {p for p in paths if paths.count(p) > 1}
    if dup:
        raise SeriesError(f"sources: the file {sorted(dup)[0]} is given more than once")
    return _named(raw, paths)


def _named(raw, paths: list[str]) -> list[Source]:
    names = [Path(p).name for p in paths]
    common = os.path.commonpath([str(Path(p).parent) for p in paths]) if paths else ""
    out, seen, files = [], set(), set()
    for i, (path, sp) in enumerate(raw):
        if path is not None:
            name = Path(path).name
            if names.count(name) > 1:
                name = os.path.relpath(path, common)
        else:
            title = str((sp.meta or {}).get("title") or "").strip()
            name = title if title and title not in seen else f"spectrum-{i}"
        base, k = name, 2
        while name in seen:
            name, k = f"{base}-{k}", k + 1
        seen.add(name)
        safe = re.sub(r"[^A-Za-z0-9._-]+", "_", name).strip("._") or "spectrum"
        stem, k = safe, 2
        while safe.lower() in files:
            safe, k = f"{stem}-{k}", k + 1
        files.add(safe.lower())
        out.append(Source(name=name, path=path, spectrum=sp,
                          session_file=f"sessions/{safe}.session.json"))
    return out
