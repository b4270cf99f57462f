"""Reading and writing the session's sources and record (used by :class:`Session`)."""

from __future__ import annotations

import os

from ..errors import SessionFormatError, SessionStateError, WidgetkitError
from ..spectrum import Spectrum
from . import codec
from .params import ParamProblem
from .steps import STEP_KINDS, Context, State, Step, seal_json, software_versions, utc_now
from .verify import cut

__all__ = ["check_header", "check_steps", "decode_source", "header_seal", "restore_states",
           "session_document"]


def _source_of(rec: dict) -> dict | None:
    if not rec.get("path") and not rec.get("sha256"):
        return None
    return {k: rec.get(k) for k in ("path", "sha256", "format", "size")}


def decode_source(rec: dict, path: str, problems: list[str]) -> Spectrum:
    """The spectrum of one source record: from its embedded data, or else by re-reading
    the original file. Hash mismatches are appended to ``problems`` (``verify`` reports them);
    anything that cannot be decoded is a :class:`SessionFormatError` naming the source."""
    try:
        return _decode_source(rec, path, problems)
    except SessionFormatError:
        raise
    except Exception as exc:
        what = str(exc) if isinstance(exc, WidgetkitError) else \
            f"{type(exc).__name__}: {cut(str(exc), 200)}"
        raise SessionFormatError(f"source {cut(rec.get('id'), 40)} cannot be read: {what}",
                                 path=path) from None


def _decode_source(rec: dict, path: str, problems: list[str]) -> Spectrum:
    """The spectrum of one source record: from its embedded data, or else by re-reading
    the original file. Hash mismatches are appended to ``problems`` (``verify`` reports them)."""
    sid = rec["id"]
    meta = rec.get("meta", {})
    if rec["data"] is not None:
        x, okx = codec.decode_array(rec["data"]["x"], where=f"sources/{sid}/data/x")
        y, oky = codec.decode_array(rec["data"]["y"], where=f"sources/{sid}/data/y")
        for name, ok in (("x", okx), ("y", oky)):
            if not ok:
                problems.append(
                    f"source {sid} field data.{name}: the embedded data does not match its "
                    "recorded sha256 (the data were changed after saving)")
        try:
            return Spectrum(x, y, y_kind=rec["y_kind"], meta=meta, source=_source_of(rec))
        except WidgetkitError as exc:
            raise SessionFormatError(f"sources/{sid}: embedded data invalid: {exc}",
                                     path=path) from None
    from ..io import read_spectrum

    src_path = rec["path"]
    if not src_path or not os.path.exists(src_path):
        raise SessionFormatError(
            f"sources/{sid}: the session was saved without embedded data and the source file "
            f"{src_path!r} is not there; put the file back or save sessions with embed=True",
            path=path)
    sp = read_spectrum(src_path, **rec.get("read_options", {}))
    if rec["sha256"] and (sp.source or {}).get("sha256") != rec["sha256"]:
        problems.append(
            f"source {sid} field sha256: the file {src_path} has changed since the session "
            "was saved (its sha256 differs)")
    return sp


def check_steps(steps: list[dict], path: str) -> None:
    """Every step of a document: a known kind (load first) with parameters that fit its
    declaration; the first problem is a :class:`SessionFormatError` naming the step (from 0)
    and the field. Runs before anything is decoded or computed."""
    if steps[0].get("kind") != "load":
        raise SessionFormatError("field steps/0/kind: the first step must be 'load'", path=path)
    for i, step in enumerate(steps):
        kind = STEP_KINDS.get(step["kind"])
        if kind is None:
            raise SessionFormatError(
                f"field steps/{i}/kind: unknown step kind {cut(step['kind'], 40)} "
                f"(known: {', '.join(sorted(STEP_KINDS))})", path=path)
        if i and step["kind"] == "load":
            raise SessionFormatError(f"field steps/{i}/kind: only step 0 may be 'load'", path=path)
        try:
            kind.check_params(step["params"])
        except ParamProblem as exc:
            raise SessionFormatError(f"step {i} ({step['kind']}), field params.{exc.field}: "
                                     f"{exc.problem}", path=path) from None


#: most steps whose record does not fit and that are computed instead while opening a file
MAX_RECOMPUTED = 20
#: most spectrum points the restored states may hold together (every state keeps its own copy
#: of a spectrum it changed: 16 bytes a point)
MAX_STATE_POINTS = 50_000_000


