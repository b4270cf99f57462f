"""The record structure of JCAMP-DX files: labelled data records grouped into blocks.

A file is a sequence of records ``##LABEL=value`` (the value runs to the next line starting
with ``##``); ``$$`` starts a comment to the end of its line. A block runs from ``##TITLE=``
to ``##END=``; a compound file (``##BLOCKS=``) nests blocks inside a link block (McDonald and
Wilks, Applied Spectroscopy 42 (1988) 151; Lampen et al., Applied Spectroscopy 48 (1994)
1545). Records before the first ``##TITLE=`` (some writers put ``##JCAMP-DX=`` first) belong
to the first block.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np

from ..errors import SpectrumFormatError
from ._common import decode_text
from ._labels import number_and_rest

__all__ = ["normalise_label", "parse_blocks", "choose_block", "number", "whole_number",
           "DATA_LABELS", "Checks"]

# a record starts at a line whose first non-blank characters are "##"; its label runs to "="
# (the class excludes "=" and line ends, so a failed match stops at the line's end: linear)
_LDR = re.compile(rb"^[ \t]*##([^=\r\n]*)=", re.M)
DATA_LABELS = {"XYDATA": "XYDATA", "XYPOINTS": "XYPOINTS", "PEAKTABLE": "PEAK TABLE"}
_REFUSED = {"NTUPLES", "DATATABLE", "RADATA", "VARNAME", "PAGE"}
_LABEL_JUNK = str.maketrans("", "", " \t\r\n\x0b\x0c-/_")


class Checks:
    """How consistency checks end: ``"strict"`` raises, ``"warn"`` keeps the data and adds the
    message to :attr:`warnings`."""

    def __init__(self, mode: str, path: str):
        self.mode = mode
        self.path = path
        self.warnings: list[str] = []
        self.results: dict[str, str] = {}

    def fail(self, message: str, line: int | None, fix: str = "") -> None:
        """A failed check: raise (strict) or record a warning (warn)."""
        if self.mode != "warn":
            hint = fix or "pass checks='warn' to read the file anyway if you trust it"
            raise SpectrumFormatError(f"{message}; {hint}", path=self.path, line=line)
        where = f" (line {line})" if line is not None else ""
        self.warnings.append(message + where)

    def note(self, message: str) -> None:
        """A warning kept in every mode (something odd that does not change the data)."""
        self.warnings.append(message)


def normalise_label(raw: str) -> str:
    """A label as the specification compares it: ``"Data Type" -> "DATATYPE"``."""
    return raw.translate(_LABEL_JUNK).upper()


def _text(value: bytes) -> str:
    lines = [ln.split("$$", 1)[0].strip() for ln in decode_text(value).split("\n")]
    return "\n".join(ln for ln in lines if ln).strip()


def _new_block(title: str, line: int) -> dict[str, Any]:
    return {"title": title, "labels": {}, "line": line, "data": None, "children": 0}


def parse_blocks(data: bytes, path: str, checks: Checks) -> list[dict[str, Any]]:
    """All blocks with data, in file order; each a dict of labels, data record and lines.

    ``data`` has LF line ends. Labels map the normalised label to ``(text, line, raw
    label)``."""
    matches = list(_LDR.finditer(data))
    if not matches:
        raise SpectrumFormatError("no ##LABEL= records found; this is not a JCAMP-DX file",
                                  path=path)
    found: list[dict[str, Any]] = []
    stack: list[dict[str, Any]] = []
    preamble: dict[str, tuple] = {}
    trailing: list[str] = []
    line, pos = 1, 0
    for k, m in enumerate(matches):
        line += data.count(b"\n", pos, m.start())
        pos = m.start()
        end = matches[k + 1].start() if k + 1 < len(matches) else len(data)
        raw_label = decode_text(m.group(1)).strip()
        label = normalise_label(raw_label)
        value = data[m.end():end]
        if label == "TITLE":
            block = _new_block(_text(value), line)
            if stack:
                stack[-1]["children"] += 1
            elif not found and preamble:
                block["preamble"] = preamble  # the block's own labels win over these
                preamble = {}
            stack.append(block)
            continue
        if label in _REFUSED:
            raise SpectrumFormatError(
                f"##{raw_label}= is not supported; widgetkit reads ##XYDATA=(X++(Y..Y)), "
                "##XYDATA=(XY..XY), ##XYPOINTS=(XY..XY) and ##PEAK TABLE=(XY..XY): export the "
                "spectrum in one of these forms", path=path, line=line)
        if not stack:
            if label == "END":
                continue  # a stray ##END= changes nothing
            if label in DATA_LABELS:
                where = "after the last ##END=" if found else "before any ##TITLE="
                checks.fail(f"the data record ##{raw_label}= stands outside any block "
                            f"({where}) and is not read", line,
                            "every JCAMP-DX block runs from ##TITLE= to ##END=")
                continue
            if found or trailing:
                trailing.append(f"##{raw_label}= (line {line})")
            else:
                preamble.setdefault(label, (_text(value), line, raw_label))
            continue
        block = stack[-1]
        if label == "END":
            stack.pop()
            _check_children(block, path, checks)
            if block["data"] is not None:
                found.append(block)
            continue
        if label in DATA_LABELS:
            if block["data"] is not None:
                raise SpectrumFormatError(f"a second data record ##{raw_label}= in the block "
                                          f"{block['title']!r}; one spectrum per block",
                                          path=path, line=line)
            block["data"] = (label, value, line)
            continue
        block["labels"].setdefault(label, (_text(value), line, raw_label))
    if trailing:
        checks.note("records after the last ##END= were ignored: " + ", ".join(trailing[:5]))
    if stack:
        last = data.count(b"\n") + (0 if data.endswith(b"\n") else 1)
        checks.fail(f"the file ends without ##END= for the block {stack[-1]['title']!r} (line "
                    f"{stack[-1]['line']}); it may be truncated", max(last, 1),
                    "copy or export it again, or pass checks='warn' if only ##END= is missing")
        found += [b for b in stack if b["data"] is not None]
    if not found:
        raise SpectrumFormatError("no spectrum data: expected ##XYDATA=, ##XYPOINTS= or "
                                  "##PEAK TABLE=", path=path)
    for b in found:
        b["labels"] = {**b.pop("preamble", {}), **b["labels"]}
    return found


def _check_children(block: dict[str, Any], path: str, checks: Checks) -> None:
    blocks = block["labels"].get("BLOCKS")
    if blocks is not None and whole_number(blocks, "BLOCKS", path) != block["children"]:
        checks.fail(f"##BLOCKS={blocks[0]} but the compound file holds {block['children']} "
                    "block(s); the file is incomplete or BLOCKS is wrong", blocks[1])


def number(entry, name: str, path: str) -> float:
    """The number a label's value (``(text, line, raw)``) holds, nothing after it."""
    text, line = entry[0], entry[1]
    num, rest = number_and_rest(text)
    if not num or rest:
        raise SpectrumFormatError(f"##{name}={text[:40]!r} is not a number", path=path,
                                  line=line)
    v = float(num)
    if not math.isfinite(v):
        raise SpectrumFormatError(f"##{name}={text[:40]!r} is not finite", path=path, line=line)
    return v


