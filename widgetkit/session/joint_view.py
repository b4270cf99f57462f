"""What a joint isotopologue fit was made of, read from an assignment result without
recomputing anything (the Levels panel and the reports show it; light: pandas only).

An assignment made with ``joint=True`` (:mod:`widgetkit.levels.joint`) has constants rows of
isotopologue :data:`JOINT_KEY` and a typed field ``joint`` (``JointSummary``: lines,
isotopologues, reference, centrifugal treatment and scatter of the joint fit; a plain dict of
the same fields when restored from a session record); :func:`joint_facts` collects them.
A result recorded before that field existed gives what its constants say (isotopologues
and rows).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import pandas as pd

__all__ = ["JointFacts", "joint_facts", "JOINT_KEY"]

#: the ``isotopologue`` of the mass-independent rows (``widgetkit.levels.joint.JOINT_KEY``;
#: repeated here so that panels and reports import nothing of the levels package)
JOINT_KEY = "mass-independent"


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
        Its Birge ratio or rms residual with its kind ("Birge ratio 1.02").
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
    joint = _known(assignment, "joint")
    if joint is not None and not isinstance(joint, Mapping):
        joint = joint.to_dict()
    if isinstance(joint, Mapping):
        scatter = joint.get("scatter")
        shown = None if scatter is None or scatter != scatter else \
            f"{joint['scatter_kind']} {float(scatter):.3g}"
        return JointFacts(tuple(str(i) for i in joint["isotopologues"]), str(joint["reference"]),
                          str(joint["centrifugal"]), int(joint["n_lines"]), shown, names)
    isos = tuple(dict.fromkeys(str(i) for i in consts["isotopologue"] if i != JOINT_KEY
                               and pd.notna(i)))
    return JointFacts(isos, isos[0] if isos else "", names=names)
