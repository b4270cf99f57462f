"""Recipes: the steps of a worked-out session, to be applied to other spectra.

A :class:`Recipe` is what :meth:`Session.recipe` returns: every step after the
load step, with its kind and its parameters exactly as recorded, so that any
registered step kind works in a recipe without special cases. Three things
make the steps of one spectrum fit another:

* **Ids become positions.** A step that names a peak or a line by id
  (``remove_peak``, ``set_assignment``, ``clear_assignment``) keeps, beside
  its parameters, an *anchor*: the position of that peak or line in the
  worked-out spectrum and a tolerance (half the distance to its nearest
  neighbour, at most its FWHM). On another spectrum the id is replaced by the
  id of the nearest peak or line within that tolerance; when there is none
  the edit is skipped and the skip is reported (:attr:`RecipeRun.skipped`).
* **Only what still applies.** Notes are left out; a lock (``set_assignment``,
  ``clear_assignment``) is kept only where the session's final state still
  holds it (a lock cleared by a later step, or replaced by another lock, is
  dropped); manual peak edits followed by a new ``find_peaks`` are dropped;
  a ``find_peaks``, ``fit_lines`` or ``assign_band`` step directly followed
  by another step of the same kind is dropped (the later one replaces its
  result entirely).
* **Edits may fail, analysis may not.** A manual edit that cannot be made on
  another spectrum (a peak already found there, say) is skipped and
  reported; any other step that fails stops the recipe there, and the
  session as far as it got is kept (:attr:`RecipeRun.failed`).

The file is JSON, ``format: "widgetkit-recipe"``, with the *session* format
``version`` (:data:`widgetkit.session.codec.VERSION`): its steps are session
steps, so an older recipe is brought up to date by the session migrations.
"""

from __future__ import annotations

import hashlib
import json
import os
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import SeriesError, WidgetkitError
from . import codec
from .steps import STEP_KINDS, State, software_versions, utc_now

if TYPE_CHECKING:  # pragma: no cover
    from ..spectrum import Spectrum
    from .session import Session

__all__ = ["Recipe", "RecipeStep", "RecipeRun", "RECIPE_FORMAT", "EDIT_KINDS", "ID_STEPS",
           "IdRefs", "line_hints"]

RECIPE_FORMAT = "widgetkit-recipe"
#: manual edits: skipped (and reported) when they cannot be made on another spectrum
EDIT_KINDS = frozenset({"add_peak", "remove_peak", "set_assignment", "clear_assignment"})
#: a step of one of these kinds is replaced entirely by a directly following one of the same kind
REPLACING_KINDS = frozenset({"find_peaks", "fit_lines", "assign_band"})
_PEAK_EDITS = frozenset({"add_peak", "remove_peak"})
_LOCK_KINDS = frozenset({"set_assignment", "clear_assignment"})
#: fallback anchor tolerance (cm-1) for a lone peak of unknown width
_LONE_TOLERANCE = 1.0


@dataclass(frozen=True)
class IdRefs:
    """How a step kind names peaks or lines by id.

    ``space`` is ``"peaks"`` (``State.peaks``, ``peak_id``) or ``"lines"`` (the
    line fit's table, ``line_id``); ``ids(params)`` lists the ids a step names;
    ``with_ids(params, mapping)`` returns the parameters with ids replaced
    (``mapping``: old id -> new id; ids missing from it are left out).
    """

    space: str
    ids: Callable[[dict], list[int]]
    with_ids: Callable[[dict, dict[int, int]], dict]


def _lock_ids(p: dict) -> list[int]:
    if "assignments" in p:
        return [int(k) for k in p["assignments"]]
    return [int(p["line_id"])]


def _lock_with_ids(p: dict, m: dict[int, int]) -> dict:
    if "assignments" in p:
        return {**p, "assignments": {str(m[int(k)]): v for k, v in p["assignments"].items()
                                     if int(k) in m}}
    return {**p, "line_id": m[int(p["line_id"])]}


