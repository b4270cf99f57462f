"""Session files saved by an older widgetkit: recognised on opening, and brought up to date.

The first releases wrote session format 1 without seals (no ``sha256`` on the header or on any
step) and without the records that let a file reopen without computing. Their results came
from older code, and some steps (the peak search, the noise estimate) are computed
differently now, so such a file cannot be verified as it stands: :meth:`Session.load` refuses
it with a :class:`~widgetkit.errors.SessionFormatError` that says so and names the way out.

Migrating (:func:`migrate_file`, ``Session.migrate(path)``, ``widgetkit migrate OLD NEW``)
builds a new session from the file's embedded data and runs every recorded step again, with
the parameters as recorded, in this version; it reports, step by step, which results came out
other than recorded, and ends the new session with a note saying where it came from. The old
file is only read. The new session is saved like any other and verifies.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from ..errors import SessionFormatError, WidgetkitError
from . import codec, persist
from .steps import STEP_KINDS, software_versions
from .verify import NOT_RECORDED, compare_results, cut, same_summary, without_paths

if TYPE_CHECKING:  # pragma: no cover
    from .session import Session

__all__ = ["older_form", "refuse_older", "MigrationReport", "migrate_file"]


def older_form(doc: dict) -> str | None:
    """How a (checked, current-version) session document differs from what this code writes,
    in words; None when it is of the current form. A file without any seal (neither the
    header's ``sha256`` nor any step's) was written by the first releases."""
    if "sha256" in doc or any("sha256" in st for st in doc.get("steps", [])):
        return None
    version = str((doc.get("software") or {}).get("widgetkit", "unknown"))
    day = str(doc.get("created", ""))[:10] or "an unknown day"
    return (f"saved by widgetkit {version[:30]} on {day} in an older format (the first form "
            f"of session format {doc.get('version')}: steps neither sealed nor recorded for "
            "reopening)")


def refuse_older(doc: dict, path: str) -> None:
    """Raise :class:`SessionFormatError` for a file of an older form, naming the migration."""
    what = older_form(doc)
    if what is None:
        return
    name = os.path.basename(path) or path
    raise SessionFormatError(
        f"{what}. This widgetkit computes some steps differently, so it cannot reopen or verify "
        f"the file as it stands. Migrate it: `widgetkit migrate {name} NEW.json` (or "
        "wk.Session.migrate(path)) runs every recorded step again on the embedded data, lists "
        "the results that moved and writes a current session; the old file is left as it is",
        path=path)


@dataclass(frozen=True)
class MigrationReport:
    """The outcome of :func:`migrate_file`.

    Attributes
    ----------
    session : Session
        The new session (as far as it got when a step failed), ending with a note saying
        where it came from; save it with ``session.save(path)``.
    path : str
        The file migrated.
    saved_with : str
        The widgetkit version that wrote it.
    steps : int
        Steps in the file (the load step included).
    migrated : int
        Steps run again.
    moved : list of str
        One line per step whose results (or summary) came out other than recorded, with
        the first difference; fields the old file did not have are not counted.
    problems : list of str
        Embedded data that no longer match their recorded sha256.
    failed : str or None
        The step that could not be run again, and why.
    """

    session: Session
    path: str
    saved_with: str
    steps: int
    migrated: int
    moved: list[str] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    failed: str | None = None

    @property
    def ok(self) -> bool:
        """Every step ran again and the embedded data are intact."""
        return self.failed is None and not self.problems

    def __str__(self) -> str:
        head = (f"migrated {self.path} (saved by widgetkit {self.saved_with}): "
                f"{self.migrated} of {self.steps} steps run again")
        lines = [head + ("" if self.failed is None else "; stopped there")]
        if self.failed:
            lines.append(f"  - FAILED: {self.failed}")
        lines += [f"  - {p}" for p in self.problems]
        if self.moved:
            lines.append(f"  results that moved in {len(self.moved)} step(s):")
            lines += [f"  - {m}" for m in self.moved]
        elif self.failed is None:
            lines.append("  every result came out as recorded")
        return "\n".join(lines)


def _moved(index: int, kind_name: str, recorded: dict, step) -> str | None:
    """One line saying how a step's new result differs from the old record, or None."""
    kind = STEP_KINDS[kind_name]
    diffs: list[str] = []
    compare_results(without_paths(recorded.get("result", {}), kind.volatile),
                    without_paths(step.result, kind.volatile), rtol=kind.tolerance,
                    where="result", out=diffs)
    diffs = [d for d in diffs if not d.endswith(NOT_RECORDED)]
    if not same_summary(str(recorded.get("summary", "")), step.summary):
        diffs.insert(0, f"summary: was {cut(recorded.get('summary'))}, now {cut(step.summary)}")
    if not diffs:
        return None
    more = f" (and {len(diffs) - 1} more)" if len(diffs) > 1 else ""
    return f"step {index} ({kind_name}): {diffs[0]}{more}"


def migrate_file(path: str | os.PathLike) -> MigrationReport:
    """Run every step of a saved session (of any form this code reads) again in this version
    from its embedded data; see the module notes. The file is only read.

    Raises
    ------
    SessionFormatError
        When the file is not a session file this code can read (strict JSON, the schema,
        every step's parameters against today's declarations, naming the step and field).
    OSError
        When it cannot be read at all.
    """
    from .session import Session

    p = os.fspath(path)
    doc = codec.read_document(p)
    persist.check_steps(doc["steps"], p)
    new = Session.__new__(Session)
    new._init_empty()
    problems: list[str] = []
    for rec in doc["sources"]:
        new._add_source(rec, persist.decode_source(rec, p, problems))
    moved: list[str] = []
    failed = None
    for i, st in enumerate(doc["steps"]):
        try:
            step = new._run(st["kind"], dict(st["params"]))
        except Exception as exc:  # an old step this version cannot run: keep what ran
            what = str(exc) if isinstance(exc, WidgetkitError) else \
                f"{type(exc).__name__}: {cut(str(exc), 200)}"
            failed = f"step {i} ({st['kind']}): {what}"
            break
        line = _moved(i, st["kind"], st, step)
        if line:
            moved.append(line)
    saved_with = str((doc.get("software") or {}).get("widgetkit", "unknown"))
    ran = len(new.history)
    new.note(f"migrated from {os.path.basename(p)} (saved by widgetkit {saved_with}, "
             f"{doc.get('created', '')}): {ran} of {len(doc['steps'])} steps run again with "
             f"widgetkit {software_versions().get('widgetkit')}; results moved in "
             f"{len(moved)} step(s)" + (f"; stopped at {failed}" if failed else ""))
    return MigrationReport(session=new, path=p, saved_with=saved_with, steps=len(doc["steps"]),
                           migrated=ran, moved=moved, problems=problems, failed=failed)
