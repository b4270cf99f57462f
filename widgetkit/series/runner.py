""":func:`run_series`: one recipe over many spectra, on this machine or a Dask cluster.

The run has two passes, both deterministic, so the serial run, the process
pool and a cluster give the same numbers:

1. **Every spectrum on its own** (in parallel): the recipe runs in a new
   session per spectrum (:func:`~widgetkit.series.worker.run_one`); its
   session file is written as it arrives and the series file is refreshed
   every few seconds, so an interrupted run keeps what it finished.
2. **Warm starts where they help** (``warm_start=True``): each spectrum that
   came out doubtful, or failed in a step a warm start changes
   (:data:`WARM_KINDS`), is run again starting from its nearest
   neighbour in the series that came out ok (by the series variable, then by
   name; the worked-out spectrum of the recipe when there is none): peaks for
   the neighbour's assigned lines that were not found, the neighbour's line
   widths as starting widths and two of its assignments as locks. All of it
   is recorded as ordinary steps, so the session replays exactly. The warm
   result is kept only when it ranks better (ok > doubtful > failed); the row
   says which neighbour it came from.

Running again with the same ``out`` skips every spectrum whose source sha256,
recipe and variable are unchanged and whose session file is intact (failed
spectra are tried again).
"""

from __future__ import annotations

import os
import re
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

from ..errors import SeriesError
from ..session import codec
from ..session.recipe import Recipe, line_hints
from ..session.steps import utc_now
from .executors import make_executor
from .progress import progress_bar
from .result import SERIES_FILE, SeriesResult, read_series_document, series_document
from .sources import Source, expand_sources, natural_key
from .variable import Variable
from .worker import STATUS_RANK, run_one

__all__ = ["run_series"]

#: seconds between refreshes of the series file during a run
_FLUSH_EVERY = 3.0


def _as_recipe(recipe) -> Recipe:
    if isinstance(recipe, Recipe):
        return recipe
    if isinstance(recipe, (str, os.PathLike)):
        return Recipe.load(recipe)
    if hasattr(recipe, "recipe") and hasattr(recipe, "history"):
        return recipe.recipe()
    raise SeriesError(f"recipe must be a Recipe, a recipe file or a Session, got "
                      f"{type(recipe).__name__}")


class _Store:
    """The output folder during a run: session files, entries, the series file."""

    def __init__(self, folder: Path, recipe: Recipe, variable: Variable | None):
        self.folder, self.recipe, self.variable = folder, recipe, variable
        self.entries: dict[int, dict] = {}
        self.hints: dict[int, dict] = {}
        self.created = utc_now()
        self.previous = self._previous()
        self._flushed = time.monotonic()

    def _previous(self) -> dict[str, dict]:
        path = self.folder / SERIES_FILE
        if not path.exists():
            return {}
        try:
            doc = read_series_document(path)
        except SeriesError:
            return {}  # replaced by this run's file
        same_var = _same_variable(Variable.from_json(doc.get("variable")), self.variable)
        if doc.get("recipe_sha256") != self.recipe.sha256 or not same_var:
            return {}
        self.created = doc.get("created", self.created)
        return {e["name"]: e for e in doc["spectra"]}

    def reusable(self, src: Source, sha: str | None) -> dict | None:
        from .sources import file_sha256

        old = self.previous.get(src.name)
        if old is None or sha is None or old.get("sha256") != sha or old["status"] == "failed" \
                or old.get("session") != src.session_file:
            return None
        try:
            if file_sha256(self.folder / old["session"]) != old.get("session_sha256"):
                return None
        except OSError:
            return None
        return old

    def keep(self, index: int, old: dict) -> None:
        self.entries[index] = {**old, "index": index}

    def record(self, out: dict, src: Source) -> None:
        doc = out.pop("document", None)
        hints = out.pop("hints", None)
        entry = {k: out.get(k) for k in ("index", "name", "source", "sha256", "variable",
                                         "variable_unit", "status", "reasons", "notes",
                                         "seconds", "cpu_seconds", "warm_start", "constants")}
        entry["session"] = entry["session_sha256"] = None
        if doc is not None:
            data = doc.encode("utf-8")
            codec.atomic_write_text(self.folder / src.session_file, doc)
            entry["session"] = src.session_file
            entry["session_sha256"] = _sha(data)
        self.entries[out["index"]] = entry
        if hints and entry["status"] == "ok":
            self.hints[out["index"]] = hints
        self.flush()

    def counts(self) -> dict:
        c = {"ok": 0, "doubtful": 0, "failed": 0}
        for e in self.entries.values():
            c[e["status"]] += 1
        return c

    def ordered(self) -> list[dict]:
        def key(e):
            v = e.get("variable")
            return (v is None, v if v is not None else 0.0, natural_key(e["name"]))

        return sorted(self.entries.values(), key=key)

    def flush(self, *, force: bool = False, complete: bool = False) -> None:
        if not force and time.monotonic() - self._flushed < _FLUSH_EVERY:
            return
        var = self.variable
        if var is not None and var.unit is None:
            unit = next((e["variable_unit"] for e in self.entries.values()
                         if e.get("variable_unit")), None)
            var = Variable(var.name, unit, var.field, var.pattern, var.values)
        doc = series_document(self.recipe, var, self.ordered(), created=self.created,
                              complete=complete)
        import json

        codec.atomic_write_text(self.folder / SERIES_FILE,
                                json.dumps(doc, allow_nan=False, separators=(",", ":")))
        self._flushed = time.monotonic()
        self.doc = doc