def whole_number(entry, name: str, path: str) -> int:
    v = number(entry, name, path)
    if v != int(v):
        raise SpectrumFormatError(f"##{name}= must be a whole number, got {entry[0][:40]!r}",
                                  path=path, line=entry[1])
    return int(v)


def choose_block(blocks: list[dict[str, Any]], block, path: str) -> tuple[dict[str, Any], int]:
    """The block asked for (title, ``##BLOCK_ID=`` or 0-based index), default the first."""
    titles = [b["title"] for b in blocks]
    if block is None:
        return blocks[0], 0
    if isinstance(block, (int, np.integer)) and not isinstance(block, bool):
        if 0 <= int(block) < len(blocks):
            return blocks[int(block)], int(block)
        raise SpectrumFormatError(f"block={block} is out of range: the file holds "
                                  f"{len(blocks)} spectrum block(s), numbered from 0: {titles}",
                                  path=path)
    if isinstance(block, str):
        want = block.strip()
        for i, b in enumerate(blocks):
            if b["title"] == want or b["labels"].get("BLOCKID", ("",))[0] == want:
                return b, i
        for i, b in enumerate(blocks):
            if b["title"].lower() == want.lower():
                return b, i
        raise SpectrumFormatError(f"no block titled {block!r}; the spectrum blocks are "
                                  f"{titles}", path=path)
    raise SpectrumFormatError(f"block must be a title or a 0-based index, got {block!r}",
                              path=path)
