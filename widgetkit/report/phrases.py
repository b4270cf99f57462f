"""Small pieces of the methods sentences: numbers as sentences write them, lists joined
with "and", the latest step of a kind (private to :mod:`widgetkit.report`)."""

from __future__ import annotations

import re

from ..formatting import format_value

__all__ = ["number_text", "join_and", "last_step", "latest_step"]

_SUP = str.maketrans("0123456789-+", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻ ")


def number_text(v, sig: int = 4) -> str:
    """A number for a sentence: ``sig`` significant digits, powers of ten as 1.5×10⁻⁶."""
    s = format_value(v, sig)
    m = re.fullmatch(r"(-?[\d.]+)e([-+]\d+)", s)
    if m is None:
        return s
    power = "10" + str(int(m[2])).translate(_SUP).strip()
    return power if m[1] == "1" else f"{m[1]}×{power}"


def join_and(items: list[str]) -> str:
    """``"a"``, ``"a and b"``, ``"a, b and c"``."""
    items = [i for i in items if i]
    return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1] \
        if items else ""


def last_step(history, kinds) -> int | None:
    """The index of the last step of one of ``kinds`` in ``history`` (None when there is none)."""
    for i in range(len(history) - 1, -1, -1):
        if history[i].kind in kinds:
            return i
    return None


def latest_step(session, result, kind: str):
    """(step index, its parameters) of the last ``kind`` step when the state holds its
    ``result``; None when it does not (never run, or cleared by a later step)."""
    i = last_step(session.history, (kind,))
    if result is None or i is None:
        return None
    return i, session.history[i].params