def _same_variable(old: Variable | None, new: Variable | None) -> bool:
    """Whether a run with ``new`` reads the variable as the run that wrote ``old`` (whose
    unit may have been filled in from the headers)."""
    if old is None or new is None:
        return old is new
    same = (old.name, old.field, old.pattern, old.values) == \
        (new.name, new.field, new.pattern, new.values)
    return same and (new.unit is None or new.unit == old.unit)


def _sha(data: bytes) -> str:
    import hashlib

    return hashlib.sha256(data).hexdigest()


def _failure(task: dict, exc: BaseException) -> dict:
    return {"index": task["index"], "name": task["name"], "source": task.get("path"),
            "sha256": None, "variable": None, "variable_unit": None, "status": "failed",
            "reasons": [f"the worker could not run it: {type(exc).__name__}: {exc}"],
            "notes": [], "constants": {}, "document": None, "seconds": None,
            "warm_start": task.get("warm_meta"), "hints": None}


def _note(recipe: Recipe, src: Source) -> str:
    return (f"widgetkit series: recipe {recipe.sha256[:12]} applied to {src.name} "
            f"(worked out on {recipe.reference.get('title') or recipe.reference.get('path')})")


def _task(i: int, src: Source, recipe: Recipe, variable, read_options, **extra) -> dict:
    return {"index": i, "name": src.name, "path": src.path, "spectrum": src.spectrum,
            "recipe": recipe, "read_options": read_options, "variable": variable,
            "note": _note(recipe, src), **extra}


def _neighbour_hints(store: _Store, order: list[dict], pos: int):
    """(name, hints) of the nearest ok spectrum to ``order[pos]``, else the recipe's own."""
    for d in range(1, len(order)):
        for j in (pos - d, pos + d):
            if 0 <= j < len(order) and order[j]["status"] == "ok":
                e = order[j]
                hints = store.hints.get(e["index"])
                if hints is None and e.get("session"):
                    try:
                        from ..session import Session

                        s = Session.load(store.folder / e["session"])
                        hints = line_hints(s.state_at(len(s.history) - 1))
                    except Exception:  # noqa: BLE001 - an unreadable neighbour is skipped
                        hints = None
                if hints:
                    return e["name"], hints
    ref = store.recipe.reference
    if ref.get("lines"):
        return f"the worked-out spectrum {ref.get('title') or ref.get('path')}", ref["lines"]
    return None, None


#: steps a warm start changes: a spectrum that failed elsewhere (reading, a conversion) is
#: not run again
WARM_KINDS = frozenset({"find_peaks", "add_peak", "fit_lines", "set_assignment", "assign_band"})
_FAILED_STEP = re.compile(r"step \d+ \((\w+)\)")


def _may_help(entry: dict) -> bool:
    if entry["status"] == "doubtful":
        return True
    m = _FAILED_STEP.match((entry.get("reasons") or [""])[0])
    return entry["status"] == "failed" and m is not None and m.group(1) in WARM_KINDS


def _warm_tasks(store: _Store, sources: list[Source], ran: set[int], variable, read_options
                ) -> Iterator[dict]:
    order = store.ordered()
    for pos, e in enumerate(order):
        if e["index"] not in ran or not _may_help(e) or e.get("sha256") is None:
            continue
        name, hints = _neighbour_hints(store, order, pos)
        if hints is None:
            continue
        src = sources[e["index"]]
        meta = {"from": name, "cold_status": e["status"], "cold_reasons": e["reasons"][:3]}
        task = _task(e["index"], src, store.recipe, variable, read_options, hints=hints,
                     warm_meta=meta)
        task["note"] += f"; warm start from {name} (its lines as starting values)"
        yield task


