"""The result of a series: its tables, its sessions, its verification.

The series file it reads and writes is described in :mod:`.seriesfile`.
"""

from __future__ import annotations

import json
import math
import os
import shutil
import weakref
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from ..errors import SeriesError
from ..session import codec
from ..session.recipe import Recipe
from .seriesfile import (
    SERIES_FILE,
    SERIES_FORMAT,
    SERIES_VERSION,
    is_series_file,
    read_series_document,
    series_document,
)
from .variable import Variable

__all__ = ["SeriesResult", "SeriesVerifyReport", "SeriesSessions", "SERIES_FORMAT",
           "SERIES_VERSION", "SERIES_FILE", "read_series_document", "is_series_file",
           "series_document"]

TABLE_COLUMNS = ["spectrum", "source", "sha256", "variable", "isotopologue", "name", "value",
                 "stderr", "unit", "status"]
#: ok, doubtful, failed: as the Series panel draws them (data blue, model orange, outlier red)
STATUS_COLORS = {"ok": "#1f4e79", "doubtful": "#e69f00", "failed": "#d7191c"}


@dataclass(frozen=True, repr=False)
class SeriesVerifyReport:
    """The outcome of :meth:`SeriesResult.verify`: every session replayed.

    Attributes
    ----------
    ok : bool
        True when every session file is unchanged, replays to its record and gives the
        constants the series file lists.
    rows : DataFrame
        One row per spectrum: ``spectrum, ok, steps_checked, mismatches`` (count),
        ``first_mismatch``.
    mismatches : dict
        Spectrum name -> list of mismatch lines.
    """

    ok: bool
    rows: pd.DataFrame
    mismatches: dict = field(default_factory=dict)

    def __bool__(self) -> bool:
        return self.ok

    def __repr__(self) -> str:
        return f"<SeriesVerifyReport: {str(self).splitlines()[0]}>"

    def __str__(self) -> str:
        n = len(self.rows)
        if self.ok:
            return f"verified: all {n} sessions of the series replay to their records"
        bad = [name for name, m in self.mismatches.items() if m]
        lines = [f"NOT verified: {len(bad)} of {n} sessions differ from their records"]
        for name in bad:
            lines.append(f"  {name}:")
            lines += [f"    - {m}" for m in self.mismatches[name][:5]]
        return "\n".join(lines)


class SeriesSessions:
    """The sessions of a series, opened on demand: ``result.sessions[3]`` (by position in
    series order) or ``result.sessions["hc20_340K.jdx"]`` (by name)."""

    def __init__(self, result: SeriesResult):
        self._result = result

    @property
    def names(self) -> list[str]:
        return [e["name"] for e in self._result.entries]

    def __len__(self) -> int:
        return len(self._result.entries)

    def __iter__(self) -> Iterator[str]:
        return iter(self.names)

    def path(self, key: int | str) -> Path:
        """The session file of one spectrum."""
        e = self._result.entry(key)
        if not e.get("session"):
            raise SeriesError(f"spectrum {e['name']!r} has no session: it failed before one "
                              f"could be started ({'; '.join(e.get('reasons') or [])})")
        return self._result.folder / e["session"]

    def __getitem__(self, key: int | str):
        from ..session import Session

        return Session.load(self.path(key))

    def __repr__(self) -> str:
        return f"<SeriesSessions: {len(self)} spectra>"


