"""The :class:`Session`: the single source of truth of an analysis.

A session holds the source data (embedded, with hashes) and an ordered list of
:class:`~widgetkit.session.steps.Step` records. The state after each step is
kept, so undo and stepping through the record are cheap; every state is a pure
function of the sources and the steps, which is what :meth:`Session.verify`
checks by replaying them.

Changes flow one way: a method validates its arguments, runs the step kind,
appends the step and notifies the observers (``subscribe``). A step that
raises leaves the session unchanged.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from ..errors import SessionFormatError, SessionStateError
from ..spectrum import Spectrum
from . import codec, persist
from .migrate import MigrationReport, migrate_file, refuse_older
from .params import ParamProblem, check_json
from .step_methods import StepMethods
from .steps import STEP_KINDS, Context, State, Step, software_versions, utc_now
from .verify import VerifyReport, replay_and_compare
from .views import ASSIGNMENT_COLUMNS, CONSTANT_COLUMNS, LINE_COLUMNS, StateViews

__all__ = ["Session", "SessionEvent", "LINE_COLUMNS", "ASSIGNMENT_COLUMNS", "CONSTANT_COLUMNS"]


def checked_params(kind: str, params: dict) -> dict:
    """``params`` checked against the kind's declaration (:mod:`.params`) and normalised;
    a bad value raises the kind's ``argument_error`` naming the argument and the value."""
    k = STEP_KINDS[kind]
    try:
        return k.check_params(params)
    except ParamProblem as exc:
        raise k.argument_error(f"{kind}: argument {exc.field!r} {exc.problem}") from None


def _plain_meta(meta: dict) -> dict:
    """The spectrum's metadata as plain JSON for the record (numpy values and tuples
    converted); what JSON cannot hold is refused naming the entry."""
    try:
        return check_json(dict(meta), "meta")
    except ParamProblem as exc:
        raise SessionStateError(
            f"Session: the spectrum's metadata cannot be recorded: {exc.field} {exc.problem}; "
            "drop or replace that entry (spectrum.replace(meta=...))") from None


@dataclass(frozen=True)
class SessionEvent:
    """What an observer is told: ``kind`` is ``"step"``, ``"undo"`` or ``"view"``."""

    kind: str
    step: Step | None
    index: int