#: step kinds whose parameters name peaks or lines by id (register new ones here)
ID_STEPS: dict[str, IdRefs] = {
    "remove_peak": IdRefs("peaks", lambda p: [int(p["peak_id"])],
                          lambda p, m: {**p, "peak_id": m[int(p["peak_id"])]}),
    "set_assignment": IdRefs("lines", _lock_ids, _lock_with_ids),
    "clear_assignment": IdRefs("lines", lambda p: [int(p["line_id"])],
                               lambda p, m: {**p, "line_id": m[int(p["line_id"])]}),
}


def _table(state: State, space: str):
    """(ids, positions, fwhm or None) of the peaks or the fitted lines of a state."""
    if space == "peaks":
        t = state.peaks
        return (t["peak_id"].to_numpy(int), t["position"].to_numpy(float),
                t["fwhm"].to_numpy(float) if "fwhm" in t else None)
    fit = state.line_fit
    if fit is None:
        return np.zeros(0, int), np.zeros(0), None
    t = fit.table
    return (t["line_id"].to_numpy(int), t["position"].to_numpy(float),
            t["fwhm"].to_numpy(float) if "fwhm" in t else None)


def _anchors(space: str, ids: list[int], state: State) -> dict:
    """id -> {position, tolerance} of each id in ``state`` (ids not found are left out)."""
    all_ids, pos, fwhm = _table(state, space)
    out = {}
    for i in ids:
        k = np.nonzero(all_ids == i)[0]
        if k.size == 0:
            continue
        k = int(k[0])
        others = np.delete(pos, k)
        tol = 0.5 * float(np.min(np.abs(others - pos[k]))) if others.size else np.inf
        if fwhm is not None and np.isfinite(fwhm[k]) and fwhm[k] > 0:
            tol = min(tol, float(fwhm[k]))
        out[str(i)] = {"position": float(pos[k]),
                       "tolerance": float(tol) if np.isfinite(tol) else _LONE_TOLERANCE}
    return out


@dataclass(frozen=True)
class RecipeStep:
    """One step of a recipe: ``kind`` and ``params`` as recorded, ``summary`` of the
    original step, and ``anchors`` (id as str -> ``{"position", "tolerance"}``, cm⁻¹) for
    steps that name peaks or lines by id."""

    kind: str
    params: dict
    summary: str = ""
    anchors: dict | None = None

    def to_json(self) -> dict:
        return {"kind": self.kind, "params": self.params, "summary": self.summary,
                "anchors": self.anchors}


@dataclass(frozen=True)
class RecipeRun:
    """The outcome of :meth:`Recipe.apply` on one spectrum.

    Attributes
    ----------
    session : Session
        The new session (as far as it got when a step failed).
    skipped : tuple of str
        Edits that could not be made on this spectrum, each naming the recipe step
        and why.
    failed : str or None
        The step that failed (``"step 3 (fit_lines): ..."``, numbered in the new
        session, load = step 0) and its error; None when every step ran.
    """

    session: Session
    skipped: tuple[str, ...] = ()
    failed: str | None = None


class _Unresolved(Exception):
    pass


#: ``adjust(index, kind, params, session) -> [(kind, params), ...]``: the steps to run for
#: recipe step ``index`` (e.g. with warm-start values); the default runs the step as it is.
#: ``params`` may be a callable ``params(session) -> dict``, called just before its step runs
#: (so it sees the steps planned before it).
Adjuster = Callable[[int, str, dict, "Session"], list[tuple[str, dict]]]


def _canonical(obj) -> str:
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), allow_nan=False)


