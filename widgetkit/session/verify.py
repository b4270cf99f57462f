"""Comparison of recorded and replayed results, and the :class:`VerifyReport`."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

__all__ = ["VerifyReport", "compare_results", "cut", "replay_and_compare", "without_paths",
           "summary_key", "same_summary"]


@dataclass(frozen=True)
class VerifyReport:
    """The outcome of :meth:`Session.verify`.

    Attributes
    ----------
    ok : bool
        True when every source hash and every recorded result was reproduced.
    mismatches : list of str
        One line per difference, naming the step (numbered from 0, the load step, as in
        ``Session.history``) and kind, or the source, and the field.
    steps_checked : int
    """

    ok: bool
    mismatches: list[str] = field(default_factory=list)
    steps_checked: int = 0

    def __bool__(self) -> bool:
        return self.ok

    def __str__(self) -> str:
        if self.ok:
            return f"verified: {self.steps_checked} steps replayed to their recorded results"
        lines = [f"NOT verified: {len(self.mismatches)} mismatch(es) in {self.steps_checked} steps"]
        lines += [f"  - {m}" for m in self.mismatches]
        return "\n".join(lines)


#: how :func:`compare_results` ends the line of a field the replay gives and the record lacks
NOT_RECORDED = "produced on replay but not recorded"

_ARTICLE = re.compile(r"\b(?:a|an)\s+")
_PLURAL_S = re.compile(r"\b([^\W\d_]+?)s\b")
_SPACES = re.compile(r"\s+")


def summary_key(text: str) -> str:
    """A step summary with its wording normalised: letter case, the articles "a"/"an", a
    plural "s", ``_``/``-`` and the spelling of cm⁻¹ (``cm-1``) are set aside; numbers,
    names and everything else are kept.

    ``verify`` compares summaries through this key, so a file saved before a summary's
    grammar was corrected ("subtracted a als baseline", "fitted 1 voigt lines") still
    verifies against today's wording ("subtracted an ALS baseline", "fitted 1 Voigt line"),
    while a changed number or word is still a mismatch (and the step's seal catches any
    edit of the recorded text)."""
    t = str(text).replace("cm⁻¹", "cm-1").replace("_", "-").casefold()
    t = _ARTICLE.sub("", t)
    t = _PLURAL_S.sub(r"\1", t)
    return _SPACES.sub(" ", t).strip()


def same_summary(recorded: str, replayed: str) -> bool:
    """Whether two summaries say the same, wording aside (:func:`summary_key`)."""
    return recorded == replayed or summary_key(recorded) == summary_key(replayed)


def cut(value, limit: int = 120) -> str:
    """``repr(value)`` cut to ``limit`` characters (messages never dump arrays)."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 25] + f"… ({len(text):,} characters)"


def without_paths(result, paths) -> object:
    """A copy of ``result`` without the dotted ``paths`` (for fields verify skips)."""
    if not paths or not isinstance(result, dict):
        return result
    out = dict(result)
    for path in paths:
        head, _, rest = path.partition(".")
        if head not in out:
            continue
        if rest:
            out[head] = without_paths(out[head], [rest])
        else:
            del out[head]
    return out


def _close(a: float, b: float, rtol: float) -> bool:
    if a == b:
        return True
    return abs(a - b) <= rtol * max(abs(a), abs(b)) or abs(a - b) <= 1e-300


def _is_array(value) -> bool:
    return isinstance(value, dict) and value.get("encoding") == "base64" and "sha256" in value


def _compare_arrays(recorded: dict, replayed: dict, *, rtol: float, where: str,
                    out: list[str]) -> None:
    """Encoded arrays compare by value: within ``rtol`` of the larger array's largest
    magnitude, element by element (their bytes may differ in the last bits)."""
    import numpy as np

    from ..errors import SessionFormatError
    from .codec import decode_array

    try:
        a, ok = decode_array(recorded, where=where)
        b, _ = decode_array(replayed, where=where)
    except SessionFormatError as exc:
        out.append(f"{where}: the recorded array cannot be read ({exc})")
        return
    if not ok:
        out.append(f"{where}: the recorded array does not match its recorded sha256")
    if a.shape != b.shape:
        out.append(f"{where}: recorded shape {list(a.shape)}, replayed {list(b.shape)}")
        return
    if a.size == 0:
        return
    diff = np.abs(a - b)
    scale = max(float(np.max(np.abs(a))), float(np.max(np.abs(b))))
    bad = ~(diff <= max(rtol * scale, 1e-300))
    if bad.any():
        i = int(np.argmax(np.where(bad, diff, -1.0)))
        out.append(f"{where}: {int(bad.sum())} of {a.size} values differ, the most at index {i}: "
                   f"recorded {a.flat[i]!r}, replayed {b.flat[i]!r} (tolerance {rtol:g} of the "
                   f"largest value)")