class Session(StepMethods, StateViews):
    """A recorded, replayable analysis of one spectrum.

    Parameters
    ----------
    spectrum : Spectrum
        The raw data. Its ``source`` (path, sha256 of the file) is kept when present;
        the arrays are embedded in saved files with their own sha256.

    Examples
    --------
    >>> s = Session.from_file("band.csv")                    # doctest: +SKIP
    >>> s.subtract_baseline("als", lam=1e6); s.find_peaks(min_snr=10)  # doctest: +SKIP
    >>> s.save("band.session.json"); Session.load("band.session.json").verify().ok  # doctest: +SKIP
    True
    """

    def __init__(self, spectrum: Spectrum, *, read_options: dict | None = None):
        if not isinstance(spectrum, Spectrum):
            raise SessionStateError(
                f"Session needs a widgetkit Spectrum, got {type(spectrum).__name__}; "
                "use Session.from_file(path) to read a file")
        src = spectrum.source or {}
        record = {
            "id": "src1", "path": src.get("path"), "sha256": src.get("sha256"),
            "size": src.get("size"), "format": src.get("format"), "y_kind": spectrum.y_kind,
            "meta": _plain_meta(spectrum.meta), "read_options": dict(read_options or {}),
        }
        self._init_empty()
        self._add_source(record, spectrum)
        self._run("load", {"source": "src1"})

    def _init_empty(self) -> None:
        self._sources: list[dict] = []
        self._source_spectra: dict[str, Spectrum] = {}
        self._source_problems: list[str] = []
        self._steps: list[Step] = []
        self._states: list[State] = []
        self._cursor: int | None = None
        self._observers: list[Callable] = []
        self._pending: list[SessionEvent] = []
        self._notifying = False
        self.created = utc_now()
        self.path: str | None = None

    def _add_source(self, record: dict, spectrum: Spectrum) -> None:
        record = dict(record)
        record.pop("data_sha256", None)  # computed when asked for (see sources)
        self._sources.append(record)
        self._source_spectra[record["id"]] = spectrum

    @property
    def _ctx(self) -> Context:
        return Context(sources=self._source_spectra,
                       records={rec["id"]: rec for rec in self._sources})

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_file(cls, path: str | os.PathLike, **read_opts) -> Session:
        """Read a spectrum file (see :func:`widgetkit.read_spectrum`) and start a session."""
        from ..io import read_spectrum

        return cls(read_spectrum(path, **read_opts), read_options=read_opts)

    @classmethod
    def load(cls, path: str | os.PathLike) -> Session:
        """Reopen a saved session.

        The file is checked before anything is computed (strict JSON, the schema, every
        step's parameters), the embedded data are decoded and their sha256 checked, and
        the state after each step is rebuilt from the recorded results
        (:meth:`StepKind.restore`: no fit is run again). A step whose record does not fit
        the state before it is computed instead, and :meth:`verify` lists it;
        :meth:`verify` runs every step again.

        Raises
        ------
        SessionFormatError
            When the file was saved by an older widgetkit in a form this version cannot
            verify (the message names :meth:`migrate`), is not strict JSON, fails the
            schema, holds a malformed step (naming it from 0 and the field), is of a newer
            version than this code, or a step can be neither restored nor computed.
        OSError
            When the file cannot be read at all (missing, a folder, no permission).
        """
        doc = codec.read_document(path)
        refuse_older(doc, str(path))
        persist.check_steps(doc["steps"], str(path))
        self = cls.__new__(cls)
        self._init_empty()
        self.created = doc["created"]
        self.path = str(path)
        ids = [rec["id"] for rec in doc["sources"]]
        if len(set(ids)) != len(ids):
            raise SessionFormatError("field sources: two sources have the same id", path=path)
        persist.check_header(doc, self._source_problems)
        for rec in doc["sources"]:
            self._add_source(rec, persist.decode_source(rec, str(path), self._source_problems))
        self._steps = [Step(**s) for s in doc["steps"]]
        self._states, recomputed = persist.restore_states(self._steps, self._ctx, str(path))
        self._source_problems += [
            f"step {i} ({self._steps[i].kind}): the recorded result does not fit the state "
            "before it, so it was computed again on reopening" for i in recomputed]
        return self

    @classmethod
    def migrate(cls, path: str | os.PathLike) -> MigrationReport:
        """Bring a session file saved by an older widgetkit up to date: every recorded step is
        run again in this version from the file's embedded data (the file is only read).

        Returns a :class:`~widgetkit.session.migrate.MigrationReport` whose ``session`` is the
        new session (save it to a new file) and which lists the steps whose results moved.
        ``widgetkit migrate OLD NEW`` does the same from the command line.
        """
        return migrate_file(path)

    # ------------------------------------------------------------------ running steps
    def _run(self, kind: str, params: dict) -> Step:
        if self._cursor is not None:
            raise SessionStateError(
                f"the session is showing step {self._cursor} of steps 0..{len(self._steps) - 1}; "
                "call view_latest() before changing the analysis (nothing was changed)")
        params = checked_params(kind, params)
        previous = self._states[-1] if self._states else State()
        new_state, result, summary = STEP_KINDS[kind].apply(previous, params, self._ctx)
        step = Step(kind=kind, params=params, at=utc_now(), summary=summary,
                    result=json.loads(json.dumps(result, allow_nan=False)),
                    software=software_versions())
        self._steps.append(step)
        self._states.append(new_state)
        self._notify(SessionEvent("step", step, len(self._steps) - 1))
        return step

    def undo(self) -> Step:
        """Drop the last step (the first, ``load``, cannot be undone); returns it."""
        if self._cursor is not None:
            raise SessionStateError("call view_latest() before undo (nothing was changed)")
        if len(self._steps) <= 1:
            raise SessionStateError("nothing to undo: the session holds only its load step")
        step = self._steps.pop()
        self._states.pop()
        self._notify(SessionEvent("undo", step, len(self._steps) - 1))
        return step

    def replay_with(self, index: int, **params) -> Session:
        """A new session in which step ``index`` has its parameters updated by ``params``
        and every later step is re-run with its own parameters (results recomputed).

        The original session is not changed: use it to see how one choice (a different
        baseline, say) moves the results.
        """
        n = len(self._steps)
        i = index + n if index < 0 else index
        if not 0 < i < n:
            raise SessionStateError(f"replay_with: step index {index} must be in 1..{n - 1} "
                                    "(the load step cannot be changed)")
        step = self._steps[i]
        try:
            STEP_KINDS[step.kind].check_params({**step.params, **params})
        except ParamProblem as exc:
            raise STEP_KINDS[step.kind].argument_error(
                f"replay_with: step {i} ({step.kind}) parameter {exc.field!r} {exc.problem}"
            ) from None
        new = Session.__new__(Session)
        new._init_empty()
        for rec in self._sources:
            new._add_source(rec, self._source_spectra[rec["id"]])
        new._steps = self._steps[:i]
        new._states = self._states[:i]
        for j, step in enumerate(self._steps[i:], start=i):
            p = {**step.params, **params} if j == i else dict(step.params)
            new._run(step.kind, p)
        return new

    def recipe(self):
        """The steps after loading, as a :class:`~widgetkit.session.recipe.Recipe` to run on
        other spectra (``wk.run_series``); ``Recipe.save(path)`` writes it as JSON.

        Ids of peaks and lines become positions (with a tolerance); notes, locks no longer
        held and steps replaced by a later one of the same kind are left out (see
        :mod:`widgetkit.session.recipe`).
        """
        from .recipe import Recipe

        return Recipe.from_session(self)

    # ------------------------------------------------------------------ stepping through the record
    def view(self, index: int) -> None:
        """Show the state after step ``index`` (0-based; negative counts from the end).

        Every property (``spectrum``, ``peaks``, ``lines``, ...) then reflects that
        state until :meth:`view_latest`; analysis methods refuse to run meanwhile.
        """
        n = len(self._steps)
        i = index + n if index < 0 else index
        if not 0 <= i < n:
            raise SessionStateError(f"view: step index {index} is out of range (0..{n - 1})")
        self._cursor = None if i == n - 1 else i
        self._notify(SessionEvent("view", self._steps[i], i))

    def view_latest(self) -> None:
        """Show the latest state again."""
        self.view(-1)

    @property
    def viewing(self) -> int:
        """Index of the step whose state is shown (the last one unless :meth:`view` was used)."""
        return len(self._steps) - 1 if self._cursor is None else self._cursor

    @property
    def state(self) -> State:
        """The state shown (see :meth:`view`)."""
        return self._states[self.viewing]

    def state_at(self, index: int) -> State:
        """The state after step ``index``."""
        return self._states[index]

    # ------------------------------------------------------------------ observers
    def subscribe(self, callback: Callable[[Session, SessionEvent], Any]) -> Callable:
        """Call ``callback(session, event)`` after every change; returns the callback."""
        if callback not in self._observers:
            self._observers.append(callback)
        return callback

    def unsubscribe(self, callback: Callable) -> None:
        """Stop calling ``callback`` (no error when it was not subscribed)."""
        if callback in self._observers:
            self._observers.remove(callback)

    def _notify(self, event: SessionEvent) -> None:
        # The one re-entrancy guard: an observer that changes the session from inside a
        # notification queues its event; it is delivered after the current one, in order.
        self._pending.append(event)
        if self._notifying:
            return
        self._notifying = True
        errors: list[BaseException] = []
        try:
            while self._pending:
                ev = self._pending.pop(0)
                for cb in list(self._observers):
                    try:
                        cb(self, ev)
                    except Exception as exc:  # every observer still hears of the change
                        errors.append(exc)
        finally:
            self._notifying = False
        if errors:
            raise errors[0]

    def __repr__(self) -> str:
        sp = self._states[-1].spectrum
        return f"<Session: {len(self._steps)} steps, {sp!r}>"

    # ------------------------------------------------------------------ files
    def to_document(self, *, embed: bool = True) -> dict:
        """The session as a JSON-able document (see :mod:`widgetkit.session.codec`)."""
        return persist.session_document(self._sources, self._source_spectra, self._steps,
                                        created=self.created, embed=embed)

    def save(self, path: str | os.PathLike, *, embed: bool = True) -> None:
        """Write the session to ``path`` atomically (the previous file survives a failure).

        With ``embed=True`` (default) the file holds the source data and is self-contained.
        A new file gets the umask's mode (0644 under umask 022), an existing one keeps its
        mode; a symbolic link is written through. A missing folder, or a file where a folder
        should be, raises :class:`~widgetkit.errors.FilePathError` naming the path before
        anything is written.
        """
        from .._files import check_writable

        check_writable(path)  # before any work: a missing folder is named at once
        text = json.dumps(self.to_document(embed=embed), allow_nan=False, separators=(",", ":"))
        codec.atomic_write_text(path, text)
        self.path = str(path)

    # ------------------------------------------------------------------ verification
    def verify(self) -> VerifyReport:
        """Replay every step from the source data and compare with the recorded results.

        Integers, labels and booleans must match exactly; floats to 1e-9 relative unless
        the step kind declares its own tolerance; summaries must match exactly. A changed
        source hash is a mismatch too. Steps are numbered from 0 (the load step), as in
        :attr:`history` and :meth:`view`.
        """
        return replay_and_compare(self._steps, self._ctx, self._source_problems)
