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
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import SeriesError, WidgetkitError
from . import codec
from .recipe_steps import (
    EDIT_KINDS,
    ID_STEPS,
    LOCK_KINDS,
    REPLACING_KINDS,
    IdRefs,
    RecipeStep,
    anchors_of,
    id_table,
    kept_indices,
    line_hints,
    still_locked,
)
from .steps import STEP_KINDS, State, software_versions, utc_now

if TYPE_CHECKING:  # pragma: no cover
    from ..spectrum import Spectrum
    from .session import Session

__all__ = ["Recipe", "RecipeStep", "RecipeRun", "RECIPE_FORMAT", "EDIT_KINDS", "REPLACING_KINDS",
           "ID_STEPS", "IdRefs", "line_hints"]

RECIPE_FORMAT = "widgetkit-recipe"

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
        keep = kept_indices(history, final)
        steps = []
        for i in keep:
            st = history[i]
            params = st.params
            anchors = None
            refs = ID_STEPS.get(st.kind)
            if st.kind in LOCK_KINDS:
                params = still_locked(st.kind, params, final)
            if refs is not None:
                anchors = anchors_of(refs.space, refs.ids(params), session.state_at(i - 1))
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
            Not strict JSON (repeated keys, NaN, absurd sizes or nesting are refused as
            for session files), not a recipe, a newer version than this widgetkit reads, a
            malformed step or an unknown step kind (the message names the field).
        FileNotFoundError
            No such file.
        """
        from .jsonfile import read

        p = str(path)
        return _parse(read(p, error=SeriesError, what="a recipe"), p)

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
        ids, pos, _ = id_table(state, refs.space)
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