def restore_states(steps: list[Step], ctx: Context, path: str) -> tuple[list[State], list[int]]:
    """The state after each step, rebuilt from the recorded results (fast reopen).

    Each kind's :meth:`~widgetkit.session.steps.StepKind.restore` is used; where it finds
    that the record does not fit the state (``RecordMismatch``, or a record too damaged to
    read) the step is computed instead (``apply``). Returns the states and the numbers of
    the steps computed for that reason. A step that can be neither restored nor computed
    is a :class:`SessionFormatError` naming it (steps are numbered from 0, the load step),
    and so is a file whose opening would cost more than a session can: more than
    :data:`MAX_RECOMPUTED` damaged records, or states holding more than
    :data:`MAX_STATE_POINTS` spectrum points together.
    """
    states: list[State] = []
    recomputed: list[int] = []
    state = State()
    points = 0
    for i, step in enumerate(steps):
        kind = STEP_KINDS[step.kind]
        try:
            try:
                new = kind.restore(state, dict(step.params), step.result, ctx)
            except Exception:  # RecordMismatch, or a record too damaged to read
                recomputed.append(i)
                if len(recomputed) > MAX_RECOMPUTED:
                    raise SessionFormatError(
                        f"the records of more than {MAX_RECOMPUTED} steps do not fit the "
                        "states before them; the file is too damaged to open (steps "
                        f"{', '.join(map(str, recomputed[:5]))}, ...)") from None
                new = kind.replay(state, dict(step.params), step.result, ctx)[0]
        except SessionFormatError as exc:
            raise SessionFormatError(f"step {i} ({step.kind}): {exc}", path=path) from None
        except Exception as exc:
            what = str(exc) if isinstance(exc, WidgetkitError) else \
                f"{type(exc).__name__}: {cut(str(exc), 200)}"
            raise SessionFormatError(f"step {i} ({step.kind}) cannot be reopened: {what}",
                                     path=path) from exc
        if new.spectrum is not None and new.spectrum is not state.spectrum:
            points += len(new.spectrum)
            if points > MAX_STATE_POINTS:
                raise SessionFormatError(
                    f"step {i} ({step.kind}): the steps change the spectrum so often that their "
                    f"states would hold more than {MAX_STATE_POINTS:,} points together; this is "
                    "not a session widgetkit writes", path=path)
        state = new
        states.append(state)
    return states, recomputed


def session_document(sources: list[dict], spectra: dict[str, Spectrum], steps: list[Step], *,
                     created: str, embed: bool) -> dict:
    """The JSON document of a session (layout in :mod:`widgetkit.session.codec`)."""
    out_sources = []
    for rec in sources:
        sp = spectra[rec["id"]]
        out = {k: rec[k] for k in ("id", "path", "sha256", "size", "format", "y_kind",
                                   "meta", "read_options")}
        out["data"] = ({"x": codec.encode_array(sp.x), "y": codec.encode_array(sp.y)}
                       if embed else None)
        out_sources.append(out)
    if not embed and not all(r["path"] for r in out_sources):
        raise SessionStateError("save(embed=False) needs a source file path; this session "
                                "was made from an in-memory spectrum, so save it embedded")
    doc = {"format": codec.FORMAT, "version": codec.VERSION, "created": created,
           "modified": utc_now(), "software": software_versions(), "sources": out_sources,
           "steps": [s.to_json() for s in steps]}
    doc["sha256"] = header_seal(doc)
    return doc


def header_seal(doc: dict) -> str:
    """sha256 of the document without its steps (each step carries its own seal) and with
    every embedded array replaced by its recorded sha256: times, software versions and every
    field of the sources. :meth:`Session.verify` compares it with the one saved."""
    head = {k: v for k, v in doc.items() if k not in ("steps", "sha256")}
    head["sources"] = [
        {**src, "data": None if src.get("data") is None else
         {name: arr.get("sha256") for name, arr in src["data"].items()}}
        for src in doc.get("sources", [])]
    return seal_json(head)


def check_header(doc: dict, problems: list[str]) -> None:
    """Append to ``problems`` when the document's header no longer matches its seal."""
    if "sha256" in doc and doc["sha256"] != header_seal(doc):
        problems.append("the file's header (created, modified, software versions or a source "
                        "field) no longer matches the seal it was saved with (it was edited "
                        "after saving)")
