"""What a joint isotopologue fit was made of, read from an assignment result without
recomputing anything (the Levels panel and the reports show it; light: pandas only).

An assignment made with ``joint=True`` (:mod:`widgetkit.levels.joint`) has constants rows of
isotopologue :data:`JOINT_KEY` and a message naming the lines, isotopologues, reference and
centrifugal treatment of the joint fit; :func:`joint_facts` collects them.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import pandas as pd

__all__ = ["JointFacts", "joint_facts", "JOINT_KEY"]

#: the ``isotopologue`` of the mass-independent rows (``widgetkit.levels.joint.JOINT_KEY``;
#: repeated here so that panels and reports import nothing of the levels package)
JOINT_KEY = "mass-independent"
_MESSAGE = re.compile(r"joint isotopologue fit of (\d+) lines of (.+?) \(reference (\S+), "
                      r"centrifugal='(\w+)'\): (.+)$")


def _known(obj, name: str):
    """``obj.name`` unless ``obj`` is a restored result that did not record it (no refit)."""
    if obj is None or (getattr(obj, "restored", False) is True and name not in dir(obj)):
        return None
    return getattr(obj, name, None)


@dataclass(frozen=True)
class JointFacts:
    """What a joint isotopologue fit was made of (from its assignment result).

    Attributes
    ----------
    isotopologues : tuple of str
        Keys of the isotopologues fitted together (the reference first).
    reference : str
        The isotopologue whose constants are the fitted set (ρ = 1).
    centrifugal : str or None
        ``"separate"``, ``"shared"`` or ``"none"`` as finally fitted.
    n_lines : int or None
        Lines in the joint fit.
    scatter : str or None
        Its Birge ratio or rms residual, as the assignment wrote it.
    names : tuple of str
        The mass-independent rows (``U_10``, ..., ``r_e``).
    """

    isotopologues: tuple
    reference: str
    centrifugal: str | None = None
    n_lines: int | None = None
    scatter: str | None = None
    names: tuple = ()


def joint_facts(assignment) -> JointFacts | None:
    """The facts of the joint isotopologue fit in ``assignment``; None when its constants
    have no mass-independent rows (no joint fit)."""
    consts = _known(assignment, "constants")
    if not isinstance(consts, pd.DataFrame) or "isotopologue" not in consts:
        return None
    rows = consts[consts["isotopologue"] == JOINT_KEY]
    if not len(rows):
        return None
    names = tuple(str(n) for n in rows["name"])
    for msg in _known(assignment, "messages") or []:
        m = _MESSAGE.search(str(msg))
        if m:
            isos = tuple(i.strip() for i in m[2].split(","))
            return JointFacts(isos, m[3], m[4], int(m[1]), m[5], names)
    isos = tuple(dict.fromkeys(str(i) for i in consts["isotopologue"] if i != JOINT_KEY
                               and pd.notna(i)))
    return JointFacts(isos, isos[0] if isos else "", names=names)