def compare_results(recorded, replayed, *, rtol: float, where: str, out: list[str],
                    limit: int = 5) -> None:
    """Append to ``out`` a line for every difference between two JSON values.

    Integers, strings, booleans and None compare exactly; floats within ``rtol``
    (relative). Lists compare element by element (at most ``limit`` lines per list).
    """
    if isinstance(recorded, bool) or isinstance(replayed, bool):
        if recorded is not replayed:
            out.append(f"{where}: recorded {cut(recorded)}, replayed {cut(replayed)}")
        return
    if isinstance(recorded, int) and isinstance(replayed, int):
        if recorded != replayed:
            out.append(f"{where}: recorded {recorded}, replayed {replayed}")
        return
    if isinstance(recorded, (int, float)) and isinstance(replayed, (int, float)):
        a, b = float(recorded), float(replayed)
        if not (math.isfinite(a) and math.isfinite(b)) or not _close(a, b, rtol):
            if not (a != a and b != b):
                out.append(f"{where}: recorded {recorded!r}, replayed {replayed!r} "
                           f"(tolerance {rtol:g} relative)")
        return
    if _is_array(recorded) and _is_array(replayed):
        _compare_arrays(recorded, replayed, rtol=rtol, where=where, out=out)
        return
    if isinstance(recorded, dict) and isinstance(replayed, dict):
        for k in recorded.keys() | replayed.keys():
            if k not in replayed:
                out.append(f"{where}.{k}: recorded but not produced on replay")
            elif k not in recorded:
                out.append(f"{where}.{k}: {NOT_RECORDED}")
            else:
                compare_results(recorded[k], replayed[k], rtol=rtol, where=f"{where}.{k}", out=out)
        return
    if isinstance(recorded, list) and isinstance(replayed, list):
        if len(recorded) != len(replayed):
            out.append(f"{where}: recorded {len(recorded)} values, replayed {len(replayed)}")
            return
        sub: list[str] = []
        for i, (a, b) in enumerate(zip(recorded, replayed)):
            compare_results(a, b, rtol=rtol, where=f"{where}[{i}]", out=sub)
        out.extend(sub[:limit])
        if len(sub) > limit:
            out.append(f"{where}: … and {len(sub) - limit} more differences")
        return
    if recorded != replayed:
        out.append(f"{where}: recorded {cut(recorded)}, replayed {cut(replayed)}")


def replay_and_compare(steps: list, ctx, problems: list[str]) -> VerifyReport:
    """Run every step again from the sources (``replay``, never ``restore``) and compare its
    result and summary (wording aside, :func:`same_summary`) with the record; ``problems``
    (found while opening: hashes, records that had to be computed) are mismatches too.
    Steps are numbered from 0."""
    import json

    from ..errors import WidgetkitError
    from .steps import STEP_KINDS, State

    mismatches = list(problems)
    state = State()
    checked = 0
    last_sealed = max((i for i, s in enumerate(steps) if s.sha256 is not None), default=-1)
    for i, step in enumerate(steps):
        if step.sha256 is not None and step.sha256 != step.seal():
            mismatches.append(f"step {i} ({step.kind}): its content no longer matches the seal "
                              "it was saved with (the step was edited after saving)")
        elif step.sha256 is None and i < last_sealed:  # steps added since opening have none
            mismatches.append(f"step {i} ({step.kind}): saved without the seal the later steps "
                              "have (it was removed)")
    for i, step in enumerate(steps):
        kind = STEP_KINDS[step.kind]
        where = f"step {i} ({step.kind})"
        try:
            state, result, summary = kind.replay(state, dict(step.params), step.result, ctx)
        except Exception as exc:  # a damaged file may make any computation fail
            what = str(exc) if isinstance(exc, WidgetkitError) else \
                f"{type(exc).__name__}: {cut(str(exc), 200)}"
            mismatches.append(f"{where}: replay failed: {what}")
            break
        checked += 1
        result = json.loads(json.dumps(result, allow_nan=False))
        found: list[str] = []
        compare_results(without_paths(step.result, kind.volatile),
                        without_paths(result, kind.volatile), rtol=kind.tolerance,
                        where=f"{where} result", out=found)
        if not problems and step.sha256 is not None and step.sha256 == step.seal():
            # the file as saved (header, data and this step match their seals): a field the
            # record lacks was added to the result by a later version of widgetkit, not
            # removed from the file (that would break a seal)
            found = [m for m in found if not m.endswith(NOT_RECORDED)]
        mismatches += found
        if not same_summary(step.summary, summary):
            mismatches.append(f"{where} summary: recorded {cut(step.summary)}, "
                              f"replayed {cut(summary)}")
    return VerifyReport(ok=not mismatches, mismatches=mismatches, steps_checked=checked)