@dataclass(frozen=True)
class Recipe:
    """The steps of a worked-out session, to run on other spectra (module notes).

    Attributes
    ----------
    steps : tuple of RecipeStep
    read_options : dict
        How the worked-out spectrum was read (``x_unit=``, ``y_kind=``, ...); used for
        every file the recipe is applied to unless other options are given.
    reference : dict
        Where the recipe was worked out: ``path``, ``sha256``, ``title`` and ``lines``
        (``position``, ``fwhm``, ``label``, ``isotopologue`` of the fitted lines), for
        warm starts.
    created : str
        ISO time.
    software : dict
        Versions when the recipe was made.

    Examples
    --------
    >>> r = s.recipe(); r.save("hcl.recipe.json")                       # doctest: +SKIP
    >>> run = wk.Recipe.load("hcl.recipe.json").apply("hcl_340K.jdx")  # doctest: +SKIP
    >>> run.session.constants                                          # doctest: +SKIP
    """

    steps: tuple[RecipeStep, ...]
    read_options: dict = field(default_factory=dict)
    reference: dict = field(default_factory=dict)
    created: str = ""
    software: dict = field(default_factory=dict)

    # ------------------------------------------------------------------ from a session
    @classmethod
    def from_session(cls, session: Session) -> Recipe:
        """The recipe of ``session`` (see :meth:`Session.recipe`)."""
        history = session.history
        final = session.state_at(len(history) - 1)
        keep = _kept_indices(history, final)
        steps = []
        for i in keep:
            st = history[i]
            params = st.params
            anchors = None
            refs = ID_STEPS.get(st.kind)
            if st.kind in _LOCK_KINDS:
                params = _still_locked(st.kind, params, final)
            if refs is not None:
                anchors = _anchors(refs.space, refs.ids(params), session.state_at(i - 1))
            steps.append(RecipeStep(st.kind, json.loads(json.dumps(params)), st.summary, anchors))
        src = session.sources[0]
        reference = {"path": src.get("path"), "sha256": src.get("sha256"),
                     "title": (src.get("meta") or {}).get("title"),
                     "lines": line_hints(final)}
        return cls(steps=tuple(steps), read_options=dict(src.get("read_options") or {}),
                   reference=reference, created=utc_now(), software=software_versions())

    # ------------------------------------------------------------------ files
    def to_json(self) -> dict:
        """The recipe as a JSON document (``format``, ``version``, ...)."""
        return {"format": RECIPE_FORMAT, "version": codec.VERSION, "created": self.created,
                "software": self.software, "read_options": self.read_options,
                "reference": self.reference, "steps": [s.to_json() for s in self.steps]}

    @property
    def sha256(self) -> str:
        """sha256 of what the recipe does (steps, anchors, read options, reference lines);
        equal for equal recipes whenever they were made."""
        core = {"version": codec.VERSION, "read_options": self.read_options,
                "reference": self.reference.get("lines"),
                "steps": [{"kind": s.kind, "params": s.params, "anchors": s.anchors}
                          for s in self.steps]}
        return hashlib.sha256(_canonical(core).encode("utf-8")).hexdigest()

    def save(self, path: str | os.PathLike) -> None:
        """Write the recipe as JSON (atomically)."""
        codec.atomic_write_text(path, json.dumps(self.to_json(), indent=1, allow_nan=False))

    @classmethod
    def from_json(cls, doc: Any, *, path: str | None = None) -> Recipe:
        """A recipe from its JSON document; :class:`SeriesError` naming the field otherwise."""
        return _parse(doc, path)

    @classmethod
    def load(cls, path: str | os.PathLike) -> Recipe:
        """Read a recipe file written by :meth:`save`.

        Raises
        ------
        SeriesError
            Not JSON, not a recipe, a newer version than this widgetkit reads, a
            malformed step or an unknown step kind (the message names the field).
        FileNotFoundError
            No such file.
        """
        p = str(path)
        try:
            text = Path(p).read_text(encoding="utf-8")
        except UnicodeDecodeError as exc:
            raise SeriesError(f"not a text (UTF-8 JSON) file: {exc}", path=p) from None
        try:
            doc = json.loads(text)
        except json.JSONDecodeError as exc:
            raise SeriesError(f"invalid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}",
                              path=p) from None
        return _parse(doc, p)

    # ------------------------------------------------------------------ applying
    def apply(self, spectrum: Spectrum | str | os.PathLike, *, read_options: dict | None = None,
              adjust: Adjuster | None = None) -> RecipeRun:
        """Run the recipe on a spectrum (or a file, read with ``read_options``, default
        :attr:`read_options`) in a new session.

        ``adjust(index, kind, params, session)`` may replace recipe step ``index`` by
        other steps (warm starts); every step run is recorded in the session as usual,
        so the session replays exactly. Reading errors propagate.
        """
        from ..spectrum import Spectrum
        from .session import Session

        if isinstance(spectrum, Spectrum):
            session = Session(spectrum, read_options=read_options)
        else:
            opts = self.read_options if read_options is None else read_options
            session = Session.from_file(spectrum, **opts)
        skipped: list[str] = []
        for i, rs in enumerate(self.steps):
            try:
                params = self._resolve(rs, session.state_at(len(session.history) - 1))
            except _Unresolved as exc:
                skipped.append(f"recipe step {i + 1} ({rs.kind}): {exc}")
                continue
            planned = [(rs.kind, params)] if adjust is None else adjust(i, rs.kind, params, session)
            for kind, p in planned:
                where = f"step {len(session.history)} ({kind})"
                try:
                    session._run(kind, p(session) if callable(p) else p)
                except WidgetkitError as exc:
                    if kind in EDIT_KINDS:
                        skipped.append(f"recipe step {i + 1} ({kind}): not applied: {exc}")
                        continue
                    return RecipeRun(session, tuple(skipped), f"{where}: {exc}")
                except Exception as exc:  # noqa: BLE001 - a bug must not lose the session
                    return RecipeRun(session, tuple(skipped),
                                     f"{where}: unexpected {type(exc).__name__}: {exc} (a bug in "
                                     "widgetkit; please report it with this spectrum)")
        return RecipeRun(session, tuple(skipped), None)

    def _resolve(self, rs: RecipeStep, state: State) -> dict:
        refs = ID_STEPS.get(rs.kind)
        if refs is None or not rs.anchors:
            return dict(rs.params)
        ids, pos, _ = _table(state, refs.space)
        mapping: dict[int, int] = {}
        misses = []
        for old in refs.ids(rs.params):
            a = rs.anchors.get(str(old))
            if a is None or pos.size == 0:
                misses.append(f"{refs.space[:-1]} {old}")
                continue
            k = int(np.argmin(np.abs(pos - a["position"])))
            if abs(pos[k] - a["position"]) <= a["tolerance"] and int(ids[k]) not in mapping.values():
                mapping[old] = int(ids[k])
            else:
                misses.append(f"no {refs.space[:-1]} within {a['tolerance']:.3g} cm-1 of "
                              f"{a['position']:.4f} cm-1")
        if not mapping:
            raise _Unresolved("; ".join(misses))
        return refs.with_ids(dict(rs.params), mapping)

    def __repr__(self) -> str:
        kinds = ", ".join(s.kind for s in self.steps)
        return f"<Recipe: {len(self.steps)} steps ({kinds})>"