def _record_warm(store: _Store, out: dict, src: Source) -> None:
    cold = store.entries[out["index"]]
    meta = dict(out.get("warm_start") or {})
    if STATUS_RANK[out["status"]] > STATUS_RANK[cold["status"]]:
        out["warm_start"] = {**meta, "kept": True}
        store.record(out, src)
    else:
        cold["warm_start"] = {**meta, "kept": False, "warm_status": out["status"]}
        cold["notes"] = list(cold.get("notes") or []) + [
            f"a warm start from {meta.get('from')} was tried and was not better "
            f"({out['status']}); the spectrum's own result is kept"]


def run_series(recipe, sources, *, variable=None, workers: int | None = None, client=None,
               progress: bool = True, out: str | os.PathLike | None = None,
               warm_start: bool = True, read_options: dict | None = None) -> SeriesResult:
    """Run one recipe over many spectra, each in its own auditable session.

    Parameters
    ----------
    recipe : Recipe, path or Session
        ``s.recipe()``, a recipe file (``Recipe.save``), or a worked-out session.
    sources : path, folder, glob pattern, Spectrum, or a list of them
        Folders give their spectrum files (:data:`~widgetkit.series.sources.SPECTRUM_SUFFIXES`)
        in natural order. Files are read by the workers, one at a time.
    variable : str, mapping, Variable or (spec, unit), optional
        The series variable: a header field (``"set temperature"``), a regular expression
        with a group on the file name (``r"_(\\d+)K"``) or a mapping name -> value
        (:class:`~widgetkit.series.variable.Variable`).
    workers : int, optional
        Local processes (default: every core of this machine); 1 runs in this process.
    client : dask.distributed.Client or str, optional
        Run on this Dask cluster (or the scheduler at this address) instead; the workers
        need widgetkit and the spectrum files under the same paths.
    progress : bool
        Show a ``tqdm.auto`` progress bar (a widget in notebooks, text in terminals).
    out : path, optional
        Output folder: ``series.json`` (the series file), ``sessions/*.session.json``.
        Default: a temporary folder removed with the result (``result.save(folder)``).
        Running again with the same ``out`` skips spectra already done (module notes).
    warm_start : bool
        Run failed or doubtful spectra again from their neighbour (module notes).
    read_options : dict, optional
        How to read the files (``x_unit=``, ``y_kind=``, ...); default the recipe's.

    Returns
    -------
    SeriesResult
        ``.table`` (tidy constants), ``.spectra`` (status per spectrum), ``.sessions``,
        ``.plot(name)``, ``.save(folder)``, ``.verify()``. Ctrl-C (or the notebook's
        stop button) ends the run early: the result holds what was finished, with
        ``interrupted=True``, and the series file is written.

    Raises
    ------
    SeriesError
        Bad arguments (recipe, sources, variable, workers, client); never for one
        spectrum, whose row says what failed instead.
    """
    recipe = _as_recipe(recipe)
    var = Variable.parse(variable)
    srcs = expand_sources(sources)
    executor = make_executor(workers, client)
    temporary = out is None
    folder = Path(tempfile.mkdtemp(prefix="widgetkit-series-")) if temporary else Path(out)
    try:
        (folder / "sessions").mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        executor.close()
        raise SeriesError(f"out: cannot create the output folder {folder}: {exc}") from None
    store = _Store(folder, recipe, var)
    todo = []
    for i, src in enumerate(srcs):
        old = store.reusable(src, src.sha256()) if store.previous else None
        if old is not None:
            store.keep(i, old)
        else:
            todo.append(i)
    interrupted = False
    ran = set(todo)
    bar = progress_bar(len(srcs), f"series ({executor.kind})", initial=len(srcs) - len(todo),
                       disable=not progress)
    try:
        tasks = (_task(i, srcs[i], recipe, var, read_options) for i in todo)
        for res in executor.imap_unordered(run_one, tasks, _failure):
            store.record(res, srcs[res["index"]])
            bar.update(1)
            bar.set_postfix(store.counts(), refresh=False)
        if warm_start:
            warm = list(_warm_tasks(store, srcs, ran, var, read_options))
            if warm:
                bar.set_description(f"warm starts ({len(warm)})")
                for res in executor.imap_unordered(run_one, iter(warm), _failure):
                    _record_warm(store, res, srcs[res["index"]])
                    bar.set_postfix(store.counts(), refresh=False)
    except KeyboardInterrupt:
        interrupted = True
        executor.close(cancel=True)
        bar.write(f"interrupted: {len(store.entries)} of {len(srcs)} spectra done; run again "
                  f"with out={str(folder)!r} to finish (finished spectra are skipped)")
    finally:
        if not interrupted:
            executor.close()
        bar.close()
        store.flush(force=True, complete=not interrupted and len(store.entries) == len(srcs))
    return SeriesResult(folder, store.doc, temporary=temporary, interrupted=interrupted)