class SeriesResult:
    """What :func:`~widgetkit.series.run_series` returns, or :meth:`load` reopens.

    Attributes
    ----------
    folder : Path
        The output folder (``series.json``, ``sessions/``); a temporary folder, removed
        with this object, when the run had no ``out=`` (use :meth:`save`).
    recipe : Recipe
    variable : Variable or None
    interrupted : bool
        True when the run was stopped before every spectrum was done (run it again with
        the same ``out=`` to finish: finished spectra are skipped).
    """

    def __init__(self, folder: str | os.PathLike, doc: dict, *, temporary: bool = False,
                 interrupted: bool = False):
        self.folder = Path(folder)
        self._doc = doc
        self.recipe = Recipe.from_json(doc["recipe"])
        self.variable = Variable.from_json(doc.get("variable"))
        self.interrupted = bool(interrupted)
        self.temporary = bool(temporary)
        self._table: pd.DataFrame | None = None
        if temporary:
            self._cleanup = weakref.finalize(self, shutil.rmtree, str(self.folder), True)

    # ------------------------------------------------------------------ files
    @classmethod
    def load(cls, path: str | os.PathLike) -> SeriesResult:
        """Reopen a series from its series file (or the folder holding ``series.json``)."""
        p = Path(path)
        if p.is_dir():
            p = p / SERIES_FILE
        if not p.exists():
            raise FileNotFoundError(f"no series file {p}")
        return cls(p.parent, read_series_document(p))

    @property
    def path(self) -> Path:
        """The series file."""
        return self.folder / SERIES_FILE

    def save(self, folder: str | os.PathLike) -> Path:
        """Write the series file, the sessions, ``constants.csv`` and ``recipe.json`` to
        ``folder``; returns the series file's path."""
        dest = Path(folder)
        (dest / "sessions").mkdir(parents=True, exist_ok=True)
        for e in self.entries:
            if e.get("session") and (self.folder / e["session"]).resolve() != \
                    (dest / e["session"]).resolve():
                shutil.copyfile(self.folder / e["session"], dest / e["session"])
        text = json.dumps(self._doc, allow_nan=False, separators=(",", ":"))
        codec.atomic_write_text(dest / SERIES_FILE, text)
        self.recipe.save(dest / "recipe.json")
        self.table.to_csv(dest / "constants.csv", index=False)
        return dest / SERIES_FILE

    # ------------------------------------------------------------------ views
    @property
    def entries(self) -> list[dict]:
        """The series file's entries, in series order (copies)."""
        return [dict(e) for e in self._doc["spectra"]]

    def entry(self, key: int | str) -> dict:
        """One entry, by position in series order or by name."""
        spectra = self._doc["spectra"]
        if isinstance(key, int) and not isinstance(key, bool):
            if not -len(spectra) <= key < len(spectra):
                raise SeriesError(f"spectrum {key} is out of range (0..{len(spectra) - 1})")
            return dict(spectra[key])
        for e in spectra:
            if e["name"] == key or e.get("source") == key:
                return dict(e)
        raise SeriesError(f"no spectrum {key!r} in the series; names are "
                          f"{', '.join(e['name'] for e in spectra[:10])}"
                          f"{', ...' if len(spectra) > 10 else ''}")

    @property
    def sessions(self) -> SeriesSessions:
        """Any spectrum's session, opened on demand (:class:`SeriesSessions`)."""
        return SeriesSessions(self)

    @property
    def spectra(self) -> pd.DataFrame:
        """One row per spectrum: ``spectrum, source, sha256, variable, status, reasons, notes,
        session, seconds, warm_start`` (the neighbour a warm start came from, or None)."""
        rows = []
        for e in self._doc["spectra"]:
            ws = e.get("warm_start") or {}
            rows.append({"spectrum": e["name"], "source": e.get("source"),
                         "sha256": e.get("sha256"), "variable": e.get("variable"),
                         "status": e["status"], "reasons": "; ".join(e.get("reasons") or []),
                         "notes": "; ".join(e.get("notes") or []), "session": e.get("session"),
                         "seconds": e.get("seconds"),
                         "warm_start": ws.get("from") if ws.get("kept") else None})
        return pd.DataFrame(rows, columns=["spectrum", "source", "sha256", "variable", "status",
                                           "reasons", "notes", "session", "seconds", "warm_start"])

    @property
    def table(self) -> pd.DataFrame:
        """Tidy constants: one row per spectrum and constant, columns ``spectrum, source,
        sha256, variable, isotopologue, name, value, stderr, unit, status`` (and ``method``
        when the sessions give one). A spectrum without constants (failed) has one row with
        an empty name, so that it is not lost."""
        if self._table is None:
            self._table = self._build_table()
        return self._table.copy()

    def _build_table(self) -> pd.DataFrame:
        cols = list(TABLE_COLUMNS)
        rows = []
        for e in self._doc["spectra"]:
            base = {"spectrum": e["name"], "source": e.get("source") or e["name"],
                    "sha256": e.get("sha256"), "variable": e.get("variable"),
                    "status": e["status"]}
            c = e.get("constants") or {}
            n = len(c.get("name", []))
            if n == 0:
                rows.append({**base, "isotopologue": None, "name": None, "value": math.nan,
                             "stderr": math.nan, "unit": None})
                continue
            extra = [k for k in c if k not in cols]
            cols += [k for k in extra if k not in cols]
            for i in range(n):
                rows.append({**base, **{k: c[k][i] for k in c}})
        df = pd.DataFrame(rows, columns=cols)
        for k in ("value", "stderr", "variable"):
            df[k] = pd.to_numeric(df[k], errors="coerce").astype(float)
        return df

    def constant(self, name: str, isotopologue: str | None = None) -> pd.DataFrame:
        """One constant across the series: ``spectrum, variable, value, stderr, status``
        (failed spectra included with NaN values), in series order. ``isotopologue``
        defaults to the first one listed for that constant."""
        t = self.table
        have = t[t["name"] == name]
        if have.empty:
            known = ", ".join(sorted(set(t["name"].dropna())))
            raise SeriesError(f"no constant {name!r} in the series; known: {known or 'none'}")
        if isotopologue is None and have["isotopologue"].notna().any():
            isotopologue = have["isotopologue"].dropna().iloc[0]
        if isotopologue is not None:
            have = have[have["isotopologue"] == isotopologue]
        have = have.drop_duplicates("spectrum")
        base = t.drop_duplicates("spectrum")[["spectrum", "variable", "status"]]
        out = base.merge(have[["spectrum", "value", "stderr", "unit"]], on="spectrum", how="left")
        return out.reset_index(drop=True)

    def plot(self, name: str, isotopologue: str | None = None, *, ax=None):
        """Plot one constant against the series variable with error bars (matplotlib),
        coloured by status; returns the axes."""
        import matplotlib.pyplot as plt

        d = self.constant(name, isotopologue)
        if ax is None:
            _, ax = plt.subplots(figsize=(6, 3.5))
        x = d["variable"] if d["variable"].notna().any() else pd.Series(range(len(d)))
        for status, color in STATUS_COLORS.items():
            sel = (d["status"] == status) & d["value"].notna()
            if sel.any():
                ax.errorbar(x[sel], d["value"][sel], yerr=d["stderr"][sel].fillna(0), fmt="o",
                            ms=4, capsize=2, color=color, label=status)
        unit = d["unit"].dropna().iloc[0] if d["unit"].notna().any() else ""
        ax.set_xlabel(self.variable.label if self.variable else "spectrum")
        ax.set_ylabel(f"{name} / {unit}" if unit else name)
        ax.legend(frameon=False)
        return ax

    def counts(self) -> dict:
        """Number of spectra by status."""
        out = {"ok": 0, "doubtful": 0, "failed": 0}
        for e in self._doc["spectra"]:
            out[e["status"]] += 1
        return out

    def __len__(self) -> int:
        return len(self._doc["spectra"])

    def __repr__(self) -> str:
        c = self.counts()
        more = ", interrupted" if self.interrupted else ""
        return (f"<SeriesResult: {len(self)} spectra ({c['ok']} ok, {c['doubtful']} doubtful, "
                f"{c['failed']} failed{more}) in {self.folder}>")

    # ------------------------------------------------------------------ verification
    def verify(self, *, workers: int | None = None, client=None, progress: bool = True
               ) -> SeriesVerifyReport:
        """Replay every session of the series (in parallel, as :func:`run_series` runs)
        and compare each with its record and with the series file's constants."""
        from .executors import make_executor
        from .progress import progress_bar
        from .worker import verify_one

        tasks = [{"index": i, "name": e["name"], "path": str(self.folder / e["session"]),
                  "session_sha256": e.get("session_sha256"), "sha256": e.get("sha256"),
                  "constants": e.get("constants")}
                 for i, e in enumerate(self._doc["spectra"]) if e.get("session")]

        def on_error(task, exc):
            return {"index": task["index"], "name": task["name"], "ok": False, "steps_checked": 0,
                    "mismatches": [f"could not be verified: {type(exc).__name__}: {exc}"]}

        results = {}
        executor = make_executor(workers, client)
        with progress_bar(len(tasks), "verify", disable=not progress) as bar:
            try:
                for r in executor.imap_unordered(verify_one, tasks, on_error):
                    results[r["index"]] = r
                    bar.update(1)
            finally:
                executor.close()
        rows, mism = [], {}
        for i, e in enumerate(self._doc["spectra"]):
            r = results.get(i)
            if r is None:
                rows.append({"spectrum": e["name"], "ok": True, "steps_checked": 0,
                             "mismatches": 0, "first_mismatch": "no session (" +
                             "; ".join(e.get("reasons") or []) + ")"})
                continue
            mism[e["name"]] = r["mismatches"]
            rows.append({"spectrum": e["name"], "ok": r["ok"], "steps_checked": r["steps_checked"],
                         "mismatches": len(r["mismatches"]),
                         "first_mismatch": r["mismatches"][0] if r["mismatches"] else ""})
        df = pd.DataFrame(rows, columns=["spectrum", "ok", "steps_checked", "mismatches",
                                         "first_mismatch"])
        return SeriesVerifyReport(ok=bool(df["ok"].all()), rows=df, mismatches=mism)