# ---------------------------------------------------------------------- building
def _kept_indices(history, final: State) -> list[int]:
    """Indices of the steps a recipe keeps (module notes)."""
    idx = [i for i, st in enumerate(history) if i > 0 and st.kind not in ("load", "note")]
    last_find = max((i for i in idx if history[i].kind == "find_peaks"), default=-1)
    idx = [i for i in idx if not (history[i].kind in _PEAK_EDITS and i < last_find)]
    kept = []
    for n, i in enumerate(idx):
        kind = history[i].kind
        nxt = history[idx[n + 1]].kind if n + 1 < len(idx) else None
        if kind in REPLACING_KINDS and nxt == kind:
            continue
        if kind in _LOCK_KINDS and not _still_locked(kind, history[i].params, final):
            continue
        kept.append(i)
    return kept


def _still_locked(kind: str, params: dict, final: State) -> dict:
    """The part of a lock step that the final state still holds ({} when none)."""
    locks = {int(k): dict(v) for k, v in final.locks.items()}
    if kind == "clear_assignment":
        return params if locks.get(int(params["line_id"])) == {} else {}
    if "assignments" in params:
        still = {k: v for k, v in params["assignments"].items() if locks.get(int(k)) == dict(v)}
        return {**params, "assignments": still} if still else {}
    return params if locks.get(int(params["line_id"])) == dict(params["labels"]) else {}


