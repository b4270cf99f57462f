"""Reading a Markdown report back: its pipe tables and sections."""

from __future__ import annotations

import re


def md_tables(text: str) -> dict[str, list[dict[str, str]]]:
    """The pipe tables of a Markdown report by section heading, as lists of row dicts (code
    spans unwrapped)."""
    out = {}
    for block in re.split(r"^## ", text, flags=re.M)[1:]:
        title, _, body = block.partition("\n")
        rows = [ln for ln in body.splitlines() if ln.startswith("| ") and not ln.startswith("| ---")]
        if not rows:
            continue
        split = [[c.strip().replace("\\|", "|").strip("`") for c in re.split(r"(?<!\\)\|", r)[1:-1]]
                 for r in rows]
        head = split[0]
        out[title.strip()] = [dict(zip(head, r)) for r in split[1:]]
    return out


def md_section(text: str, title: str) -> str:
    """The text of one ``## title`` section of a Markdown report."""
    m = re.search(rf"^## {re.escape(title)}\n(.*?)(?=^## |\Z)", text, flags=re.M | re.S)
    assert m, f"no section {title!r}"
    return m.group(1)