def line_hints(state: State) -> dict:
    """The fitted lines of a state as plain lists (``line_id``, ``position``, ``fwhm`` and,
    when assigned, ``label`` and ``isotopologue``): what warm starts take from a
    neighbouring spectrum. Empty without a line fit."""
    fit = state.line_fit
    if fit is None:
        return {}
    t = fit.table
    out = {"line_id": [int(v) for v in t["line_id"]],
           "position": [float(v) for v in t["position"]],
           "fwhm": [float(v) if np.isfinite(v) else None
                    for v in (t["fwhm"] if "fwhm" in t else t["position"] * np.nan)]}
    a = getattr(state.assignment, "assignments", None)
    if a is not None and "label" in a:
        lab = a.set_index("line_id")
        for col in ("label", "isotopologue"):
            vals = lab[col] if col in lab else None
            out[col] = [None if vals is None or i not in vals.index or not isinstance(vals[i], str)
                        else str(vals[i]) for i in out["line_id"]]
    return out


# ---------------------------------------------------------------------- reading
def _parse(doc: Any, path: str | None) -> Recipe:
    def bad(where: str, what: str):
        return SeriesError(f"field {where}: {what}", path=path)

    if not isinstance(doc, dict) or doc.get("format") != RECIPE_FORMAT:
        got = doc.get("format") if isinstance(doc, dict) else type(doc).__name__
        raise SeriesError(f"not a widgetkit recipe (format is {got!r}, expected "
                          f"{RECIPE_FORMAT!r}); make one with Session.recipe().save(path)", path=path)
    version = doc.get("version")
    if not isinstance(version, int) or isinstance(version, bool) or version < 1:
        raise bad("version", f"must be a positive integer, got {version!r}")
    if version > codec.VERSION:
        raise SeriesError(f"the recipe is of session format version {version}, but this widgetkit "
                          f"reads versions up to {codec.VERSION}; upgrade widgetkit", path=path)
    steps = doc.get("steps")
    if not isinstance(steps, list):
        raise bad("steps", "must be a list of steps")
    for i, st in enumerate(steps):
        if not isinstance(st, dict) or not isinstance(st.get("kind"), str) \
                or not isinstance(st.get("params"), dict):
            raise bad(f"steps/{i}", "each step needs a 'kind' (text) and 'params' (an object)")
        if st["kind"] not in STEP_KINDS or st["kind"] == "load":
            known = ", ".join(sorted(k for k in STEP_KINDS if k != "load"))
            raise bad(f"steps/{i}/kind", f"unknown step kind {st['kind']!r} (known: {known})")
        anchors = st.get("anchors")
        if anchors is not None and not (isinstance(anchors, dict) and all(
                isinstance(a, dict) and isinstance(a.get("position"), (int, float))
                and isinstance(a.get("tolerance"), (int, float)) for a in anchors.values())):
            raise bad(f"steps/{i}/anchors", "must map ids to {'position': number, "
                                             "'tolerance': number}")
    for name in ("read_options", "reference"):
        if not isinstance(doc.get(name, {}), Mapping):
            raise bad(name, "must be an object")
    if version < codec.VERSION:
        steps = _migrate_steps(steps, version, path)
    return Recipe(steps=tuple(RecipeStep(s["kind"], s["params"], str(s.get("summary", "")),
                                         s.get("anchors")) for s in steps),
                  read_options=dict(doc.get("read_options", {})),
                  reference=dict(doc.get("reference", {})), created=str(doc.get("created", "")),
                  software=dict(doc.get("software") or {}))


def _migrate_steps(steps: list[dict], version: int, path: str | None) -> list[dict]:
    """Bring the steps of an older recipe up to date through the session migrations."""
    pseudo = {"format": codec.FORMAT, "version": version, "created": "", "modified": "",
              "software": {}, "sources": [],
              "steps": [{"kind": s["kind"], "params": s["params"], "at": "", "summary":
                         s.get("summary", ""), "result": {}, "software": {}} for s in steps]}
    try:
        new = codec.migrate(pseudo, path=path)
    except WidgetkitError as exc:
        raise SeriesError(f"cannot bring the recipe up to date: {exc}", path=path) from None
    return [{**old, "kind": s["kind"], "params": s["params"]}
            for old, s in zip(steps, new["steps"])]
